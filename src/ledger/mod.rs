//! Ledgers: one append-only JSON Lines file of corrections per annotator,
//! `ledgers/<annotator>.jsonl` in the campaign folder.
//!
//! - Every line is one [`Record`]: a correction of one step (round, episode, t, the step's
//!   [`fingerprint`], the verdict) or a retraction pointing at an earlier correction. Nothing is
//!   ever rewritten or deleted; undo appends a retraction.
//! - [`Ledger::append`] writes a record whole and fsyncs before returning it: a returned record
//!   survives a crash, a kill or a power cut.
//! - [`Ledger::open`] takes an exclusive advisory lock on `ledgers/<annotator>.lock` (a second
//!   writer is refused with a message naming the holder's pid, host and start time). Readers
//!   ([`read_ledgers`], [`read_ledger`]) take no lock.
//! - A torn last line (a crash mid-write) is set aside by the next [`Ledger::open`]: its bytes
//!   are copied to `ledgers/<annotator>.jsonl.torn-<n>` and fsync'd, only then is the ledger cut
//!   back to its last whole line; the [`OpenReport`] says so. Intact records are not touched.

pub mod batch;
mod batch_file;
mod error;
pub mod fingerprint;
mod lock;
mod read;
mod record;
mod standing;
mod store;
mod time;

pub use batch::{Batch, BatchError, BatchItem, BatchLine, BatchReport, UnfinishedBatch};
pub use batch_file::{BATCH_FIELDS, MAX_BATCH_BYTES, read_batch};
pub use error::{LedgerError, LedgerProblem};
pub use fingerprint::{fingerprint, fingerprint_matches, fingerprint_v1};
pub use read::{
    AnnotatorLedger, FileStamp, SkippedEntry, ledger_path, ledger_stamps, parse_ledger,
    read_ledger, read_ledgers, sha256_hex, skipped_entries,
};
pub use record::{ActionValue, Correction, Entry, Record, Retraction, Verdict};
#[cfg(test)]
pub(crate) use standing::kit as standing_kit;
pub use standing::{last_standing, retracted, standing, standing_of};
pub use store::{Ledger, OpenReport, SetAside};
pub use time::utc_timestamp;

/// Largest ledger file read or opened: about two million corrections, far more than years of
/// review by one person; a larger file is refused before it is read into memory.
pub const MAX_LEDGER_BYTES: u64 = 1 << 30;

/// Refuses a file longer than [`MAX_LEDGER_BYTES`].
pub(crate) fn check_ledger_size(path: &std::path::Path, len: u64) -> Result<(), LedgerError> {
    if len > MAX_LEDGER_BYTES {
        return Err(LedgerError::TooLarge {
            path: path.to_path_buf(),
            len,
            max: MAX_LEDGER_BYTES,
        });
    }
    Ok(())
}

/// Checks an annotator name: 1 to 64 characters of letters, digits, `_`, `-` and `.`, not
/// starting with `.` (the name becomes a file name).
pub fn check_annotator(name: &str) -> Result<(), LedgerError> {
    let bad = |reason: &str| {
        Err(LedgerError::BadAnnotator {
            name: name.to_string(),
            reason: reason.to_string(),
        })
    };
    if name.is_empty() || name.chars().count() > 64 {
        return bad("needs 1 to 64 characters");
    }
    if name.starts_with('.') {
        return bad("must not start with `.`");
    }
    if !name
        .chars()
        .all(|c| c.is_alphanumeric() || matches!(c, '_' | '-' | '.'))
    {
        return bad("may hold only letters, digits, `_`, `-` and `.`");
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn annotator_names_that_would_escape_the_folder_are_refused() {
        assert!(check_annotator("ana").is_ok());
        assert!(check_annotator("rover-ops_2.b").is_ok());
        for bad in ["", "../x", "a/b", ".hidden", "a b", &"x".repeat(65)] {
            assert!(check_annotator(bad).is_err(), "{bad}");
        }
    }
}

#[cfg(test)]
mod store_tests;
