//! Keeping every read inside the campaign folder: a path is resolved with its links followed
//! and refused when the result lies outside the (resolved) campaign folder.
//!
//! Campaign folders travel between machines; a link inside one may point anywhere on the
//! machine that opens it (`rounds/1/steps.jsonl -> /home/someone/.ssh/id_ed25519`). Links that
//! stay inside the folder are followed; links that leave it are refused with an error.

use std::fmt;
use std::path::{Path, PathBuf};

/// Why a path was refused.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Refused {
    /// Nothing exists at the path (or a link in it is dangling).
    Missing,
    /// The path resolves to this place outside the campaign folder.
    Outside(PathBuf),
    /// The path or the campaign folder could not be resolved.
    Unresolvable(String),
}

impl fmt::Display for Refused {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Refused::Missing => write!(f, "does not exist"),
            Refused::Outside(to) => write!(
                f,
                "is a link to `{}`, outside the campaign folder; links must stay inside it",
                to.display()
            ),
            Refused::Unresolvable(e) => write!(f, "cannot be resolved: {e}"),
        }
    }
}

/// A campaign folder, resolved once, that paths are checked against.
#[derive(Debug, Clone)]
pub struct Confinement {
    root: PathBuf,
    base: PathBuf,
}

impl Confinement {
    /// Resolves the campaign folder `root`.
    pub fn new(root: &Path) -> Result<Self, Refused> {
        let base = std::fs::canonicalize(root).map_err(|e| Refused::Unresolvable(e.to_string()))?;
        Ok(Confinement {
            root: root.to_path_buf(),
            base,
        })
    }

    /// Resolves `rel` (relative to the campaign folder) with links followed, and returns the
    /// resolved path when it lies inside the resolved campaign folder.
    pub fn resolve(&self, rel: &Path) -> Result<PathBuf, Refused> {
        let full = match std::fs::canonicalize(self.root.join(rel)) {
            Ok(p) => p,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Err(Refused::Missing),
            Err(e) => return Err(Refused::Unresolvable(e.to_string())),
        };
        if full.starts_with(&self.base) {
            Ok(full)
        } else {
            Err(Refused::Outside(full))
        }
    }
}

/// [`Confinement::resolve`] for one path.
pub fn confined(root: &Path, rel: &Path) -> Result<PathBuf, Refused> {
    Confinement::new(root)?.resolve(rel)
}

#[cfg(all(test, unix))]
mod tests {
    use super::*;

    #[test]
    fn links_inside_are_followed_and_links_outside_refused() {
        let outside = tempfile::tempdir().unwrap();
        let secret = outside.path().join("secret.txt");
        std::fs::write(&secret, "x").unwrap();
        let root = tempfile::tempdir().unwrap();
        let r = root.path();
        std::fs::write(r.join("a.jsonl"), "").unwrap();
        std::os::unix::fs::symlink(r.join("a.jsonl"), r.join("inside.jsonl")).unwrap();
        std::os::unix::fs::symlink(&secret, r.join("outside.jsonl")).unwrap();
        std::os::unix::fs::symlink(r.join("gone"), r.join("dangling.jsonl")).unwrap();
        assert!(confined(r, Path::new("inside.jsonl")).is_ok());
        assert!(confined(r, Path::new("a.jsonl")).is_ok());
        let e = confined(r, Path::new("outside.jsonl")).unwrap_err();
        assert!(matches!(e, Refused::Outside(_)), "{e}");
        assert!(e.to_string().contains("outside the campaign folder"));
        assert_eq!(
            confined(r, Path::new("dangling.jsonl")),
            Err(Refused::Missing)
        );
        assert_eq!(confined(r, Path::new("none.jsonl")), Err(Refused::Missing));
    }
}
