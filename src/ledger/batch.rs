//! Bulk corrections: many verdicts (recovery actions, `skip`, `unrecoverable`, retractions,
//! notes) appended to one annotator's ledger under its one lock.
//!
//! 1. The whole batch is checked against the campaign and the ledger first. Every unknown
//!    round or step, value out of bounds, wrong number of channel values, unknown choice and
//!    retraction of no standing correction is reported with its input line and field; one
//!    problem refuses the batch and nothing is written.
//! 2. A journal, `ledgers/<annotator>.batch.json`, records which sequence numbers the batch
//!    takes and the input line of each (written under a temporary name, fsync'd, renamed, the
//!    folder fsync'd).
//! 3. The records are appended with one write and the ledger is fsync'd once
//!    ([`Ledger`]'s append path). Only then is the batch acknowledged; the journal is removed.
//!
//! A crash or a power cut during step 3 leaves a ledger holding a prefix of the batch (a torn
//! last line is set aside by [`Ledger::open`], as for any append). [`open`] compares the
//! ledger with a journal left behind and says which records, by input line, are missing; it
//! keeps the journal as `<annotator>.batch-unfinished-<n>.json`. Records acknowledged before
//! the crash are never touched.

use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::error::{LedgerError, LedgerProblem};
use super::fingerprint::fingerprint;
use super::record::{Correction, Entry, Record, Retraction, Verdict, channel_value};
use super::store::{Ledger, OpenReport};
use crate::campaign::{Campaign, StepTable};

/// What one line of a batch asks for.
#[derive(Debug, Clone, PartialEq)]
pub enum BatchItem {
    /// A verdict on one step.
    Correction {
        /// The round of the step.
        round: u32,
        /// The episode of the step.
        episode: String,
        /// The step's time index.
        t: i64,
        /// The verdict (a recovery action, `skip` or `unrecoverable`).
        verdict: Verdict,
        /// Optional free-text note.
        note: Option<String>,
    },
    /// Withdraws the correction with this sequence number (one already in the ledger, or one
    /// that an earlier line of the same batch takes).
    Retraction {
        /// Sequence number of the withdrawn correction.
        retracts: u64,
    },
}

/// One item of a batch with the input line it came from.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchLine {
    /// 1-based line of the input (or the item's 1-based index for a batch built in memory).
    pub line: u64,
    /// What the line asks for.
    pub item: BatchItem,
}

/// A batch of verdicts for one ledger, in input order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Batch {
    /// The input the batch was read from (named in problems and in the journal).
    pub source: PathBuf,
    /// The items read, in input order.
    pub lines: Vec<BatchLine>,
    /// Problems found while reading the input; [`apply`] reports them with its own.
    pub problems: Vec<LedgerProblem>,
}

/// Why a batch was not applied.
#[derive(Debug, thiserror::Error)]
pub enum BatchError {
    /// The batch has problems; nothing was written.
    #[error(
        "{}: {} problem(s) in the batch; nothing was written",
        input.display(),
        problems.len()
    )]
    Invalid {
        /// The batch's input.
        input: PathBuf,
        /// Every problem found, by input line.
        problems: Vec<LedgerProblem>,
    },
    /// The ledger could not be written (nothing of the batch is acknowledged).
    #[error(transparent)]
    Ledger(#[from] LedgerError),
}

/// A batch that was applied.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchReport {
    /// The records written, in input order (all fsync'd).
    pub records: Vec<Record>,
    /// A batch left unfinished by an earlier crash, found when this one started.
    pub earlier_unfinished: Option<UnfinishedBatch>,
}

/// One record of an unfinished batch that is not in the ledger.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MissingRecord {
    /// The input line it came from.
    pub line: u64,
    /// The sequence number it was to take.
    pub seq: u64,
    /// What it was: `round 1 `lane-00` t 3` or `retraction of #12`.
    pub what: String,
}

/// A batch that a crash interrupted: what reached the ledger and what did not.
#[derive(Debug, Clone, PartialEq)]
pub struct UnfinishedBatch {
    /// The batch's input.
    pub source: PathBuf,
    /// Records the batch held.
    pub total: usize,
    /// Records of it found whole in the ledger.
    pub saved: usize,
    /// Records of it missing from the ledger (never acknowledged), in input order.
    pub missing: Vec<MissingRecord>,
    /// Where the batch's journal is kept for reference.
    pub kept: PathBuf,
}

#[derive(Serialize, Deserialize)]
struct Journal {
    source: PathBuf,
    entries: Vec<MissingRecord>,
}

/// Opens (creating when needed) an annotator's ledger like [`Ledger::open`], and reports a
/// batch that a crash interrupted.
pub fn open(
    campaign_root: &Path,
    annotator: &str,
) -> Result<(Ledger, OpenReport, Option<UnfinishedBatch>), LedgerError> {
    let (ledger, report) = Ledger::open(campaign_root, annotator)?;
    let unfinished = check_journal(&ledger)?;
    Ok((ledger, report, unfinished))
}

/// Checks a batch against the campaign and the ledger, then appends it with one write and
/// one fsync. On a problem nothing is written and every problem is returned.
pub fn apply(
    campaign: &Campaign,
    ledger: &mut Ledger,
    batch: &Batch,
) -> Result<BatchReport, BatchError> {
    let earlier_unfinished = check_journal(ledger)?;
    let (entries, journal) = validate(campaign, ledger, batch)?;
    if entries.is_empty() {
        return Ok(BatchReport {
            records: Vec::new(),
            earlier_unfinished,
        });
    }
    let path = journal_path(ledger);
    write_journal(&path, &journal)?;
    let records = ledger.append_entries(entries)?;
    // The batch is acknowledged: the journal has done its work. A journal left by a crash
    // right here describes a whole batch and is removed by the next check.
    std::fs::remove_file(&path).map_err(LedgerError::io(&path))?;
    Ok(BatchReport {
        records,
        earlier_unfinished,
    })
}

/// Checks every line of a batch; returns the entries to append and their journal, or every
/// problem (those found while reading the input first), sorted by line.
fn validate(
    campaign: &Campaign,
    ledger: &Ledger,
    batch: &Batch,
) -> Result<(Vec<Entry>, Journal), BatchError> {
    let mut problems = batch.problems.clone();
    let mut steps = StepIndex::new(campaign);
    let mut seqs = SeqState::of(ledger);
    let mut entries = Vec::with_capacity(batch.lines.len());
    let mut journal = Journal {
        source: batch.source.clone(),
        entries: Vec::with_capacity(batch.lines.len()),
    };
    for l in &batch.lines {
        let problem = |field: &str, message: String| LedgerProblem {
            file: batch.source.clone(),
            line: l.line,
            field: field.to_string(),
            message,
        };
        let entry = match &l.item {
            BatchItem::Retraction { retracts } => seqs
                .retract(*retracts)
                .map(|()| {
                    Entry::Retraction(Retraction {
                        retracts: *retracts,
                    })
                })
                .map_err(|m| vec![problem("retract", m)]),
            BatchItem::Correction {
                round,
                episode,
                t,
                verdict,
                note,
            } => correction(campaign, &mut steps, (*round, episode, *t), verdict)
                .map(|fingerprint| {
                    Entry::Correction(Correction {
                        round: *round,
                        episode: episode.clone(),
                        t: *t,
                        fingerprint,
                        verdict: verdict.clone(),
                        note: note.clone(),
                    })
                })
                .map_err(|ps| ps.into_iter().map(|(f, m)| problem(&f, m)).collect()),
        };
        match entry {
            Ok(e) => {
                let seq = seqs.take(&e);
                journal.entries.push(MissingRecord {
                    line: l.line,
                    seq,
                    what: describe(&e),
                });
                entries.push(e);
            }
            Err(ps) => problems.extend(ps),
        }
    }
    if problems.is_empty() {
        return Ok((entries, journal));
    }
    problems.sort_by_key(|p| p.line);
    Err(BatchError::Invalid {
        input: batch.source.clone(),
        problems,
    })
}

/// Checks a correction's step and verdict; returns the step's fingerprint or every problem
/// as (field, message).
fn correction(
    campaign: &Campaign,
    steps: &mut StepIndex<'_>,
    (round, episode, t): (u32, &str, i64),
    verdict: &Verdict,
) -> Result<String, Vec<(String, String)>> {
    let mut problems = verdict_problems(campaign, verdict);
    let found = steps.find(round, episode, t);
    match found {
        Ok((table, row)) if problems.is_empty() => Ok(fingerprint(table, row)),
        Ok(_) => Err(problems),
        Err(p) => {
            problems.insert(0, p);
            Err(problems)
        }
    }
}

/// Every fault of a verdict against the spec, as (field, message): the number of values,
/// then each channel's value.
fn verdict_problems(campaign: &Campaign, verdict: &Verdict) -> Vec<(String, String)> {
    let Verdict::Action(values) = verdict else {
        return Vec::new();
    };
    let spec = campaign.spec();
    if values.len() != spec.action_dim() {
        let names: Vec<&str> = spec.actions.iter().map(|c| c.name.as_str()).collect();
        return vec![(
            "action".into(),
            format!(
                "{} value(s), the spec has {} channel(s) ({})",
                values.len(),
                names.len(),
                names.join(", ")
            ),
        )];
    }
    spec.actions
        .iter()
        .zip(values)
        .filter_map(|(c, v)| channel_value(c, v).err().map(|m| (c.name.clone(), m)))
        .collect()
}

/// Finds steps by (round, episode, t) with one episode map per round.
struct StepIndex<'a> {
    campaign: &'a Campaign,
    maps: HashMap<u32, HashMap<&'a str, usize>>,
}

impl<'a> StepIndex<'a> {
    fn new(campaign: &'a Campaign) -> Self {
        StepIndex {
            campaign,
            maps: HashMap::new(),
        }
    }

    /// The step's table and row, or the (field, message) saying what is unknown.
    fn find(
        &mut self,
        round: u32,
        episode: &str,
        t: i64,
    ) -> Result<(&'a StepTable, usize), (String, String)> {
        let Some(r) = self.campaign.round(round) else {
            return Err(("round".into(), format!("the campaign has no round {round}")));
        };
        let table = &r.steps;
        let map = self
            .maps
            .entry(round)
            .or_insert_with(|| table.episode_map());
        let Some(&e) = map.get(episode) else {
            return Err((
                "episode".into(),
                format!("round {round} has no episode `{episode}`"),
            ));
        };
        let rows = table.episodes[e].rows();
        match table.t[rows.clone()].binary_search(&t) {
            Ok(i) => Ok((table, rows.start + i)),
            Err(_) => Err((
                "t".into(),
                format!("round {round} `{episode}` has no step t {t}"),
            )),
        }
    }
}

/// The ledger's corrections and retractions as the batch goes on: which sequence numbers a
/// retraction may name, and the next sequence number.
struct SeqState {
    corrections: HashSet<u64>,
    retracted: HashSet<u64>,
    next: u64,
}

impl SeqState {
    fn of(ledger: &Ledger) -> Self {
        let mut s = SeqState {
            corrections: HashSet::new(),
            retracted: HashSet::new(),
            // An exhausted ledger refuses the write itself; the numbers here only tell
            // which corrections of the batch a later line may retract.
            next: ledger.next_seq().unwrap_or(u64::MAX),
        };
        for r in ledger.records() {
            match r.entry {
                Entry::Correction(_) => s.corrections.insert(r.seq),
                Entry::Retraction(x) => s.retracted.insert(x.retracts),
            };
        }
        s
    }

    fn retract(&mut self, seq: u64) -> Result<(), String> {
        if !self.corrections.contains(&seq) {
            return Err(format!(
                "#{seq} is no correction of this ledger (nor of an earlier line of the batch)"
            ));
        }
        if !self.retracted.insert(seq) {
            return Err(format!("#{seq} is already retracted"));
        }
        Ok(())
    }

    /// The sequence number the entry takes.
    fn take(&mut self, e: &Entry) -> u64 {
        let seq = self.next;
        if let Entry::Correction(_) = e {
            self.corrections.insert(seq);
        }
        self.next = self.next.saturating_add(1);
        seq
    }
}

/// A short description of an entry, the same for a batch line and the record it became.
fn describe(e: &Entry) -> String {
    match e {
        Entry::Correction(c) => format!("round {} `{}` t {}", c.round, c.episode, c.t),
        Entry::Retraction(x) => format!("retraction of #{}", x.retracts),
    }
}

fn journal_path(ledger: &Ledger) -> PathBuf {
    ledger.path().with_extension("batch.json")
}

/// Writes the journal through [`crate::durable`] (temporary file, fsync, rename, folder
/// fsync; never through a link).
fn write_journal(path: &Path, journal: &Journal) -> Result<(), LedgerError> {
    let bytes = serde_json::to_vec(journal).unwrap_or_default();
    crate::durable::write_bytes(path, &bytes).map_err(LedgerError::io(path))
}

fn sync_parent(path: &Path) -> Result<(), LedgerError> {
    let dir = crate::durable::parent_of(path);
    crate::durable::sync_dir(dir).map_err(LedgerError::io(dir))
}

/// Compares a journal left behind with the ledger. A whole batch's journal is removed; an
/// unfinished batch's journal is kept under a new name and reported.
fn check_journal(ledger: &Ledger) -> Result<Option<UnfinishedBatch>, LedgerError> {
    let path = journal_path(ledger);
    // A temporary journal (never whole or never renamed: its batch was not started) is
    // removed by the durable writer's cleanup of dead processes' temporary files.
    let bytes = match std::fs::read(&path) {
        Ok(b) => b,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(None),
        Err(e) => return Err(LedgerError::io(&path)(e)),
    };
    let journal: Journal = serde_json::from_slice(&bytes).map_err(|e| LedgerError::Io {
        path: path.clone(),
        source: std::io::Error::new(std::io::ErrorKind::InvalidData, e),
    })?;
    let records = ledger.records();
    let saved = |m: &MissingRecord| {
        records
            .binary_search_by_key(&m.seq, |r| r.seq)
            .is_ok_and(|i| describe(&records[i].entry) == m.what)
    };
    let total = journal.entries.len();
    let missing: Vec<MissingRecord> = journal.entries.into_iter().filter(|m| !saved(m)).collect();
    if missing.is_empty() {
        std::fs::remove_file(&path).map_err(LedgerError::io(&path))?;
        return Ok(None);
    }
    let kept = keep_journal(&path)?;
    Ok(Some(UnfinishedBatch {
        source: journal.source,
        total,
        saved: total - missing.len(),
        missing,
        kept,
    }))
}

/// Renames an unfinished batch's journal to the first free `<annotator>.batch-unfinished-<n>.json`.
fn keep_journal(path: &Path) -> Result<PathBuf, LedgerError> {
    let stem = path
        .file_name()
        .and_then(|n| n.to_str())
        .and_then(|n| n.strip_suffix(".batch.json"))
        .unwrap_or("ledger")
        .to_string();
    for n in 1u32.. {
        let kept = path.with_file_name(format!("{stem}.batch-unfinished-{n}.json"));
        if std::fs::symlink_metadata(&kept).is_err() {
            std::fs::rename(path, &kept).map_err(LedgerError::io(&kept))?;
            sync_parent(&kept)?;
            return Ok(kept);
        }
    }
    unreachable!("u32 journal names are never all taken")
}

#[cfg(test)]
#[path = "batch_tests.rs"]
mod tests;
