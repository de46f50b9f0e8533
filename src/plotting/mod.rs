//! Plotting computations that know nothing of any window: the cividis colour scale, plot
//! decimation (Largest-Triangle-Three-Buckets), the map's 2-D projection of states and the
//! binned density of demonstration states. The desktop program draws what these return.

pub mod cividis;
mod cividis_table;
pub mod decimate;
pub mod density;
pub mod projection;

pub use cividis::cividis;
pub use decimate::{lttb, lttb_indices};
pub use density::Density;
pub use projection::{Projection, ProjectionKind};
