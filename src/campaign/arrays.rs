//! Steps handed over as arrays (from numpy, a training loop, a fleet's logs), checked and
//! saved as a round file that every reader of the campaign reads.
//!
//! The arrays are written as the campaign's `.npz` step format (`states`, `actions`,
//! `episode`, `t`, optional `intervention`; see [`super::write::write_npz`]) and those very
//! bytes are read back by the campaign's own `.npz` reader before anything touches the
//! disk: the checks (finite states, actions within bounds, one `t` per episode and step,
//! episodes not interleaved) and their located problems (record and field) are the loader's,
//! and the file saved is one the loader has already accepted.

use std::io::Cursor;
use std::path::{Path, PathBuf};

use super::error::{CampaignError, ProblemLog, Severity};
use super::npz::NpzWriter;
use super::numpy::{NpzSource, read_numpy};
use super::spec::Spec;
use super::steps::{StepTable, StepTableBuilder};
use super::validate::RowChecker;
use crate::progress::Progress;

/// Steps as arrays, row by row in file order.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StepArrays {
    /// Episode name of each row.
    pub episode: Vec<String>,
    /// Time index of each row.
    pub t: Vec<i64>,
    /// Row-major states, `state_dim` values a row.
    pub states: Vec<f32>,
    /// Row-major actions, `action_dim` values a row (choice indices for discrete channels).
    pub actions: Vec<f32>,
    /// Intervention flag of each row, when known.
    pub intervention: Option<Vec<bool>>,
}

/// The `.npz` bytes of step arrays (the campaign's step format).
pub fn npz_bytes(a: &StepArrays, spec: &Spec) -> std::io::Result<Vec<u8>> {
    let n = a.t.len() as u64;
    let (d, c) = (spec.state_dim() as u64, spec.action_dim() as u64);
    let mut npz = NpzWriter::new(Cursor::new(Vec::new()));
    npz.numbers("states", &[n, d], a.states.iter().copied())?;
    npz.numbers("actions", &[n, c], a.actions.iter().copied())?;
    npz.strings("episode", a.episode.iter().map(String::as_str))?;
    npz.numbers("t", &[n], a.t.iter().copied())?;
    if let Some(flags) = &a.intervention {
        npz.numbers("intervention", &[n], flags.iter().copied())?;
    }
    Ok(npz.finish()?.into_inner())
}

fn invalid(rel: &Path, field: &str, message: String) -> CampaignError {
    let mut log = ProblemLog::new(rel, 1);
    log.error(
        super::ProblemKind::Unreadable,
        super::Location::File,
        field,
        message,
    );
    let (problems, more) = log.finish();
    CampaignError::Invalid { problems, more }
}

/// Checks step arrays as the loader checks a file `rel` (relative to the campaign folder) and
/// returns the table and the file's bytes; every problem is located by record and field.
pub fn check_arrays(
    a: &StepArrays,
    spec: &Spec,
    rel: &Path,
) -> Result<(StepTable, Vec<u8>), CampaignError> {
    let n = a.t.len();
    let lengths = [
        ("episode", a.episode.len(), n),
        ("states", a.states.len(), n * spec.state_dim()),
        ("actions", a.actions.len(), n * spec.action_dim()),
        (
            "intervention",
            a.intervention.as_ref().map_or(n, Vec::len),
            n,
        ),
    ];
    if let Some((field, got, want)) = lengths.iter().find(|(_, g, w)| g != w) {
        let msg = format!("{got} values for {n} steps; expected {want}");
        return Err(invalid(rel, field, msg));
    }
    let bytes = npz_bytes(a, spec).map_err(|e| invalid(rel, "", e.to_string()))?;
    let mut src =
        NpzSource::new(Cursor::new(&bytes[..])).map_err(|e| invalid(rel, "", e.to_string()))?;
    let mut checker = RowChecker::new(spec);
    let mut b = StepTableBuilder::new(spec.state_dim(), spec.action_dim());
    b.begin_source(rel.to_path_buf());
    let mut log = ProblemLog::new(rel, 50);
    let dir = rel.parent().unwrap_or(Path::new(""));
    read_numpy(
        &mut src,
        dir,
        &mut checker,
        &mut b,
        &mut log,
        &Progress::new(),
    );
    let (problems, more) = log.finish();
    if problems.iter().any(|p| p.severity == Severity::Error) {
        return Err(CampaignError::Invalid { problems, more });
    }
    Ok((b.finish(), bytes))
}

/// Saves step arrays as `rounds/<round>/<name>.npz` of the campaign at `root` after checking
/// them ([`check_arrays`]); written through [`crate::durable`] (beside its name, fsync'd,
/// renamed), so a reader never sees half a file. An existing file is never replaced: a round
/// only gains files. Returns the path.
pub fn save_round_arrays(
    root: &Path,
    round: u32,
    name: &str,
    a: &StepArrays,
    spec: &Spec,
) -> Result<PathBuf, CampaignError> {
    let ok = !name.is_empty()
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
        && !name.starts_with('.');
    let rel = Path::new("rounds")
        .join(round.to_string())
        .join(format!("{name}.npz"));
    if !ok {
        let msg = format!("file name `{name}`: use letters, digits, `-`, `_` and `.`");
        return Err(invalid(&rel, "name", msg));
    }
    let (_, bytes) = check_arrays(a, spec, &rel)?;
    let path = root.join(&rel);
    let folder = |path: &Path, e: std::io::Error| CampaignError::Folder {
        path: path.to_path_buf(),
        message: e.to_string(),
    };
    let dir = rel.parent().unwrap_or(Path::new(""));
    crate::durable::real_dir(root, dir).map_err(|e| folder(&root.join(dir), e))?;
    if std::fs::symlink_metadata(&path).is_ok() {
        return Err(CampaignError::Folder {
            path,
            message: "already exists; a saved round file is never replaced".into(),
        });
    }
    crate::durable::write_bytes(&path, &bytes).map_err(|e| folder(&path, e))?;
    Ok(path)
}
