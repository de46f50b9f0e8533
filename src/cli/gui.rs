//! `countersteer` (no subcommand) and `countersteer open DIR`: the desktop workbench.

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use countersteer::app::{RunError, Start, run};

/// Arguments of `open`.
#[derive(Debug, Args)]
pub struct OpenArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Annotator name for this session (default: the remembered one, then
    /// $COUNTERSTEER_ANNOTATOR; asked for when there is none).
    #[arg(long)]
    pub annotator: Option<String>,
    /// Start reviewing: show the review list and put the next open entry on the desk.
    #[arg(long)]
    pub review: bool,
}

/// Runs the workbench, on `dir` when given.
pub fn run_gui(dir: Option<PathBuf>, start: Start) -> Result<(), CliError> {
    if let Some(d) = &dir {
        super::campaign_dir(d)?;
    }
    if let Some(a) = &start.annotator {
        countersteer::ledger::check_annotator(a).map_err(|e| CliError::usage(e.to_string()))?;
    }
    run(dir, start).map_err(|e| match e {
        RunError::NoDisplay(why) => CliError::usage(format!(
            "no display to open the workbench on ({why}).\n\
             Headless subcommands work without one: `countersteer check DIR` (see `countersteer --help`)."
        )),
        RunError::Window(why) => CliError::usage(format!("the workbench window failed: {why}")),
    })
}
