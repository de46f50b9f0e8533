//! Durable file writing: the one way countersteer writes a file.
//!
//! Every file the project writes (saved scores, review lists, merged sets and their manifests,
//! the demo campaign, study outputs) goes through [`Staged`] or [`write_file`]:
//!
//! 1. the final name, when it exists, must be a regular file: a link, a device node, a fifo or
//!    a folder under that name is refused, never written through or replaced;
//! 2. the contents go to a temporary sibling `.<name>.partial-<pid>-<n>-<host>` (unique per
//!    process, per call and per machine), created new and never through a link (`O_NOFOLLOW`);
//! 3. the temporary file is fsync'd, renamed over the final name, and the folder is fsync'd,
//!    so the new name survives a power cut; a reader sees the old file or the new one, never
//!    half of one;
//! 4. a write that fails or is dropped removes its temporary file; temporary files of
//!    processes of this machine that no longer run (a kill, a power cut) are removed when a
//!    process first writes into the same folder. Only names of this exact pattern are ever
//!    removed.
//!
//! [`real_dir`] creates the campaign's own folders (`ledgers/`, `analysis/<n>/`, `exports/`)
//! and refuses any of them that is a link or not a folder, so that nothing is written outside
//! the campaign through a link. [`open_nofollow`] opens any other file the project writes
//! (ledgers, their locks) without following a link in its last component.

use std::fs::{File, OpenOptions};
use std::io::{self, BufWriter};
use std::path::{Component, Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// The marker between a file's name and the temporary file's suffix.
const PARTIAL: &str = ".partial-";

/// Counter that makes temporary names unique per call within a process.
static NEXT_TEMP: AtomicU64 = AtomicU64::new(0);

/// A file being written under a temporary name beside its final one.
#[derive(Debug)]
pub struct Staged {
    temp: PathBuf,
    target: PathBuf,
    done: bool,
}

impl Staged {
    /// Writes the contents with `fill` into a new temporary sibling of `target`, then
    /// fsyncs it; the final name is not touched yet. Refuses a `target` that exists and is
    /// not a regular file.
    pub fn write(
        target: &Path,
        fill: impl FnOnce(&mut BufWriter<File>) -> io::Result<()>,
    ) -> io::Result<Staged> {
        check_target(target)?;
        clean_once(parent_of(target));
        let (file, temp) = create_temp(target)?;
        let staged = Staged {
            temp,
            target: target.to_path_buf(),
            done: false,
        };
        let mut w = BufWriter::new(file);
        fill(&mut w)?;
        let f = w.into_inner().map_err(|e| e.into_error())?;
        f.sync_all()?;
        Ok(staged)
    }

    /// The temporary file (for hashing what was written).
    pub fn temp_path(&self) -> &Path {
        &self.temp
    }

    /// The final name.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Renames the temporary file to its final name and makes the rename durable.
    pub fn commit(mut self) -> io::Result<()> {
        check_target(&self.target)?;
        std::fs::rename(&self.temp, &self.target)?;
        self.done = true;
        sync_dir(parent_of(&self.target))
    }
}

impl Drop for Staged {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_file(&self.temp);
        }
    }
}

/// Writes a whole file durably (see the module documentation).
pub fn write_file(
    target: &Path,
    fill: impl FnOnce(&mut BufWriter<File>) -> io::Result<()>,
) -> io::Result<()> {
    Staged::write(target, fill)?.commit()
}

/// Writes bytes to a file durably.
pub fn write_bytes(target: &Path, bytes: &[u8]) -> io::Result<()> {
    write_file(target, |w| io::Write::write_all(w, bytes))
}

/// Opens a file with `opts` without following a link in its last component: a link there
/// fails (`ELOOP` on Linux) instead of reaching the file it points to.
pub fn open_nofollow(opts: &mut OpenOptions, path: &Path) -> io::Result<File> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        opts.custom_flags(libc::O_NOFOLLOW | libc::O_CLOEXEC);
    }
    opts.open(path)
}

/// True when an error from [`open_nofollow`] means the name is a link.
pub fn is_link_error(e: &io::Error) -> bool {
    #[cfg(unix)]
    {
        e.raw_os_error() == Some(libc::ELOOP)
    }
    #[cfg(not(unix))]
    {
        let _ = e;
        false
    }
}

/// Refuses a name that exists and is not a regular file (a link, a device node, a fifo, a
/// folder, a socket): such a name is never written through or replaced.
pub fn check_target(target: &Path) -> io::Result<()> {
    match std::fs::symlink_metadata(target) {
        Ok(m) if m.file_type().is_file() => Ok(()),
        Ok(m) => Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            format!(
                "{} is {}, not a regular file; countersteer writes only regular files and \
                 never replaces anything else",
                target.display(),
                kind_name(&m.file_type())
            ),
        )),
        Err(e) if e.kind() == io::ErrorKind::NotFound => Ok(()),
        Err(e) => Err(e),
    }
}

fn kind_name(t: &std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if t.is_block_device() || t.is_char_device() {
            return "a device";
        }
        if t.is_fifo() {
            return "a fifo";
        }
        if t.is_socket() {
            return "a socket";
        }
    }
    if t.is_symlink() {
        "a link"
    } else if t.is_dir() {
        "a folder"
    } else {
        "not a regular file"
    }
}

/// The folder a file lives in (`.` for a bare name).
pub fn parent_of(path: &Path) -> &Path {
    match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    }
}

/// Makes a folder's entries durable (a new or renamed name survives a power cut).
pub fn sync_dir(dir: &Path) -> io::Result<()> {
    #[cfg(unix)]
    File::open(dir)?.sync_all()?;
    #[cfg(not(unix))]
    let _ = dir;
    Ok(())
}

/// Creates `root/rel` folder by folder and checks that each one is a real folder, not a
/// link (which could lead outside the campaign) and not a file. `rel` must be relative and
/// free of `..`. Returns `root/rel`.
pub fn real_dir(root: &Path, rel: &Path) -> io::Result<PathBuf> {
    let mut p = root.to_path_buf();
    for c in rel.components() {
        let Component::Normal(name) = c else {
            return Err(io::Error::new(
                io::ErrorKind::InvalidInput,
                format!("{} is not a plain folder path", rel.display()),
            ));
        };
        p.push(name);
        match std::fs::symlink_metadata(&p) {
            Ok(m) if m.file_type().is_dir() => continue,
            Ok(m) => return Err(not_a_folder(&p, &m.file_type())),
            Err(e) if e.kind() == io::ErrorKind::NotFound => {}
            Err(e) => return Err(e),
        }
        match std::fs::create_dir(&p) {
            Ok(()) => sync_dir(parent_of(&p))?,
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {
                let m = std::fs::symlink_metadata(&p)?;
                if !m.file_type().is_dir() {
                    return Err(not_a_folder(&p, &m.file_type()));
                }
            }
            Err(e) => return Err(e),
        }
    }
    Ok(p)
}

fn not_a_folder(p: &Path, t: &std::fs::FileType) -> io::Error {
    io::Error::new(
        io::ErrorKind::InvalidInput,
        format!(
            "{} is {}, not a folder; countersteer writes only into real folders inside the \
             campaign, never through a link",
            p.display(),
            kind_name(t)
        ),
    )
}

/// A short, stable tag of this machine's host name, so that a process on another machine
/// sharing the folder never has its temporary files taken for a dead process's.
fn host_tag() -> String {
    // FNV-1a, 32 bits (Fowler, Noll and Vo): a stable hash with no dependency.
    let mut h: u32 = 0x811c_9dc5;
    for b in host_name().bytes() {
        h = (h ^ u32::from(b)).wrapping_mul(0x0100_0193);
    }
    format!("{h:08x}")
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

/// The temporary name of the `n`-th write of process `pid` of this machine to `target`:
/// `.<name>.partial-<pid>-<n>-<host>` beside it.
pub fn temp_path(target: &Path, pid: u32, n: u64) -> PathBuf {
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    target.with_file_name(format!(".{name}{PARTIAL}{pid}-{n}-{}", host_tag()))
}

fn create_temp(target: &Path) -> io::Result<(File, PathBuf)> {
    loop {
        let n = NEXT_TEMP.fetch_add(1, Ordering::Relaxed);
        let temp = temp_path(target, std::process::id(), n);
        let mut opts = OpenOptions::new();
        opts.write(true).read(true).create_new(true);
        match open_nofollow(&mut opts, &temp) {
            Ok(f) => return Ok((f, temp)),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(e),
        }
    }
}

/// Who wrote a temporary file, read from its name.
#[derive(Debug, PartialEq)]
enum TempOwner {
    /// A current name: the writer's pid and host tag.
    Current { pid: u32, host: String },
    /// The older `.<name>.partial-<pid>` form, without a host.
    Legacy { pid: u32 },
}

fn temp_owner(file_name: &str) -> Option<TempOwner> {
    let rest = file_name.strip_prefix('.')?;
    let at = rest.rfind(PARTIAL)?;
    if at == 0 {
        return None;
    }
    let suffix = &rest[at + PARTIAL.len()..];
    let parts: Vec<&str> = suffix.split('-').collect();
    let digits = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    match parts.as_slice() {
        [pid] if digits(pid) => Some(TempOwner::Legacy {
            pid: pid.parse().ok()?,
        }),
        [pid, n, host] if digits(pid) && digits(n) && host.len() == 8 => Some(TempOwner::Current {
            pid: pid.parse().ok()?,
            host: (*host).to_string(),
        }),
        _ => None,
    }
}

/// True for a temporary name of this writer (`.<name>.partial-<pid>...`).
pub fn is_temp_name(file_name: &str) -> bool {
    temp_owner(file_name).is_some()
}

/// Whether a process with this pid runs on this machine; `None` when it cannot be told.
fn process_alive(pid: u32) -> Option<bool> {
    if pid == std::process::id() {
        return Some(true);
    }
    let proc_fs = Path::new("/proc/self");
    if !proc_fs.exists() {
        return None;
    }
    Some(Path::new("/proc").join(pid.to_string()).exists())
}

/// Age after which a temporary file of the older form (no host in its name) whose pid does
/// not run here is taken as left by a dead process.
const LEGACY_TEMP_AGE: std::time::Duration = std::time::Duration::from_secs(3600);

fn is_stale(path: &Path, owner: &TempOwner) -> bool {
    match owner {
        TempOwner::Current { pid, host } => {
            *host == host_tag() && process_alive(*pid) == Some(false)
        }
        TempOwner::Legacy { pid } => {
            let old = std::fs::symlink_metadata(path)
                .and_then(|m| m.modified())
                .ok()
                .and_then(|t| t.elapsed().ok())
                .is_some_and(|age| age > LEGACY_TEMP_AGE);
            old && process_alive(*pid) == Some(false)
        }
    }
}

/// Folders this process has already cleaned of stale temporary files.
static CLEANED: std::sync::Mutex<Vec<PathBuf>> = std::sync::Mutex::new(Vec::new());

/// Runs [`remove_stale_temps`] on a folder the first time this process writes into it (a
/// folder of many files, such as frames, is listed once, not once per file).
fn clean_once(dir: &Path) {
    let first = match CLEANED.lock() {
        Ok(mut seen) if !seen.iter().any(|d| d == dir) => {
            seen.push(dir.to_path_buf());
            true
        }
        Ok(_) => false,
        Err(_) => true,
    };
    if first {
        remove_stale_temps(dir);
    }
}

/// Removes, from `dir`, the temporary files (our own `.<name>.partial-<pid>...` names, plain
/// files only) left by processes of this machine that no longer run. Returns how many were
/// removed; a folder that cannot be listed removes none.
pub fn remove_stale_temps(dir: &Path) -> usize {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return 0;
    };
    let mut removed = 0;
    for e in entries.flatten() {
        let name = e.file_name();
        let Some(owner) = name.to_str().and_then(temp_owner) else {
            continue;
        };
        let path = e.path();
        if e.file_type().is_ok_and(|t| t.is_file())
            && is_stale(&path, &owner)
            && std::fs::remove_file(&path).is_ok()
        {
            removed += 1;
        }
    }
    removed
}

#[cfg(test)]
mod tests;
