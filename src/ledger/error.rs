//! The ledger's error type and located problems found while reading a ledger.

use std::fmt;
use std::path::PathBuf;

/// Why a ledger operation failed.
#[derive(Debug, thiserror::Error)]
pub enum LedgerError {
    /// Reading or writing a file failed.
    #[error("{}: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating system's error.
        source: std::io::Error,
    },
    /// Another process (or another handle in this one) holds the ledger.
    #[error("{} is open for writing elsewhere ({holder}); close it there first", path.display())]
    Locked {
        /// The ledger file.
        path: PathBuf,
        /// Who holds the lock: pid, host and start time as written in the lock file.
        holder: String,
    },
    /// Writing a record failed (disk full, a file size limit, a vanished share): the record
    /// is not saved; every record acknowledged before it is.
    #[error(
        "{}: the record was NOT saved ({source}); every record acknowledged before it is safe",
        path.display()
    )]
    NotSaved {
        /// The ledger file.
        path: PathBuf,
        /// The operating system's error.
        source: std::io::Error,
    },
    /// The ledger file on disk is no longer the one this program opened (replaced, moved,
    /// cut or written by another program): nothing is appended to a stale file.
    #[error(
        "{}: the ledger changed on disk since it was opened ({detail}); nothing was written. \
         Open the ledger again to read what is there now",
        path.display()
    )]
    ChangedOnDisk {
        /// The ledger file.
        path: PathBuf,
        /// What changed.
        detail: String,
    },
    /// The ledger's name (or its lock's, or the ledgers folder's) is a link: ledgers are plain
    /// files in a real folder (readers skip links), so that no correction is written to a
    /// place outside the campaign.
    #[error("{} is a link; a ledger, its lock and the ledgers folder must be plain files and folders inside the campaign", path.display())]
    IsLink {
        /// The ledger file.
        path: PathBuf,
    },
    /// A file the ledger writes (the ledger or its lock) exists and is not a regular file (a
    /// device node, a fifo, a folder): it is never written.
    #[error("{} is not a regular file; a ledger and its lock must be plain files", path.display())]
    NotAFile {
        /// The file.
        path: PathBuf,
    },
    /// A record's sequence number cannot follow the last one (the ledger holds the largest
    /// number there is); nothing was written.
    #[error("{}: field `seq`: no sequence number follows {last}; nothing was written", path.display())]
    SeqExhausted {
        /// The ledger file.
        path: PathBuf,
        /// The last sequence number.
        last: u64,
    },
    /// The ledger file is larger than any ledger written by hand could be.
    #[error(
        "{} holds {len} bytes; a ledger may hold at most {max} (is this file a ledger?)",
        path.display()
    )]
    TooLarge {
        /// The ledger file.
        path: PathBuf,
        /// Its length.
        len: u64,
        /// The limit, [`super::MAX_LEDGER_BYTES`].
        max: u64,
    },
    /// The annotator name cannot be used as a file name.
    #[error("annotator name `{name}` {reason}")]
    BadAnnotator {
        /// The name given.
        name: String,
        /// What is wrong with it.
        reason: String,
    },
    /// A retraction named a sequence number that is no correction of this ledger.
    #[error("{}: record #{seq} is not a correction in this ledger", path.display())]
    NoSuchCorrection {
        /// The ledger file.
        path: PathBuf,
        /// The sequence number asked for.
        seq: u64,
    },
    /// A retraction named a correction that is already retracted.
    #[error("{}: record #{seq} is already retracted", path.display())]
    AlreadyRetracted {
        /// The ledger file.
        path: PathBuf,
        /// The sequence number asked for.
        seq: u64,
    },
}

impl LedgerError {
    pub(crate) fn io(path: impl Into<PathBuf>) -> impl FnOnce(std::io::Error) -> LedgerError {
        let path = path.into();
        move |source| LedgerError::Io { path, source }
    }
}

/// A fault found in a ledger file, located by line (1-based) and field. Faulty lines are
/// reported and left out; they are never changed.
#[derive(Debug, Clone, PartialEq)]
pub struct LedgerProblem {
    /// The ledger file.
    pub file: PathBuf,
    /// 1-based line.
    pub line: u64,
    /// The field concerned, empty for the whole line.
    pub field: String,
    /// What is wrong.
    pub message: String,
}

impl fmt::Display for LedgerProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}", self.file.display(), self.line)?;
        if !self.field.is_empty() {
            write!(f, ": field `{}`", self.field)?;
        }
        write!(f, ": {}", self.message)
    }
}
