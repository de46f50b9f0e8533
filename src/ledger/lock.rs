//! The exclusive advisory lock that makes one process at a time the writer of a ledger.
//!
//! The lock is `std::fs::File::try_lock` (an `flock` on Unix) on a side file
//! `ledgers/<annotator>.lock`; the operating system releases it when the holder exits, even
//! when it is killed. The holder writes its pid, host and start time into the file so that a
//! refused writer can say who holds it. The lock file is opened without following a link
//! and must be a regular file: a link or a device under its name is refused, never written.

use std::fs::{File, OpenOptions, TryLockError};
use std::io::{Read, Seek, Write};
use std::path::Path;
use std::time::Duration;

use super::error::LedgerError;
use super::time::utc_timestamp;
use crate::durable::{host_name, is_link_error, open_nofollow};

/// How long a refused writer keeps trying before it reports who holds the lock.
const GRACE: Duration = Duration::from_millis(250);
const POLL: Duration = Duration::from_millis(10);

/// Takes the lock or says who holds it. The returned file holds the lock until dropped.
pub(crate) fn acquire(lock_path: &Path, ledger_path: &Path) -> Result<File, LedgerError> {
    let mut opts = OpenOptions::new();
    opts.read(true).write(true).create(true).truncate(false);
    let mut f = open_nofollow(&mut opts, lock_path).map_err(|e| {
        if is_link_error(&e) {
            LedgerError::IsLink {
                path: lock_path.to_path_buf(),
            }
        } else {
            LedgerError::io(lock_path)(e)
        }
    })?;
    if !f
        .metadata()
        .map_err(LedgerError::io(lock_path))?
        .file_type()
        .is_file()
    {
        return Err(LedgerError::NotAFile {
            path: lock_path.to_path_buf(),
        });
    }
    // A lock can stay held for an instant after its holder let it go: a process being
    // started holds a copy of every open file between fork and exec, and an `flock` lives
    // as long as any copy. A refusal is therefore only final after a short wait.
    let mut waited = Duration::ZERO;
    loop {
        match f.try_lock() {
            Ok(()) => break,
            Err(TryLockError::WouldBlock) if waited < GRACE => {
                std::thread::sleep(POLL);
                waited += POLL;
            }
            Err(TryLockError::WouldBlock) => {
                return Err(LedgerError::Locked {
                    path: ledger_path.to_path_buf(),
                    holder: holder_of(&mut f),
                });
            }
            Err(TryLockError::Error(e)) => return Err(LedgerError::io(lock_path)(e)),
        }
    }
    let me = format!(
        "pid {} on host {} since {}",
        std::process::id(),
        host_name(),
        utc_timestamp()
    );
    let write = |f: &mut File| -> std::io::Result<()> {
        f.set_len(0)?;
        f.rewind()?;
        f.write_all(me.as_bytes())?;
        f.sync_data()
    };
    write(&mut f).map_err(LedgerError::io(lock_path))?;
    Ok(f)
}

fn holder_of(f: &mut File) -> String {
    let mut s = String::new();
    match f.read_to_string(&mut s) {
        Ok(_) if !s.trim().is_empty() => s.trim().to_string(),
        _ => "another process, which has not said who it is yet".into(),
    }
}
