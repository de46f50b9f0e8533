//! countersteer: the expert-review workbench for interactive imitation learning.
//!
//! The library holds every computation: campaigns and their loaders ([`campaign`]), the demo
//! scenario ([`sim`]), and the progress handle long work reports through. The desktop program
//! ([`app`]) and the command line only call it; nothing outside `app` knows about egui.

pub mod campaign;
pub mod cli;
pub mod novelty;
pub mod progress;
pub mod review;

/// The tool's version, written into ledgers and manifests.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
