//! countersteer: the expert-review workbench for interactive imitation learning.
//!
//! The library holds every computation: campaigns and their loaders ([`campaign`]), the demo
//! scenario ([`sim`]), and the progress handle long work reports through. The desktop program
//! (`app`, built with the default `gui` feature) and the command line only call it; nothing
//! outside `app` knows about egui.

#[cfg(feature = "gui")]
pub mod app;
pub mod campaign;
pub mod cli;
pub mod consensus;
pub mod export;
pub mod fuzzing;
pub mod ledger;
pub mod novelty;
pub mod plotting;
pub mod progress;
pub mod review;
pub mod sim;
pub mod study;
pub mod trend;

/// The safety caution carried by the README, the desktop program and every export manifest.
pub const SAFETY_CAUTION: &str = "Robots and vehicles can hurt people. Corrected data does not \
make a policy safe: a policy trained on it can still fail in ways no review caught. Test robots \
and vehicles under your local regulations and your site's safety procedures, with the \
safeguards they require.";

/// The tool's version, written into ledgers and manifests.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
