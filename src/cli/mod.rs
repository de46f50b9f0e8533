//! The command line: argument parsing and one module per subcommand. Each subcommand is a
//! thin caller of library functions; errors are printed and mapped to exit codes here.

/// Prints a line to standard output without panicking (see [`out`]).
macro_rules! say {
    ($($t:tt)*) => { $crate::cli::out::line(format_args!($($t)*)) };
}

/// Prints a line to standard error without panicking (see [`out`]).
macro_rules! tell {
    ($($t:tt)*) => { $crate::cli::out::note(format_args!($($t)*)) };
}

mod check;
mod correct;
mod demo;
mod export;
#[cfg(feature = "gui")]
mod gui;
mod json;
pub mod out;
mod plan;
mod progress_bar;
pub mod rounds;
mod score;
mod study;
mod tally;

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Exit code for invalid input data.
pub const EXIT_INVALID: u8 = 1;
/// Exit code for a usage or environment problem (no display, unreadable folder).
pub const EXIT_USAGE: u8 = 2;

/// countersteer: choose the learner states worth an expert's time, collect corrections,
/// export the merged training set.
#[derive(Debug, Parser)]
#[command(name = "countersteer", version, about, long_about = None)]
pub struct Cli {
    /// What to do; without a subcommand the desktop workbench opens.
    #[command(subcommand)]
    pub command: Option<Command>,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Validate a campaign folder and print a summary, or every problem found.
    Check(check::CheckArgs),
    /// Record one correction (or retract one) in an annotator's ledger.
    Correct(correct::CorrectArgs),
    /// Count corrections per round and measure agreement between annotators.
    Tally(tally::TallyArgs),
    /// Write the merged training set (demonstrations + consensus corrections) and its manifest.
    Export(export::ExportArgs),
    /// Score every step of a round against the demonstrations and save the signals.
    Score(score::ScoreArgs),
    /// Choose the steps of a round the expert should review, under a budget.
    Plan(plan::PlanArgs),
    /// Show the trend across rounds: flagged share, excursions, interventions, failures,
    /// novelty and labels spent per round.
    Rounds(rounds::RoundsArgs),
    /// Write the orchard-rover demo campaign (spec, demonstrations, two rounds, frames).
    Demo(demo::DemoArgs),
    /// Compare labelling strategies over several aggregation rounds on the demo scenario.
    Study(study::StudyArgs),
    /// Open the desktop workbench on a campaign folder.
    #[cfg(feature = "gui")]
    Open(gui::OpenArgs),
}

/// Parses the arguments and runs the program.
pub fn main() -> ExitCode {
    let cli = Cli::parse();
    let json = cli.command.as_ref().is_some_and(Command::wants_json);
    if cli
        .command
        .as_ref()
        .is_some_and(Command::leads_to_a_learner)
    {
        print_caution();
    }
    let result = match cli.command {
        None => no_subcommand(),
        #[cfg(feature = "gui")]
        Some(Command::Open(a)) => gui::run_gui(
            Some(a.dir),
            countersteer::app::Start {
                annotator: a.annotator,
                review: a.review,
            },
        ),
        Some(Command::Check(a)) => check::run(a),
        Some(Command::Correct(a)) => correct::run(a),
        Some(Command::Tally(a)) => tally::run(a),
        Some(Command::Export(a)) => export::run(a),
        Some(Command::Score(a)) => score::run(a),
        Some(Command::Plan(a)) => plan::run(a),
        Some(Command::Rounds(a)) => rounds::run(a),
        Some(Command::Demo(a)) => demo::run(a),
        Some(Command::Study(a)) => study::run(a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            tell!("countersteer: {}", e.message);
            if json && !e.reported {
                json::print(&json::failure(&e));
            }
            ExitCode::from(e.code)
        }
    }
}

impl Command {
    /// Whether the command was asked for one JSON object on standard output (`--json`).
    pub fn wants_json(&self) -> bool {
        match self {
            Command::Check(a) => a.json,
            Command::Score(a) => a.json,
            Command::Plan(a) => a.json,
            Command::Tally(a) => a.json,
            _ => false,
        }
    }

    /// Whether the command is a step toward running a learner on real hardware (planning,
    /// correcting, exporting the next training set, or the demo and study that model it):
    /// these print the safety caution.
    pub fn leads_to_a_learner(&self) -> bool {
        matches!(
            self,
            Command::Plan(_)
                | Command::Correct(_)
                | Command::Export(_)
                | Command::Demo(_)
                | Command::Study(_)
        )
    }
}

/// Prints the safety caution on standard error, as one line (standard output stays the
/// command's own result).
pub fn print_caution() {
    tell!("caution: {}", countersteer::SAFETY_CAUTION);
}

/// Without a subcommand: the workbench, or (built without the `gui` feature) a usage note.
fn no_subcommand() -> Result<(), CliError> {
    #[cfg(feature = "gui")]
    return gui::run_gui(None, Default::default());
    #[cfg(not(feature = "gui"))]
    Err(CliError::usage(
        "this build has no desktop workbench (built without the `gui` feature).\n\
         Headless subcommands work: `countersteer check DIR` (see `countersteer --help`).",
    ))
}

/// A failed command: the message to print and the exit code.
#[derive(Debug)]
pub struct CliError {
    /// What went wrong, in words.
    pub message: String,
    /// The process exit code.
    pub code: u8,
    /// Whether the command already printed its `--json` object for this failure.
    pub reported: bool,
}

impl CliError {
    /// A usage or environment problem.
    pub fn usage(message: impl Into<String>) -> Self {
        CliError {
            message: message.into(),
            code: EXIT_USAGE,
            reported: false,
        }
    }

    /// Invalid input data.
    pub fn invalid(message: impl Into<String>) -> Self {
        CliError {
            message: message.into(),
            code: EXIT_INVALID,
            reported: false,
        }
    }

    /// The same error, marked as already printed as a `--json` object.
    pub fn reported(self) -> Self {
        CliError {
            reported: true,
            ..self
        }
    }
}

/// A ledger error is a usage error (exit 2) in every command: a held lock, a bad annotator
/// name, a ledger that cannot be read.
impl From<countersteer::ledger::LedgerError> for CliError {
    fn from(e: countersteer::ledger::LedgerError) -> Self {
        CliError::usage(e.to_string())
    }
}

/// The pipeline's errors: an unknown round and ledger errors are usage errors (exit 2); a
/// failure to score is invalid data (exit 1).
impl From<countersteer::workflow::WorkflowError> for CliError {
    fn from(e: countersteer::workflow::WorkflowError) -> Self {
        use countersteer::workflow::WorkflowError as W;
        match e {
            W::NoRound(_) => CliError::usage(e.to_string()),
            W::Novelty(_) => CliError::invalid(e.to_string()),
            W::Ledger(l) => l.into(),
        }
    }
}

/// The trend's errors map as the pipeline's do: a ledger that cannot be read is a usage error
/// (exit 2), a failure to score invalid data (exit 1).
impl From<countersteer::trend::TrendError> for CliError {
    fn from(e: countersteer::trend::TrendError) -> Self {
        use countersteer::trend::TrendError as T;
        match e {
            T::Workflow(w) => w.into(),
            T::Ledger(l) => l.into(),
        }
    }
}

/// Resolves a campaign folder argument to a path that exists.
pub fn campaign_dir(dir: &Path) -> Result<PathBuf, CliError> {
    if dir.join(countersteer_campaign_file()).is_file() {
        Ok(dir.to_path_buf())
    } else {
        Err(CliError::usage(format!(
            "{}: no campaign.json here; is this a campaign folder?",
            dir.display()
        )))
    }
}

fn countersteer_campaign_file() -> &'static str {
    countersteer::campaign::folder::CAMPAIGN_FILE
}
