//! `countersteer` (no subcommand) and `countersteer open DIR`: the desktop workbench.

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use crate::app::{RunError, run};

/// Arguments of `open`.
#[derive(Debug, Args)]
pub struct OpenArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
}

/// Runs the workbench, on `dir` when given.
pub fn run_gui(dir: Option<PathBuf>) -> Result<(), CliError> {
    if let Some(d) = &dir {
        super::campaign_dir(d)?;
    }
    run(dir).map_err(|e| match e {
        RunError::NoDisplay(why) => CliError::usage(format!(
            "no display to open the workbench on ({why}).\n\
             Headless subcommands work without one: `countersteer check DIR` (see `countersteer --help`)."
        )),
        RunError::Window(why) => CliError::usage(format!("the workbench window failed: {why}")),
    })
}
