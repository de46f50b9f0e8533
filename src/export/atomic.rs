//! Atomic file writes: a temporary file in the same folder, fsync, rename, fsync the folder.
//! A write that fails or is cancelled removes its temporary file and never touches the
//! final name.

use std::fs::File;
use std::io::{self, BufWriter};
use std::path::{Path, PathBuf};

/// A file being written under a temporary name beside its final one.
pub(crate) struct Staged {
    temp: PathBuf,
    target: PathBuf,
    done: bool,
}

impl Staged {
    /// Writes the contents with `fill`, then fsyncs; the final name is not touched yet.
    pub fn write(
        target: &Path,
        fill: impl FnOnce(&mut BufWriter<File>) -> io::Result<()>,
    ) -> io::Result<Staged> {
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let temp = target.with_file_name(format!(".{name}.partial-{}", std::process::id()));
        let staged = Staged {
            temp,
            target: target.to_path_buf(),
            done: false,
        };
        let mut w = BufWriter::new(File::create(&staged.temp)?);
        fill(&mut w)?;
        let f = w.into_inner().map_err(|e| e.into_error())?;
        f.sync_all()?;
        Ok(staged)
    }

    /// The temporary file (for hashing what was written).
    pub fn temp_path(&self) -> &Path {
        &self.temp
    }

    /// Renames the temporary file to its final name and makes the rename durable.
    pub fn commit(mut self) -> io::Result<()> {
        std::fs::rename(&self.temp, &self.target)?;
        self.done = true;
        sync_parent(&self.target)
    }
}

impl Drop for Staged {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_file(&self.temp);
        }
    }
}

fn sync_parent(path: &Path) -> io::Result<()> {
    #[cfg(unix)]
    if let Some(dir) = path.parent() {
        let dir = if dir.as_os_str().is_empty() {
            Path::new(".")
        } else {
            dir
        };
        File::open(dir)?.sync_all()?;
    }
    #[cfg(not(unix))]
    let _ = path;
    Ok(())
}
