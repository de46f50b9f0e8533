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
pub mod durable;
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

/// The safety caution, word for word the same wherever it is shown: README, demo-data/README.md,
/// every export manifest, the correction desk (once per sitting), the help overlay, the export
/// window, and on standard error by the commands that lead to running a learner (`plan`,
/// `correct`, `export`, `demo`, `study`). `tests/suite/safety_caution.rs` keeps them identical.
pub const SAFETY_CAUTION: &str = "Robots and vehicles can hurt people. Corrected data does not \
make a policy safe: a policy trained on it can still fail in ways no review caught. Collecting \
the next round means running an unproven learner on real hardware: test it in simulation \
first, have a trained safety operator ready to take over at once, use a tested emergency stop, \
run at reduced speed, and keep people out of the area. The flags and the review list are not a \
safety monitor: a step that was not flagged is not thereby safe. Typed corrections were never \
executed and may not be physically feasible. Local regulations and your site's safety \
procedures come first: test robots and vehicles under them, with the safeguards they require.";

/// The tool's version, written into ledgers and manifests.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
