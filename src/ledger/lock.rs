//! The exclusive advisory lock that makes one process at a time the writer of a ledger.
//!
//! The lock is `std::fs::File::try_lock` (an `flock` on Unix) on a side file
//! `ledgers/<annotator>.lock`; the operating system releases it when the holder exits, even
//! when it is killed. The holder writes its pid, host and start time into the file so that a
//! refused writer can say who holds it.

use std::fs::{File, OpenOptions, TryLockError};
use std::io::{Read, Seek, Write};
use std::path::Path;

use super::error::LedgerError;
use super::time::utc_timestamp;

/// Takes the lock or says who holds it. The returned file holds the lock until dropped.
pub(crate) fn acquire(lock_path: &Path, ledger_path: &Path) -> Result<File, LedgerError> {
    let mut f = OpenOptions::new()
        .read(true)
        .write(true)
        .create(true)
        .truncate(false)
        .open(lock_path)
        .map_err(LedgerError::io(lock_path))?;
    match f.try_lock() {
        Ok(()) => {}
        Err(TryLockError::WouldBlock) => {
            return Err(LedgerError::Locked {
                path: ledger_path.to_path_buf(),
                holder: holder_of(&mut f),
            });
        }
        Err(TryLockError::Error(e)) => return Err(LedgerError::io(lock_path)(e)),
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

/// This machine's host name, as the kernel reports it.
pub(crate) fn host_name() -> String {
    std::fs::read_to_string("/proc/sys/kernel/hostname")
        .ok()
        .or_else(|| std::env::var("HOSTNAME").ok())
        .or_else(|| std::env::var("COMPUTERNAME").ok())
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .unwrap_or_else(|| "unknown".into())
}
