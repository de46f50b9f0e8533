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
    next_seq: u64,
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
        let dir = path.parent().unwrap_or(campaign_root).to_path_buf();
        std::fs::create_dir_all(&dir).map_err(LedgerError::io(&dir))?;
        let lock = acquire(&dir.join(format!("{annotator}.lock")), &path)?;
        if std::fs::symlink_metadata(&path).is_ok_and(|m| m.file_type().is_symlink()) {
            return Err(LedgerError::IsLink { path });
        }
        let created = !path.exists();
        let mut file = OpenOptions::new()
            .read(true)
            .append(true)
            .create(true)
            .open(&path)
            .map_err(LedgerError::io(&path))?;
        if created {
            sync_dir(&dir)?;
        }
        let len = file.metadata().map_err(LedgerError::io(&path))?.len();
        super::check_ledger_size(&path, len)?;
        let mut bytes = Vec::new();
        file.read_to_end(&mut bytes)
            .map_err(LedgerError::io(&path))?;
        let parsed = parse(&path, &bytes, annotator);
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
        let next_seq = parsed.records.last().map_or(1, |r| r.seq + 1);
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
            len: parsed.whole_len as u64,
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
        let records: Vec<Record> = corrections
            .into_iter()
            .enumerate()
            .map(|(i, c)| Record {
                seq: self.next_seq + i as u64,
                entry: Entry::Correction(c),
                annotator: self.annotator.clone(),
                time: time.clone(),
                tool: crate::VERSION.to_string(),
            })
            .collect();
        let bytes: Vec<u8> = records.iter().flat_map(Record::to_line).collect();
        self.write_whole(&bytes)?;
        self.len += bytes.len() as u64;
        self.next_seq += records.len() as u64;
        self.records.extend(records.iter().cloned());
        Ok(records)
    }

    /// Appends corrections and retractions with one write and one fsync (the bulk path of
    /// [`super::batch`], which checks the retractions first). Either all are acknowledged
    /// or, on an error, none is kept on disk.
    pub(crate) fn append_entries(
        &mut self,
        entries: Vec<Entry>,
    ) -> Result<Vec<Record>, LedgerError> {
        let time = utc_timestamp();
        let records: Vec<Record> = entries
            .into_iter()
            .enumerate()
            .map(|(i, entry)| Record {
                seq: self.next_seq + i as u64,
                entry,
                annotator: self.annotator.clone(),
                time: time.clone(),
                tool: crate::VERSION.to_string(),
            })
            .collect();
        let bytes: Vec<u8> = records.iter().flat_map(Record::to_line).collect();
        self.write_whole(&bytes)?;
        self.len += bytes.len() as u64;
        self.next_seq += records.len() as u64;
        for r in &records {
            if let Entry::Retraction(x) = r.entry {
                self.retracted.insert(x.retracts);
            }
        }
        self.records.extend(records.iter().cloned());
        Ok(records)
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
        let r = self.write(Entry::Retraction(Retraction { retracts: seq }))?;
        self.retracted.insert(seq);
        Ok(r)
    }

    fn write(&mut self, entry: Entry) -> Result<Record, LedgerError> {
        let record = Record {
            seq: self.next_seq,
            entry,
            annotator: self.annotator.clone(),
            time: utc_timestamp(),
            tool: crate::VERSION.to_string(),
        };
        let line = record.to_line();
        self.write_whole(&line)?;
        self.len += line.len() as u64;
        self.next_seq += 1;
        self.records.push(record.clone());
        Ok(record)
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
        self.records.iter().rev().find(|r| {
            r.correction()
                .is_some_and(|c| c.round == round && c.episode == episode && c.t == t)
                && !self.retracted.contains(&r.seq)
        })
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

    /// The sequence number the next record will get.
    pub fn next_seq(&self) -> u64 {
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
        match OpenOptions::new().write(true).create_new(true).open(&p) {
            Ok(f) => return Ok((f, p)),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(LedgerError::io(&p)(e)),
        }
    }
    unreachable!("u32 side file names are never all taken")
}

/// Makes a directory entry durable (a new file's name survives a power cut).
fn sync_dir(dir: &Path) -> Result<(), LedgerError> {
    #[cfg(unix)]
    {
        File::open(dir)
            .and_then(|d| d.sync_all())
            .map_err(LedgerError::io(dir))?;
    }
    #[cfg(not(unix))]
    let _ = dir;
    Ok(())
}
