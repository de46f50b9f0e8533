//! Reading ledgers without a lock: parsing, located problems, change detection.

use std::path::{Path, PathBuf};
use std::time::SystemTime;

use super::check_annotator;
use super::error::{LedgerError, LedgerProblem};
use super::record::{Entry, Record};
use crate::campaign::folder::LEDGERS_DIR;

/// The path of an annotator's ledger in a campaign folder.
pub fn ledger_path(campaign_root: &Path, annotator: &str) -> PathBuf {
    campaign_root
        .join(LEDGERS_DIR)
        .join(format!("{annotator}.jsonl"))
}

/// Size and modification time of a file: a cheap way to see that it changed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FileStamp {
    /// Length in bytes.
    pub len: u64,
    /// Last modification time, when the platform reports it.
    pub modified: Option<SystemTime>,
}

impl FileStamp {
    /// The stamp of a file now, `None` when it cannot be read.
    pub fn of(path: &Path) -> Option<FileStamp> {
        let m = std::fs::metadata(path).ok()?;
        Some(FileStamp {
            len: m.len(),
            modified: m.modified().ok(),
        })
    }
}

/// One annotator's ledger as read from disk.
#[derive(Debug, Clone, PartialEq)]
pub struct AnnotatorLedger {
    /// The annotator (the file's stem).
    pub annotator: String,
    /// The ledger file.
    pub path: PathBuf,
    /// The well-formed records, in file order.
    pub records: Vec<Record>,
    /// Lines left out, with the reason.
    pub problems: Vec<LedgerProblem>,
    /// Bytes after the last newline: a record being written right now, or a torn line that
    /// the next writer will set aside. Never parsed.
    pub incomplete_tail: u64,
    /// The file's stamp when it was read.
    pub stamp: Option<FileStamp>,
    /// SHA-256 (hex) of the bytes read, for provenance in exports.
    pub sha256: String,
}

impl AnnotatorLedger {
    /// True when the file on disk is no longer the one that was read.
    pub fn changed_on_disk(&self) -> bool {
        FileStamp::of(&self.path) != self.stamp
    }

    /// Reads the file again when it changed on disk; returns whether it did.
    pub fn refresh(&mut self) -> Result<bool, LedgerError> {
        if !self.changed_on_disk() {
            return Ok(false);
        }
        *self = read_ledger(&self.path)?;
        Ok(true)
    }
}

/// Parsed ledger bytes.
pub(crate) struct Parsed {
    pub records: Vec<Record>,
    pub problems: Vec<LedgerProblem>,
    /// Length of the part that ends with the last newline.
    pub whole_len: usize,
    /// 1-based line number of the bytes after the last newline.
    pub tail_line: u64,
}

/// Parses the whole lines of a ledger; records that are malformed, belong to another
/// annotator, repeat or go back in sequence, or retract nothing are problems.
pub(crate) fn parse(path: &Path, bytes: &[u8], annotator: &str) -> Parsed {
    let whole_len = bytes.iter().rposition(|&b| b == b'\n').map_or(0, |i| i + 1);
    let mut out = Parsed {
        records: Vec::new(),
        problems: Vec::new(),
        whole_len,
        tail_line: 1,
    };
    let mut corrections = std::collections::HashSet::new();
    for (i, line) in bytes[..whole_len].split(|&b| b == b'\n').enumerate() {
        out.tail_line = i as u64 + 1;
        if line.iter().all(u8::is_ascii_whitespace) {
            continue;
        }
        let problem = |field: &str, message: String| LedgerProblem {
            file: path.to_path_buf(),
            line: i as u64 + 1,
            field: field.to_string(),
            message,
        };
        let last_seq = out.records.last().map_or(0, |r: &Record| r.seq);
        match serde_json::from_slice::<Record>(line) {
            Err(e) => out
                .problems
                .push(problem("", format!("not a ledger record: {e}"))),
            Ok(r) if r.annotator != annotator => out.problems.push(problem(
                "annotator",
                format!("`{}` in the ledger of `{annotator}`", r.annotator),
            )),
            Ok(r) if r.seq <= last_seq => out.problems.push(problem(
                "seq",
                format!("{} does not follow {last_seq}", r.seq),
            )),
            Ok(r) => match &r.entry {
                Entry::Retraction(x) if !corrections.contains(&x.retracts) => {
                    out.problems.push(problem(
                        "retracts",
                        format!("#{} is no earlier correction of this ledger", x.retracts),
                    ))
                }
                Entry::Retraction(_) => out.records.push(r),
                Entry::Correction(_) => {
                    corrections.insert(r.seq);
                    out.records.push(r);
                }
            },
        }
    }
    out
}

/// SHA-256 of bytes as lowercase hex.
pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::{Digest, Sha256};
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// Reads one ledger file without locking it.
pub fn read_ledger(path: &Path) -> Result<AnnotatorLedger, LedgerError> {
    let annotator = path
        .file_name()
        .and_then(|n| n.to_str())
        .and_then(|n| n.strip_suffix(".jsonl"))
        .unwrap_or_default()
        .to_string();
    let stamp = FileStamp::of(path);
    super::check_ledger_size(path, stamp.map_or(0, |s| s.len))?;
    let bytes = std::fs::read(path).map_err(LedgerError::io(path))?;
    let mut ledger = parse_ledger(path, &annotator, &bytes);
    ledger.stamp = stamp;
    Ok(ledger)
}

/// Parses ledger bytes as if read from `path` (no stamp): what [`read_ledger`] does after
/// reading the file.
pub fn parse_ledger(path: &Path, annotator: &str, bytes: &[u8]) -> AnnotatorLedger {
    let p = parse(path, bytes, annotator);
    AnnotatorLedger {
        annotator: annotator.to_string(),
        path: path.to_path_buf(),
        records: p.records,
        problems: p.problems,
        incomplete_tail: (bytes.len() - p.whole_len) as u64,
        stamp: None,
        sha256: sha256_hex(bytes),
    }
}

/// Reads every ledger of a campaign (`ledgers/<annotator>.jsonl`), sorted by annotator,
/// without locking. A campaign without a `ledgers/` folder has no ledgers.
pub fn read_ledgers(campaign_root: &Path) -> Result<Vec<AnnotatorLedger>, LedgerError> {
    let dir = campaign_root.join(LEDGERS_DIR);
    let entries = match std::fs::read_dir(&dir) {
        Ok(e) => e,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Vec::new()),
        Err(e) => return Err(LedgerError::io(&dir)(e)),
    };
    let mut paths = Vec::new();
    for entry in entries {
        let entry = entry.map_err(LedgerError::io(&dir))?;
        let name = entry.file_name().to_string_lossy().into_owned();
        if let Some(stem) = name.strip_suffix(".jsonl")
            && check_annotator(stem).is_ok()
            && entry.file_type().is_ok_and(|t| t.is_file())
        {
            paths.push(entry.path());
        }
    }
    paths.sort();
    paths.iter().map(|p| read_ledger(p)).collect()
}

/// The stamps of every ledger file of a campaign, sorted by path: compare two calls to see
/// whether any ledger was added, grew or was replaced (a few `stat` calls; cheap to poll).
pub fn ledger_stamps(campaign_root: &Path) -> Vec<(PathBuf, FileStamp)> {
    let dir = campaign_root.join(LEDGERS_DIR);
    let Ok(entries) = std::fs::read_dir(&dir) else {
        return Vec::new();
    };
    let mut out: Vec<(PathBuf, FileStamp)> = entries
        .flatten()
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "jsonl"))
        .filter_map(|p| FileStamp::of(&p).map(|s| (p, s)))
        .collect();
    out.sort_by(|a, b| a.0.cmp(&b.0));
    out
}
