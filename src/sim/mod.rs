//! The demo scenario: an orchard rover following a curving lane between tree rows.
//!
//! A kinematic bicycle ([`vehicle`]) drives along a generated lane ([`lane`]). A pure pursuit
//! expert with speed control ([`expert`]) records the demonstrations; a learner fit on them
//! ([`model`]: radial basis functions by default, or linear ridge regression, or nearest
//! neighbours) drives the rounds and, having only seen states near the expert's line, drifts
//! off the lane in some episodes (covariate shift). [`rollout`] runs
//! episodes with optional scripted interventions; [`scenario`] runs the whole campaign in
//! memory and [`write`] writes it as a campaign folder with forward-camera frame images
//! ([`frames`]).
//! Everything is deterministic for a seed ([`rng`]).

pub mod expert;
pub mod features;
pub mod frames;
pub mod knn;
pub mod lane;
pub mod learner;
pub mod model;
pub mod policy;
pub mod rbf;
pub mod ridge;
pub mod rng;
pub mod rollout;
pub mod scenario;
pub mod vehicle;
pub mod write;

pub use expert::PurePursuit;
pub use features::{FEATURE_COUNT, FEATURE_NAMES, Features, demo_spec, features};
pub use lane::{Lane, LaneParams, Projection};
pub use learner::{Ensemble, Learner};
pub use model::{LearnerKind, Model};
pub use policy::{Action, Observation, Policy};
pub use rollout::{
    Drivers, EpisodeMetrics, InterventionRule, RolloutConfig, Step, episode_metrics, rollout,
};
pub use scenario::{DemoConfig, DemoRun, EpisodeRun, departure_share, simulate_demo};
pub use vehicle::{Bicycle, Pose};
pub use write::{DemoError, DemoSummary, SetSummary, write_demo_campaign};
