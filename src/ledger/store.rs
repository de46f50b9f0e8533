//! The writer's side of a ledger: open with a lock, set a torn tail aside, append with fsync.

use std::collections::HashSet;
use std::fs::{File, OpenOptions};
use std::io::{Read, Write};
use std::path::{Path, PathBuf};

use super::check_annotator;
use super::error::{LedgerError, LedgerProblem};
use super::lock::acquire;
use super::read::{ledger_path, parse};
use super::record::{Correction, Entry, Record, Retraction};
use super::time::utc_timestamp;
use crate::campaign::folder::LEDGERS_DIR;
use crate::durable::{is_link_error, open_nofollow};

/// Bytes of a torn last line that [`Ledger::open`] moved to a side file.
#[derive(Debug, Clone, PartialEq)]
pub struct SetAside {
    /// The side file holding the bytes.
    pub path: PathBuf,
    /// 1-based line of the ledger the bytes were on.
    pub line: u64,
    /// How many bytes were set aside.
    pub bytes: u64,
}

/// What [`Ledger::open`] found.
#[derive(Debug, Clone, PartialEq)]
pub struct OpenReport {
    /// Whole, well-formed records in the ledger.
    pub records: usize,
    /// A torn last line, set aside.
    pub set_aside: Option<SetAside>,
    /// Lines left out (malformed, out of sequence); they stay in the file untouched.
    pub problems: Vec<LedgerProblem>,
    /// True when the ledger file did not exist and was created.
    pub created: bool,
}

/// One annotator's ledger, open for appending. Holds the ledger's lock until dropped.
#[derive(Debug)]
pub struct Ledger {
    path: PathBuf,
    annotator: String,
    file: File,
    _lock: File,
    len: u64,
    records: Vec<Record>,
    retracted: HashSet<u64>,
    /// The next record's sequence number; `None` when no number follows the last one.
    next_seq: Option<u64>,
}

impl Ledger {
    /// Opens (creating when needed) the ledger of `annotator` in a campaign folder, taking
    /// its lock and setting aside a torn last line.
    pub fn open(
        campaign_root: &Path,
        annotator: &str,
    ) -> Result<(Ledger, OpenReport), LedgerError> {
        check_annotator(annotator)?;
        let path = ledger_path(campaign_root, annotator);
        let dir = crate::durable::real_dir(campaign_root, Path::new(LEDGERS_DIR))
            .map_err(LedgerError::io(campaign_root.join(LEDGERS_DIR)))?;
        let lock = acquire(&dir.join(format!("{annotator}.lock")), &path)?;
        let (mut file, created) = open_ledger_file(&path)?;
        if created {
            sync_dir(&dir)?;
        }
        let len = file.metadata().map_err(LedgerError::io(&path))?.len();
        super::check_ledger_size(&path, len)?;
        let mut bytes = Vec::new();
        file.read_to_end(&mut bytes)
            .map_err(LedgerError::io(&path))?;
        let parsed = parse(&path, &bytes, annotator);
        if parsed.unterminated {
            terminate(&mut file, &path)?;
        }
        let set_aside = if parsed.whole_len < bytes.len() {
            let tail = &bytes[parsed.whole_len..];
            Some(set_aside(
                &path,
                &file,
                tail,
                parsed.whole_len,
                parsed.tail_line,
            )?)
        } else {
            None
        };
        let retracted = parsed
            .records
            .iter()
            .filter_map(|r| match r.entry {
                Entry::Retraction(x) => Some(x.retracts),
                Entry::Correction(_) => None,
            })
            .collect();
        let next_seq = parsed.next_seq;
        let len = parsed.whole_len as u64 + u64::from(parsed.unterminated);
        let report = OpenReport {
            records: parsed.records.len(),
            set_aside,
            problems: parsed.problems,
            created,
        };
        let ledger = Ledger {
            path,
            annotator: annotator.to_string(),
            file,
            _lock: lock,
            len,
            records: parsed.records,
            retracted,
            next_seq,
        };
        Ok((ledger, report))
    }

    /// Appends a correction; returns the record once it is written whole and fsync'd.
    pub fn append(&mut self, correction: Correction) -> Result<Record, LedgerError> {
        self.write(Entry::Correction(correction))
    }

    /// Appends several corrections with one write and one fsync (scripted bulk entry).
    /// Either all are acknowledged or, on an error, none is kept on disk.
    pub fn append_all(&mut self, corrections: Vec<Correction>) -> Result<Vec<Record>, LedgerError> {
        let time = utc_timestamp();
        let entries: Vec<Entry> = corrections.into_iter().map(Entry::Correction).collect();
        self.write_entries(entries, &time)
    }

    /// Appends corrections and retractions with one write and one fsync (the bulk path of
    /// [`super::batch`], which checks the retractions first). Either all are acknowledged
    /// or, on an error, none is kept on disk.
    pub(crate) fn append_entries(
        &mut self,
        entries: Vec<Entry>,
    ) -> Result<Vec<Record>, LedgerError> {
        self.write_entries(entries, &utc_timestamp())
    }

    /// Retracts an earlier, not yet retracted correction of this ledger (undo).
    pub fn retract(&mut self, seq: u64) -> Result<Record, LedgerError> {
        let is_correction = self
            .records
            .iter()
            .any(|r| r.seq == seq && r.correction().is_some());
        if !is_correction {
            return Err(LedgerError::NoSuchCorrection {
                path: self.path.clone(),
                seq,
            });
        }
        if self.retracted.contains(&seq) {
            return Err(LedgerError::AlreadyRetracted {
                path: self.path.clone(),
                seq,
            });
        }
        self.write(Entry::Retraction(Retraction { retracts: seq }))
    }

    fn write(&mut self, entry: Entry) -> Result<Record, LedgerError> {
        let mut records = self.write_entries(vec![entry], &utc_timestamp())?;
        records.pop().ok_or_else(|| LedgerError::SeqExhausted {
            path: self.path.clone(),
            last: self.records.last().map_or(0, |r| r.seq),
        })
    }

    /// The one append path: numbers the entries from the next sequence number on (each the
    /// previous + 1, checked), writes them with one write and one fsync, and keeps them
    /// (retractions mark what they retract). The caller checks what the entries say.
    pub(crate) fn write_entries(
        &mut self,
        entries: Vec<Entry>,
        time: &str,
    ) -> Result<Vec<Record>, LedgerError> {
        let mut records = Vec::with_capacity(entries.len());
        let mut next = self.next_seq;
        for entry in entries {
            let seq = next.ok_or_else(|| self.exhausted())?;
            records.push(Record {
                seq,
                entry,
                annotator: self.annotator.clone(),
                time: time.to_string(),
                tool: crate::VERSION.to_string(),
            });
            next = seq.checked_add(1);
        }
        let bytes: Vec<u8> = records.iter().flat_map(Record::to_line).collect();
        self.write_whole(&bytes)?;
        self.len += bytes.len() as u64;
        self.next_seq = next;
        for r in &records {
            if let Entry::Retraction(x) = &r.entry {
                self.retracted.insert(x.retracts);
            }
        }
        self.records.extend(records.iter().cloned());
        Ok(records)
    }

    fn exhausted(&self) -> LedgerError {
        LedgerError::SeqExhausted {
            path: self.path.clone(),
            last: self.records.last().map_or(0, |r| r.seq),
        }
    }

    /// Writes bytes at the end of the ledger and fsyncs them, after checking that the file
    /// on disk is still the one opened. On failure, cuts a partial line back off so that the
    /// next append does not glue onto it.
    fn write_whole(&mut self, bytes: &[u8]) -> Result<(), LedgerError> {
        self.check_unchanged()?;
        let written = self
            .file
            .write_all(bytes)
            .and_then(|()| self.file.sync_data());
        if let Err(source) = written {
            let _ = self
                .file
                .set_len(self.len)
                .and_then(|()| self.file.sync_data());
            return Err(LedgerError::NotSaved {
                path: self.path.clone(),
                source,
            });
        }
        Ok(())
    }

    /// Refuses to append when the file under the ledger's name is not the open file any more,
    /// or its length is not what this writer left (another program wrote or cut it).
    fn check_unchanged(&self) -> Result<(), LedgerError> {
        let changed = |detail: String| LedgerError::ChangedOnDisk {
            path: self.path.clone(),
            detail,
        };
        let on_disk = match std::fs::metadata(&self.path) {
            Ok(m) => m,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                return Err(changed("the file is gone".into()));
            }
            Err(e) => return Err(LedgerError::io(&self.path)(e)),
        };
        let open = self.file.metadata().map_err(LedgerError::io(&self.path))?;
        if !same_file(&on_disk, &open) {
            return Err(changed("another file now has its name".into()));
        }
        if open.len() != self.len {
            return Err(changed(format!(
                "it holds {} bytes, this program wrote {}",
                open.len(),
                self.len
            )));
        }
        Ok(())
    }

    /// The ledger's records, in order (those found on open, then those appended).
    pub fn records(&self) -> &[Record] {
        &self.records
    }

    /// This annotator's standing record for a step: the latest correction of it that is not
    /// retracted.
    pub fn standing(&self, round: u32, episode: &str, t: i64) -> Option<&Record> {
        super::standing::standing_of(&self.records, round, episode, t)
    }

    /// The correction an undo takes back (see [`super::last_standing`]).
    pub fn last_standing(&self) -> Option<(u64, &super::Correction)> {
        super::standing::last_standing(&self.records)
    }

    /// True when the correction with this sequence number was retracted.
    pub fn is_retracted(&self, seq: u64) -> bool {
        self.retracted.contains(&seq)
    }

    /// The ledger file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The annotator who owns this ledger.
    pub fn annotator(&self) -> &str {
        &self.annotator
    }

    /// The sequence number the next record will get (`None` when no number follows the
    /// last one: the ledger takes no more records).
    pub fn next_seq(&self) -> Option<u64> {
        self.next_seq
    }
}

#[cfg(unix)]
fn same_file(a: &std::fs::Metadata, b: &std::fs::Metadata) -> bool {
    use std::os::unix::fs::MetadataExt;
    (a.dev(), a.ino()) == (b.dev(), b.ino())
}

#[cfg(not(unix))]
fn same_file(a: &std::fs::Metadata, b: &std::fs::Metadata) -> bool {
    a.len() == b.len() && a.modified().ok() == b.modified().ok()
}

/// Ends a last line that is a whole record missing only its newline, so that it is kept and
/// the next record starts on a line of its own.
fn terminate(file: &mut File, path: &Path) -> Result<(), LedgerError> {
    file.write_all(b"\n")
        .and_then(|()| file.sync_data())
        .map_err(LedgerError::io(path))
}

/// Opens (creating when missing) a ledger file for reading and appending, never through a
/// link; says whether it was created.
fn open_ledger_file(path: &Path) -> Result<(File, bool), LedgerError> {
    let created = std::fs::symlink_metadata(path).is_err();
    let mut opts = OpenOptions::new();
    opts.read(true).append(true).create(true);
    let file = open_nofollow(&mut opts, path).map_err(|e| {
        if is_link_error(&e) {
            LedgerError::IsLink {
                path: path.to_path_buf(),
            }
        } else {
            LedgerError::io(path)(e)
        }
    })?;
    if !file
        .metadata()
        .map_err(LedgerError::io(path))?
        .file_type()
        .is_file()
    {
        return Err(LedgerError::NotAFile {
            path: path.to_path_buf(),
        });
    }
    Ok((file, created))
}

/// Copies a torn tail to a new side file (fsync'd), then cuts it from the ledger.
fn set_aside(
    path: &Path,
    file: &File,
    tail: &[u8],
    whole_len: usize,
    line: u64,
) -> Result<SetAside, LedgerError> {
    let side = create_side_file(path)?;
    let (mut f, side_path) = side;
    f.write_all(tail)
        .and_then(|()| f.sync_all())
        .map_err(LedgerError::io(&side_path))?;
    if let Some(dir) = path.parent() {
        sync_dir(dir)?;
    }
    file.set_len(whole_len as u64)
        .and_then(|()| file.sync_all())
        .map_err(LedgerError::io(path))?;
    Ok(SetAside {
        path: side_path,
        line,
        bytes: tail.len() as u64,
    })
}

fn create_side_file(path: &Path) -> Result<(File, PathBuf), LedgerError> {
    for n in 1u32.. {
        let mut name = path.as_os_str().to_owned();
        name.push(format!(".torn-{n}"));
        let p = PathBuf::from(name);
        let mut opts = OpenOptions::new();
        opts.write(true).create_new(true);
        match open_nofollow(&mut opts, &p) {
            Ok(f) => return Ok((f, p)),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(LedgerError::io(&p)(e)),
        }
    }
    unreachable!("u32 side file names are never all taken")
}

/// Makes a directory entry durable (a new file's name survives a power cut).
fn sync_dir(dir: &Path) -> Result<(), LedgerError> {
    crate::durable::sync_dir(dir).map_err(LedgerError::io(dir))
}
