//! `countersteer correct DIR ...`: append one correction (or a retraction) to an annotator's
//! ledger, for scripted or remote entry; `--from FILE` appends a whole batch of verdicts
//! (CSV or JSON Lines) with one fsync, all or nothing.

use std::path::{Path, PathBuf};

use clap::Args;

use super::{CliError, campaign_dir};
use countersteer::campaign::{Campaign, ChannelKind, LoadOptions, Spec, load_campaign};
use countersteer::ledger::{
    ActionValue, BatchError, Correction, Entry, Ledger, OpenReport, Record, UnfinishedBatch,
    Verdict, batch, fingerprint, read_batch,
};
use countersteer::progress::Progress;

/// Arguments of `correct`.
#[derive(Debug, Args)]
#[command(allow_negative_numbers = true)]
pub struct CorrectArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Round of the step.
    #[arg(long)]
    pub round: Option<u32>,
    /// Episode of the step.
    #[arg(long)]
    pub episode: Option<String>,
    /// Time index of the step.
    #[arg(long)]
    pub t: Option<i64>,
    /// Recovery action, one value per channel in spec order (numbers, or choice names for
    /// discrete channels), comma-separated or repeated.
    #[arg(
        long,
        value_delimiter = ',',
        allow_hyphen_values = true,
        group = "verdict"
    )]
    pub action: Vec<String>,
    /// Pass on the step.
    #[arg(long, group = "verdict")]
    pub skip: bool,
    /// No action could recover from this state.
    #[arg(long, group = "verdict")]
    pub unrecoverable: bool,
    /// Withdraw the correction with this sequence number (undo).
    #[arg(long, group = "verdict", value_name = "SEQ")]
    pub retract: Option<u64>,
    /// Annotator name (default: $COUNTERSTEER_ANNOTATOR, then $USER).
    #[arg(long)]
    pub annotator: Option<String>,
    /// Free-text note stored with the correction.
    #[arg(long)]
    pub note: Option<String>,
    /// Apply every verdict of a CSV or JSON Lines file (fields `round`, `episode`, `t`, one
    /// per action channel, `verdict`, `retract`, `note`): checked first, all or nothing.
    #[arg(long, value_name = "FILE", conflicts_with_all = ["round", "episode", "t", "verdict", "note"])]
    pub from: Option<PathBuf>,
}

/// The annotator: the option, else the environment.
pub fn annotator_name(given: Option<String>) -> Result<String, CliError> {
    given
        .or_else(|| std::env::var("COUNTERSTEER_ANNOTATOR").ok())
        .or_else(|| std::env::var("USER").ok())
        .or_else(|| std::env::var("USERNAME").ok())
        .filter(|s| !s.is_empty())
        .ok_or_else(|| CliError::usage("say who you are with --annotator NAME"))
}

fn parse_action(spec: &Spec, values: &[String]) -> Result<Verdict, CliError> {
    if values.len() != spec.action_dim() {
        let names: Vec<&str> = spec.actions.iter().map(|c| c.name.as_str()).collect();
        return Err(CliError::usage(format!(
            "--action needs {} values ({}), got {}",
            names.len(),
            names.join(", "),
            values.len()
        )));
    }
    let mut out = Vec::new();
    for (c, v) in spec.actions.iter().zip(values) {
        out.push(match c.kind {
            ChannelKind::Continuous { .. } => {
                ActionValue::Number(v.trim().parse().map_err(|_| {
                    CliError::usage(format!("--action: `{}` needs a number, got `{v}`", c.name))
                })?)
            }
            ChannelKind::Discrete { .. } => ActionValue::Choice(v.trim().to_string()),
        });
    }
    let verdict = Verdict::Action(out);
    if let Some(Err(e)) = verdict.action_vector(spec) {
        return Err(CliError::invalid(format!("--action: {e}")));
    }
    Ok(verdict)
}

fn step_correction(
    a: &CorrectArgs,
    c: &Campaign,
    verdict: Verdict,
) -> Result<Correction, CliError> {
    let (Some(round), Some(episode), Some(t)) = (a.round, a.episode.clone(), a.t) else {
        return Err(CliError::usage(
            "a correction needs --round, --episode and --t",
        ));
    };
    let table = &c
        .round(round)
        .ok_or_else(|| CliError::invalid(format!("the campaign has no round {round}")))?
        .steps;
    let row = table
        .find(&episode, t)
        .ok_or_else(|| CliError::invalid(format!("round {round} has no step `{episode}` t {t}")))?;
    Ok(Correction {
        round,
        fingerprint: fingerprint(table, row),
        episode,
        t,
        verdict,
        note: a.note.clone(),
    })
}

fn describe(spec: &Spec, r: &Record) -> String {
    match &r.entry {
        Entry::Retraction(x) => format!("#{}: retracts #{}", r.seq, x.retracts),
        Entry::Correction(c) => {
            let what = match c.verdict.action_vector(spec) {
                Some(Ok(a)) => {
                    let parts: Vec<String> = spec
                        .actions
                        .iter()
                        .zip(&a)
                        .map(|(ch, &v)| format!("{}={}", ch.name, ch.format_value(v)))
                        .collect();
                    format!("action {}", parts.join(" "))
                }
                _ => c.verdict.kind_name().to_string(),
            };
            format!(
                "#{}: round {} `{}` t {}: {what}",
                r.seq, c.round, c.episode, c.t
            )
        }
    }
}

fn print_open_report(report: &OpenReport, unfinished: Option<&UnfinishedBatch>) {
    if let Some(u) = unfinished {
        print_unfinished(u);
    }
    if let Some(a) = &report.set_aside {
        tell!(
            "note: a torn last line (line {}, {} bytes, left by an interrupted write) was moved to {}",
            a.line,
            a.bytes,
            a.path.display()
        );
    }
    for p in &report.problems {
        tell!("warning: {p} (line left in place and not used)");
    }
}

/// Prints a warning for every entry of `ledgers/` that is not read as a ledger.
pub fn warn_skipped_ledgers(root: &Path) {
    for s in countersteer::ledger::skipped_entries(root) {
        tell!("warning: {s}");
    }
}

/// Checks that the correction `seq` to be retracted is of the step given (when any of
/// `--round`, `--episode`, `--t` is given): a mistyped number must not withdraw another
/// step's correction.
fn check_retraction(a: &CorrectArgs, ledger: &Ledger, seq: u64) -> Result<(), CliError> {
    let Some(c) = ledger
        .records()
        .iter()
        .find(|r| r.seq == seq)
        .and_then(Record::correction)
    else {
        return Ok(()); // the ledger refuses it with its own message
    };
    let mut wrong = Vec::new();
    if a.round.is_some_and(|r| r != c.round) {
        wrong.push(format!("round {}", c.round));
    }
    if a.episode.as_ref().is_some_and(|e| *e != c.episode) {
        wrong.push(format!("episode `{}`", c.episode));
    }
    if a.t.is_some_and(|t| t != c.t) {
        wrong.push(format!("t {}", c.t));
    }
    if wrong.is_empty() {
        return Ok(());
    }
    Err(CliError::invalid(format!(
        "{}: record #{seq} is of {}, not the step given; nothing was written",
        ledger.path().display(),
        wrong.join(", ")
    )))
}

/// Loads a campaign for a subcommand, printing its problems on failure.
pub fn load(dir: &Path) -> Result<Campaign, CliError> {
    let root = campaign_dir(dir)?;
    load_campaign(&root, &LoadOptions::default(), &Progress::new()).map_err(|e| {
        if let countersteer::campaign::CampaignError::Invalid { problems, .. } = &e {
            for p in problems {
                tell!("{p}");
            }
        }
        CliError::invalid(format!("{}: {e}", root.display()))
    })
}

/// Says which records of a batch interrupted by a crash are not in the ledger.
fn print_unfinished(u: &UnfinishedBatch) {
    tell!(
        "note: a batch from {} was interrupted: {} of its {} records are in the ledger, {} are \
         NOT (never acknowledged; apply these lines again):",
        u.source.display(),
        u.saved,
        u.total,
        u.missing.len()
    );
    for m in &u.missing {
        tell!("  line {}: {} (would have been #{})", m.line, m.what, m.seq);
    }
    tell!("  (its journal is kept at {})", u.kept.display());
}

/// Runs `correct --from FILE`: reads the batch, checks it whole, appends it.
fn run_batch(a: &CorrectArgs, from: &Path) -> Result<(), CliError> {
    let annotator = annotator_name(a.annotator.clone())?;
    let c = load(&a.dir)?;
    let b = read_batch(from, c.spec()).map_err(|e| CliError::usage(e.to_string()))?;
    let (mut ledger, report, unfinished) =
        batch::open(&c.root, &annotator).map_err(|e| CliError::usage(e.to_string()))?;
    print_open_report(&report, unfinished.as_ref());
    let done = batch::apply(&c, &mut ledger, &b).map_err(|e| {
        if let BatchError::Invalid { problems, .. } = &e {
            for p in problems {
                tell!("{p}");
            }
        }
        CliError::invalid(e.to_string())
    })?;
    if let Some(u) = &done.earlier_unfinished {
        print_unfinished(u);
    }
    say!("{annotator} {} (saved)", summary(&done.records));
    Ok(())
}

/// `N records #a..#b: x action, y skip, z unrecoverable, w retraction(s)`.
fn summary(records: &[Record]) -> String {
    let (Some(first), Some(last)) = (records.first(), records.last()) else {
        return "0 records".into();
    };
    let mut counts = [0usize; 4];
    for r in records {
        let i = match &r.entry {
            Entry::Correction(c) => match c.verdict {
                Verdict::Action(_) => 0,
                Verdict::Skip => 1,
                Verdict::Unrecoverable => 2,
            },
            Entry::Retraction(_) => 3,
        };
        counts[i] += 1;
    }
    format!(
        "{} records #{}..#{}: {} action, {} skip, {} unrecoverable, {} retraction(s)",
        records.len(),
        first.seq,
        last.seq,
        counts[0],
        counts[1],
        counts[2],
        counts[3]
    )
}

/// Runs `correct`.
pub fn run(a: CorrectArgs) -> Result<(), CliError> {
    if let Some(from) = &a.from {
        return run_batch(&a, from);
    }
    let annotator = annotator_name(a.annotator.clone())?;
    let c = load(&a.dir)?;
    let spec = c.spec();
    let correction = if let Some(seq) = a.retract {
        Err(seq)
    } else {
        let verdict = match (a.skip, a.unrecoverable, a.action.is_empty()) {
            (true, _, _) => Verdict::Skip,
            (_, true, _) => Verdict::Unrecoverable,
            (_, _, false) => parse_action(spec, &a.action)?,
            _ => {
                return Err(CliError::usage(
                    "give a verdict: --action ..., --skip, --unrecoverable or --retract SEQ",
                ));
            }
        };
        Ok(step_correction(&a, &c, verdict)?)
    };
    let (mut ledger, report, unfinished) = batch::open(&c.root, &annotator)?;
    print_open_report(&report, unfinished.as_ref());
    warn_skipped_ledgers(&c.root);
    if let Err(seq) = correction {
        check_retraction(&a, &ledger, seq)?;
    }
    let record = match correction {
        Ok(corr) => ledger.append(corr),
        Err(seq) => ledger.retract(seq),
    }
    .map_err(CliError::from)?;
    say!("{annotator} {} (saved)", describe(spec, &record));
    Ok(())
}
