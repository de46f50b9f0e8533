//! Where a merged set may be written: anywhere but into the campaign's own data.
//!
//! An export target is refused when it lies in `campaign.json`, `demonstrations/`, `rounds/`,
//! `ledgers/` or `analysis/` of the campaign it exports (seen both as written and with every
//! link resolved), or when it exists and is not a regular file (a link, a device node, a fifo,
//! a folder). A target under the campaign's `exports/` is allowed; that folder (and any folder
//! under it) must then be a real folder, not a link out of the campaign.

use std::io;
use std::path::{Component, Path, PathBuf};

use crate::campaign::folder::{CAMPAIGN_FILE, DEMONSTRATIONS_DIR, LEDGERS_DIR, ROUNDS_DIR};
use crate::durable;
use crate::novelty::store::ANALYSIS_DIR;

/// Names at the top of a campaign folder that hold its data and are never export targets.
const DATA_NAMES: [&str; 5] = [
    CAMPAIGN_FILE,
    DEMONSTRATIONS_DIR,
    ROUNDS_DIR,
    LEDGERS_DIR,
    ANALYSIS_DIR,
];

/// Checks that `out` may receive a merged set of the campaign at `root` and creates its
/// folder; see the module documentation.
pub fn prepare(root: &Path, out: &Path) -> io::Result<()> {
    let out_abs = normalized(&std::path::absolute(out)?);
    let root_abs = normalized(&std::path::absolute(root)?);
    let inside = out_abs.strip_prefix(&root_abs).ok().map(Path::to_path_buf);
    if let Some(rel) = &inside {
        check_rel(out, rel)?;
    }
    if let Ok(real_root) = root.canonicalize() {
        let resolved = resolved(&out_abs)?;
        if let Ok(rel) = resolved.strip_prefix(&real_root) {
            check_rel(out, rel)?;
        }
    }
    durable::check_target(out)?;
    match inside.as_deref().and_then(Path::parent) {
        Some(rel_dir) => durable::real_dir(&root_abs, rel_dir).map(drop),
        None => std::fs::create_dir_all(durable::parent_of(&out_abs)),
    }
}

fn check_rel(out: &Path, rel: &Path) -> io::Result<()> {
    let first = rel.components().next();
    let refused = match first {
        None => Some("the campaign folder itself".to_string()),
        Some(c) => DATA_NAMES
            .iter()
            .find(|n| c.as_os_str() == **n)
            .map(|n| format!("the campaign's `{n}`")),
    };
    match refused {
        Some(what) => Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            format!(
                "{} is inside {what}; an export never writes into the campaign's data. \
                 Write it to `exports/` or outside the campaign",
                out.display()
            ),
        )),
        None => Ok(()),
    }
}

/// An absolute path with `.` and `..` removed by name (no link is followed).
fn normalized(p: &Path) -> PathBuf {
    let mut out = PathBuf::new();
    for c in p.components() {
        match c {
            Component::ParentDir => {
                out.pop();
            }
            Component::CurDir => {}
            other => out.push(other.as_os_str()),
        }
    }
    out
}

/// `path` with every link in its folders resolved: the nearest existing folder above the
/// file, canonicalized, with the rest of the path appended (the last component is not
/// resolved: a link there is refused as a non-regular target).
fn resolved(path: &Path) -> io::Result<PathBuf> {
    let mut tail = Vec::new();
    let mut dir = durable::parent_of(path).to_path_buf();
    tail.push(path.file_name().unwrap_or_default().to_os_string());
    loop {
        match dir.canonicalize() {
            Ok(real) => {
                let mut p = real;
                p.extend(tail.iter().rev());
                return Ok(p);
            }
            Err(e) if e.kind() == io::ErrorKind::NotFound => {
                let Some(name) = dir.file_name() else {
                    return Err(e);
                };
                tail.push(name.to_os_string());
                dir = durable::parent_of(&dir).to_path_buf();
            }
            Err(e) => return Err(e),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn normalizing_removes_dots_by_name() {
        assert_eq!(
            normalized(Path::new("/c/exports/../ledgers/./a.jsonl")),
            PathBuf::from("/c/ledgers/a.jsonl")
        );
    }

    #[test]
    fn data_folders_are_refused_and_exports_allowed() {
        let out = Path::new("x");
        for bad in [
            "campaign.json",
            "ledgers/a.jsonl",
            "rounds/1/x.csv",
            "analysis/1/s.npz",
            "",
        ] {
            assert!(check_rel(out, Path::new(bad)).is_err(), "{bad}");
        }
        assert!(check_rel(out, Path::new("exports/m.jsonl")).is_ok());
        assert!(check_rel(out, Path::new("merged.csv")).is_ok());
    }
}
