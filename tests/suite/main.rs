//! The integration tests, linked into one test binary.
//!
//! Each file below was once its own test binary; linking every one of them against the
//! whole GUI stack cost minutes and gigabytes per build, so they share this one. Run a
//! single group with a filter, e.g. `cargo test --test suite ledger_crash::`.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

mod campaign_kit;
mod common;

mod bad_inputs;
mod calibration;
mod calibration_phases;
mod cli_batch;
mod cli_corrections;
#[cfg(feature = "gui")]
mod cli_gui;
mod cli_json;
mod cli_pipes;
mod cli_score_plan;
mod conformal;
mod demo_campaign;
#[cfg(feature = "gui")]
mod desk;
mod eigen_fixture;
mod export;
mod export_numpy;
#[cfg(feature = "gui")]
mod export_window;
mod folder_rules;
mod hostile;
mod krippendorff_fixture;
mod layering;
mod ledger_crash;
mod ledger_guard;
mod loaders;
mod long_sitting;
mod notices;
mod novelty_knn;
mod numpy_memory;
mod outcomes;
mod plotting;
mod properties;
mod review_plan;
mod review_sitting;
mod ridge_fixture;
mod safety_caution;
mod saved_scores;
mod scale_fixture;
mod shared_folder;
mod sim_closed_loop;
mod study;
mod trend;
#[cfg(feature = "gui")]
mod ui_sitting;
#[cfg(feature = "gui")]
mod window_kit;
#[cfg(feature = "gui")]
mod workbench;
mod workflow;
mod writes;
