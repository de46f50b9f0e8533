//! countersteer: the expert-review workbench for interactive imitation learning.
//!
//! The library holds every computation; the desktop program (`app`, default `gui` feature)
//! and the command line (`src/cli/`, on the binary side) only call it, and nothing outside
//! `app` knows about egui. Its modules, from the bottom up:
//!
//! - [`progress`]: the progress and cancel handle long work reports through.
//! - [`durable`]: the one way a file is written (temporary file, fsync, rename, folder fsync).
//! - [`campaign`]: the campaign folder, spec, step tables, loaders and writers, located problems.
//! - [`novelty`]: scaling, principal axes, the k-d tree index, calibration, scoring, saved
//!   scores, which features make a step novel.
//! - [`plotting`]: the map's projection (in the novelty's metric), decimation, density, colours.
//! - [`review`]: excursions, per-episode figures, the budgeted diverse review list and its file,
//!   what the expert sees of one step.
//! - [`ledger`]: one append-only file of corrections per annotator, the standing-verdict rule.
//! - [`consensus`]: the tally of several annotators and their agreement.
//! - [`export`]: the merged set and its manifest.
//! - [`workflow`]: the pipeline's driver every front-end calls: a round's analysis (reuse or
//!   score), the tally, the review sitting.
//! - [`sim`]: the orchard-rover demo scenario; [`study`]: the labelling-strategy study on it.
//! - `fuzzing` (test builds and `--cfg fuzzing` only): the fuzz targets' entry points.

#[cfg(feature = "gui")]
pub mod app;
pub mod campaign;
pub mod consensus;
pub mod durable;
pub mod export;
#[cfg(any(fuzzing, test))]
pub mod fuzzing;
pub mod ledger;
pub mod novelty;
pub mod plotting;
pub mod progress;
pub mod review;
pub mod sim;
pub mod study;
pub mod trend;
pub mod workflow;

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

/// The notices of the works by others built into the program (the DejaVu Sans font, the
/// cividis colour table), as their licences ask; the file THIRD-PARTY-NOTICES, compiled in so
/// that it travels with every binary. The window's help shows it.
pub const THIRD_PARTY_NOTICES: &str = include_str!("../THIRD-PARTY-NOTICES");

/// The tool's version, written into ledgers and manifests.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
