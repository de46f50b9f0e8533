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
    /// How many bytes were read.
    pub bytes: u64,
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
    /// Length of the part that ends with the last newline, or of all bytes when the last
    /// line is a whole record missing only its newline.
    pub whole_len: usize,
    /// 1-based line number of the bytes after the last newline.
    pub tail_line: u64,
    /// The last line is a whole record without its newline: kept, and a writer adds the
    /// newline before appending.
    pub unterminated: bool,
    /// The sequence number the next record gets (`None`: no number follows the last one).
    pub next_seq: Option<u64>,
}

/// Whether `seq` may follow the last accepted record's `last` when `skipped` lines were left
/// out since: it must be `last + 1`, and each line left out in between may have held one
/// number. No arithmetic here can wrap.
fn seq_follows(last: u64, skipped: u64, seq: u64) -> bool {
    seq.checked_sub(last)
        .is_some_and(|d| d >= 1 && d <= skipped.saturating_add(1))
}

struct LineParser<'a> {
    path: &'a Path,
    annotator: &'a str,
    out: Parsed,
    corrections: std::collections::HashSet<u64>,
    last_seq: u64,
    skipped: u64,
}

impl LineParser<'_> {
    fn problem(&mut self, line: u64, field: &str, message: String) {
        self.skipped = self.skipped.saturating_add(1);
        self.out.problems.push(LedgerProblem {
            file: self.path.to_path_buf(),
            line,
            field: field.to_string(),
            message,
        });
    }

    fn take(&mut self, line_no: u64, r: Record) {
        let (last, skipped) = (self.last_seq, self.skipped);
        if r.annotator != self.annotator {
            let msg = format!("`{}` in the ledger of `{}`", r.annotator, self.annotator);
            return self.problem(line_no, "annotator", msg);
        }
        if !seq_follows(last, skipped, r.seq) {
            let expected = match (
                last.checked_add(1),
                last.checked_add(skipped.saturating_add(1)),
            ) {
                (Some(a), Some(b)) if a < b => format!("{a} to {b}, one number per line left out"),
                (Some(a), _) => a.to_string(),
                (None, _) => "no number (none follows the last)".into(),
            };
            let msg = format!("{} does not follow {last}: expected {expected}", r.seq);
            return self.problem(line_no, "seq", msg);
        }
        if let Entry::Retraction(x) = &r.entry
            && !self.corrections.contains(&x.retracts)
        {
            let msg = format!("#{} is no earlier correction of this ledger", x.retracts);
            return self.problem(line_no, "retracts", msg);
        }
        if let Entry::Correction(_) = &r.entry {
            self.corrections.insert(r.seq);
        }
        self.last_seq = r.seq;
        self.skipped = 0;
        self.out.records.push(r);
    }

    fn line(&mut self, line_no: u64, line: &[u8]) {
        match serde_json::from_slice::<Record>(line) {
            Err(e) => self.problem(line_no, "", format!("not a ledger record: {e}")),
            Ok(r) => self.take(line_no, r),
        }
    }
}

/// Parses the whole lines of a ledger; records that are malformed, belong to another
/// annotator, do not follow the previous record's `seq` by one, or retract nothing are
/// problems. A last line without its newline is kept when it is a whole record.
pub(crate) fn parse(path: &Path, bytes: &[u8], annotator: &str) -> Parsed {
    let whole_len = bytes.iter().rposition(|&b| b == b'\n').map_or(0, |i| i + 1);
    let mut p = LineParser {
        path,
        annotator,
        out: Parsed {
            records: Vec::new(),
            problems: Vec::new(),
            whole_len,
            tail_line: 1,
            unterminated: false,
            next_seq: None,
        },
        corrections: std::collections::HashSet::new(),
        last_seq: 0,
        skipped: 0,
    };
    let mut line_no = 0u64;
    for line in bytes[..whole_len].split(|&b| b == b'\n') {
        line_no = line_no.saturating_add(1);
        p.out.tail_line = line_no;
        if !line.iter().all(u8::is_ascii_whitespace) {
            p.line(line_no, line);
        }
    }
    let tail = &bytes[whole_len..];
    if !tail.is_empty()
        && let Ok(r) = serde_json::from_slice::<Record>(tail)
    {
        p.take(p.out.tail_line, r);
        p.out.whole_len = bytes.len();
        p.out.unterminated = true;
    }
    p.out.next_seq = p.last_seq.checked_add(p.skipped.saturating_add(1));
    p.out
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
        bytes: bytes.len() as u64,
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
        if skip_reason(&entry).is_none() {
            paths.push(entry.path());
        }
    }
    paths.sort();
    paths.iter().map(|p| read_ledger(p)).collect()
}

/// An entry of `ledgers/` that is not read as a ledger, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct SkippedEntry {
    /// The entry.
    pub path: PathBuf,
    /// Why it is not read.
    pub reason: String,
}

impl std::fmt::Display for SkippedEntry {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{}: not read as a ledger: {}",
            self.path.display(),
            self.reason
        )
    }
}

/// True for the writers' own side files in `ledgers/`: `<annotator>.lock`,
/// `<annotator>.jsonl.torn-<n>`, `<annotator>.batch.json`,
/// `<annotator>.batch-unfinished-<n>.json`, and temporary files of [`crate::durable`].
fn is_side_file(name: &str) -> bool {
    let numbered = |n: &str| !n.is_empty() && n.bytes().all(|b| b.is_ascii_digit());
    let annotator = |a: &str| check_annotator(a).is_ok();
    name.strip_suffix(".lock").is_some_and(annotator)
        || name.strip_suffix(".batch.json").is_some_and(annotator)
        || name
            .rsplit_once(".jsonl.torn-")
            .is_some_and(|(a, n)| annotator(a) && numbered(n))
        || name
            .strip_suffix(".json")
            .and_then(|s| s.rsplit_once(".batch-unfinished-"))
            .is_some_and(|(a, n)| annotator(a) && numbered(n))
        || crate::durable::is_temp_name(name)
}

/// Why an entry of `ledgers/` is not a ledger; `None` for a ledger. The writers' own side
/// files ([`is_side_file`]) are not ledgers and need no word.
fn skip_reason(entry: &std::fs::DirEntry) -> Option<Option<String>> {
    let name = entry.file_name().to_string_lossy().into_owned();
    let kind = entry.file_type().ok();
    let Some(stem) = name.strip_suffix(".jsonl") else {
        let own = is_side_file(&name);
        return Some((!own).then(|| "its name does not end in `.jsonl`".to_string()));
    };
    if let Err(e) = check_annotator(stem) {
        return Some(Some(format!("{e}, so it names no annotator")));
    }
    match kind {
        Some(t) if t.is_file() => None,
        Some(t) if t.is_symlink() => {
            Some(Some("it is a link; a ledger must be a plain file".into()))
        }
        Some(t) if t.is_dir() => Some(Some("it is a folder".into())),
        _ => Some(Some("it is not a plain file".into())),
    }
}

/// Every entry of a campaign's `ledgers/` folder that [`read_ledgers`] does not read, with
/// the reason (a name with a space or a leading dot, a link, a folder named like a ledger,
/// a stray file), sorted by path, so that none is ignored without a word.
pub fn skipped_entries(campaign_root: &Path) -> Vec<SkippedEntry> {
    let dir = campaign_root.join(LEDGERS_DIR);
    let Ok(entries) = std::fs::read_dir(&dir) else {
        return Vec::new();
    };
    let mut out: Vec<SkippedEntry> = entries
        .flatten()
        .filter_map(|e| {
            let reason = skip_reason(&e)??;
            Some(SkippedEntry {
                path: e.path(),
                reason,
            })
        })
        .collect();
    out.sort_by(|a, b| a.path.cmp(&b.path));
    out
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_writers_side_files_are_known_and_strangers_are_not() {
        for own in [
            "ana.lock",
            "ana.jsonl.torn-2",
            "ana.batch.json",
            "ana.batch-unfinished-3.json",
            ".ana.batch.json.partial-12-0-0123abcd",
        ] {
            assert!(is_side_file(own), "{own}");
        }
        for stranger in [
            "notes.txt",
            "a b.lock",
            "ana.jsonl.torn-",
            "ana.batch-unfinished-x.json",
        ] {
            assert!(!is_side_file(stranger), "{stranger}");
        }
    }
}
