//! Saved scores: `analysis/<round>/scores.npz` in the campaign folder, shared by the command
//! line (`countersteer score`) and the desktop workbench.
//!
//! An uncompressed NumPy `.npz` archive (readable with `numpy.load`) holding, for `n` steps of
//! the round in table order (episodes in file order, steps by `t`):
//!
//! | array | dtype | shape | meaning |
//! | --- | --- | --- | --- |
//! | `episode` | unicode | (n,) | episode name |
//! | `t` | int64 | (n,) | time index |
//! | `novelty` | float32 | (n,) | distance to the k-th nearest demonstration state (scaled) |
//! | `p_value` | float32 | (n,) | conformal p-value |
//! | `flagged` | bool | (n,) | `p_value <= alpha` |
//! | `contributions` | float32 | (n, D) | per-feature share of the squared nearest distance |
//! | `action_gap` | float32 | (n,) | learner vs. neighbour consensus, range units |
//! | `neighbour_action` | float32 | (n, A) | the neighbours' consensus action |
//! | `neighbour_spread` | float32 | (n,) | the neighbours' spread, range units |
//! | `ensemble_spread` | float32 | (n,) | ensemble sample spread (NaN: no samples) |
//! | `neighbours` | uint32 | (n, k) | demonstration rows of the neighbours, nearest first |
//! | `threshold` | float32 | (1,) | novelty above which steps are flagged |
//! | `alpha` | float64 | (1,) | flag level |
//! | `scale` | float32 | (D,) | per-feature scales of the novelty distance |
//! | `model_fingerprint` | unicode | (1,) | the novelty model's inputs ([`digest::model_fingerprint`]) |
//! | `data_fingerprint` | unicode | (1,) | the round's data ([`digest::data_fingerprint`]) |
//! | `checksum` | unicode | (1,) | SHA-256 (16 hex digits) of both fingerprints and every array above |
//!
//! Scores are derived data: scoring again replaces the file through [`crate::durable`]
//! (written under a temporary name unique to the writer, fsync'd, then renamed), so a reader
//! never sees half a file and concurrent scorers never share a temporary file; the last
//! rename wins. Nothing the experts entered lives here. Whether saved scores may stand in for
//! scoring again is decided in one place, [`reusable_scores`]: only when both fingerprints
//! match the campaign as it is now and the checksum (and every zip member's CRC-32) holds.

use std::io::{Read, Seek, Write};
use std::path::{Path, PathBuf};

use crate::campaign::npz::NpzWriter;

use sha2::{Digest, Sha256};

use super::NoveltyError;
use super::digest;
use super::score::RoundScores;
use crate::campaign::numpy::{Array, ArraySource, NpzSource, Values};
use crate::campaign::{Campaign, StepTable};

/// Folder of derived per-round files.
pub const ANALYSIS_DIR: &str = "analysis";
/// File name of a round's scores.
pub const SCORES_FILE: &str = "scores.npz";

/// `analysis/<round>/` of a campaign.
pub fn round_dir(root: &Path, round: u32) -> PathBuf {
    root.join(ANALYSIS_DIR).join(round.to_string())
}

/// `analysis/<round>/scores.npz` of a campaign.
pub fn scores_path(root: &Path, round: u32) -> PathBuf {
    round_dir(root, round).join(SCORES_FILE)
}

fn store_err(path: &Path, message: impl std::fmt::Display) -> NoveltyError {
    NoveltyError::Store {
        path: path.to_path_buf(),
        message: message.to_string(),
    }
}

/// Creates `analysis/<round>/` when missing and checks that it and `analysis/` are real
/// folders inside the campaign (not links out of it); returns it.
pub fn real_round_dir(root: &Path, round: u32) -> Result<PathBuf, NoveltyError> {
    let rel = Path::new(ANALYSIS_DIR).join(round.to_string());
    crate::durable::real_dir(root, &rel).map_err(|e| store_err(&root.join(&rel), e))
}

/// What saved scores must have been made from to be reused: the novelty model's inputs and
/// the round's data, as fingerprints.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ScoresKey {
    /// [`digest::model_fingerprint`] of the campaign.
    pub model: String,
    /// [`digest::data_fingerprint`] of the round's steps.
    pub data: String,
}

impl ScoresKey {
    /// The key of a round of a campaign as it is now.
    pub fn of(c: &Campaign, steps: &StepTable) -> ScoresKey {
        ScoresKey {
            model: digest::model_fingerprint(c),
            data: digest::data_fingerprint(steps),
        }
    }
}

/// Saves scores of `steps` to `analysis/<round>/scores.npz` with their key and checksum, and
/// returns the path.
pub fn save_scores(
    root: &Path,
    round: u32,
    steps: &StepTable,
    s: &RoundScores,
    key: &ScoresKey,
) -> Result<PathBuf, NoveltyError> {
    let path = real_round_dir(root, round)?.join(SCORES_FILE);
    crate::durable::write_file(&path, |w| write_npz(steps, s, key, w)).map_err(|e| {
        if is_full(&e) {
            store_err(
                &path,
                "not saved: the disk is full (or a file size limit was reached); the scores \
                 computed are lost, any earlier scores file is unchanged",
            )
        } else {
            store_err(&path, e)
        }
    })?;
    Ok(path)
}

/// Whether a write failed for want of space: no space left (`ENOSPC`) or a file size limit
/// (`EFBIG`, as `prlimit --fsize` gives).
fn is_full(e: &std::io::Error) -> bool {
    matches!(
        e.kind(),
        std::io::ErrorKind::StorageFull | std::io::ErrorKind::FileTooLarge
    )
}

fn put<T: npyz::AutoSerialize + Copy, W: Write + std::io::Seek>(
    npz: &mut NpzWriter<W>,
    name: &str,
    shape: &[u64],
    values: &[T],
) -> std::io::Result<()> {
    npz.numbers(name, shape, values.iter().copied())
}

/// Writes the scores archive (see the module documentation) to any seekable writer.
pub fn write_npz<W: Write + std::io::Seek>(
    steps: &StepTable,
    s: &RoundScores,
    key: &ScoresKey,
    w: W,
) -> std::io::Result<()> {
    let mut npz = NpzWriter::new(w);
    let n = s.len() as u64;
    crate::campaign::write::write_episode_names(&mut npz, steps)?;
    put(&mut npz, "t", &[n], &steps.t)?;
    put(&mut npz, "novelty", &[n], &s.novelty)?;
    put(&mut npz, "p_value", &[n], &s.p_value)?;
    put(&mut npz, "flagged", &[n], &s.flagged)?;
    put(
        &mut npz,
        "contributions",
        &[n, s.state_dim as u64],
        &s.contributions,
    )?;
    put(&mut npz, "action_gap", &[n], &s.action_gap)?;
    put(
        &mut npz,
        "neighbour_action",
        &[n, s.action_dim as u64],
        &s.neighbour_action,
    )?;
    put(&mut npz, "neighbour_spread", &[n], &s.neighbour_spread)?;
    put(&mut npz, "ensemble_spread", &[n], &s.ensemble_spread)?;
    put(&mut npz, "neighbours", &[n, s.k as u64], &s.neighbours)?;
    put(&mut npz, "threshold", &[1], &[s.threshold])?;
    put(&mut npz, "alpha", &[1], &[s.alpha])?;
    put(&mut npz, "scale", &[s.state_dim as u64], &s.scale)?;
    npz.strings("model_fingerprint", std::iter::once(key.model.as_str()))?;
    npz.strings("data_fingerprint", std::iter::once(key.data.as_str()))?;
    let sum = checksum(&steps.t, s, key);
    npz.strings("checksum", std::iter::once(sum.as_str()))?;
    npz.finish().map(drop)
}

/// SHA-256 (first 16 hex digits) of the key and every saved array, in the order of the
/// module documentation, each value little-endian (bools as one byte).
fn checksum(t: &[i64], s: &RoundScores, key: &ScoresKey) -> String {
    let mut h = Sha256::new();
    for part in [&key.model, &key.data] {
        h.update((part.len() as u64).to_le_bytes());
        h.update(part.as_bytes());
    }
    let floats = |h: &mut Sha256, v: &[f32]| {
        h.update((v.len() as u64).to_le_bytes());
        v.iter().for_each(|x| h.update(x.to_le_bytes()));
    };
    t.iter().for_each(|x| h.update(x.to_le_bytes()));
    floats(&mut h, &s.novelty);
    floats(&mut h, &s.p_value);
    h.update(s.flagged.iter().map(|&b| u8::from(b)).collect::<Vec<u8>>());
    floats(&mut h, &s.contributions);
    floats(&mut h, &s.action_gap);
    floats(&mut h, &s.neighbour_action);
    floats(&mut h, &s.neighbour_spread);
    floats(&mut h, &s.ensemble_spread);
    s.neighbours.iter().for_each(|x| h.update(x.to_le_bytes()));
    floats(&mut h, &[s.threshold]);
    h.update(s.alpha.to_le_bytes());
    floats(&mut h, &s.scale);
    h.finalize()[..8]
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

struct Reader<R: Read + Seek> {
    src: NpzSource<R>,
    path: PathBuf,
}

impl<R: Read + Seek> Reader<R> {
    fn array(&mut self, name: &str, shape: &[u64]) -> Result<Array, NoveltyError> {
        let a = self
            .src
            .array(name)
            .map_err(|e| store_err(&self.path, format!("array `{name}`: {e}")))?
            .ok_or_else(|| store_err(&self.path, format!("array `{name}` is missing")))?;
        if a.shape != shape {
            return Err(store_err(
                &self.path,
                format!(
                    "array `{name}` has shape {:?}, expected {shape:?}; score the round again",
                    a.shape
                ),
            ));
        }
        Ok(a)
    }

    fn floats(&mut self, name: &str, shape: &[u64]) -> Result<Vec<f64>, NoveltyError> {
        match self.array(name, shape)?.values {
            Values::Numbers(v) => Ok(v),
            Values::Integers(v) => Ok(v.into_iter().map(|x| x as f64).collect()),
            Values::Text(_) => Err(store_err(
                &self.path,
                format!("array `{name}` holds text, not numbers"),
            )),
        }
    }

    fn f32s(&mut self, name: &str, shape: &[u64]) -> Result<Vec<f32>, NoveltyError> {
        Ok(self
            .floats(name, shape)?
            .into_iter()
            .map(|x| x as f32)
            .collect())
    }

    fn text(&mut self, name: &str) -> Result<String, NoveltyError> {
        match self.array(name, &[1])?.values {
            Values::Text(mut v) => Ok(v.pop().unwrap_or_default()),
            _ => Err(store_err(
                &self.path,
                format!("array `{name}` holds numbers, not text"),
            )),
        }
    }
}

/// Loads saved scores of a round and the key they were saved with; refuses a file whose step
/// count or dimensions do not match `steps`, a file without a key (saved by an older
/// version), a member failing its CRC-32 and scores failing their checksum.
pub fn load_scores(
    root: &Path,
    round: u32,
    steps: &StepTable,
) -> Result<(RoundScores, ScoresKey), NoveltyError> {
    let path = scores_path(root, round);
    let src = NpzSource::open(&path).map_err(|e| store_err(&path, e))?;
    read_saved(Reader { src, path }, steps)
}

/// Like [`load_scores`], from the bytes of a scores archive in any seekable reader (errors
/// name the file `scores.npz`).
pub fn load_scores_from<R: Read + Seek>(
    r: R,
    steps: &StepTable,
) -> Result<(RoundScores, ScoresKey), NoveltyError> {
    let path = PathBuf::from(SCORES_FILE);
    let src = NpzSource::new(r).map_err(|e| store_err(&path, e))?;
    read_saved(Reader { src, path }, steps)
}

fn read_saved<R: Read + Seek>(
    mut r: Reader<R>,
    steps: &StepTable,
) -> Result<(RoundScores, ScoresKey), NoveltyError> {
    let scores = read_scores(&mut r, steps)?;
    if r.src
        .shape("checksum")
        .map_err(|e| store_err(&r.path, e))?
        .is_none()
    {
        return Err(store_err(
            &r.path,
            "no checksum or fingerprints (saved by an older version); score the round again",
        ));
    }
    let key = ScoresKey {
        model: r.text("model_fingerprint")?,
        data: r.text("data_fingerprint")?,
    };
    if r.text("checksum")? != checksum(&steps.t, &scores, &key) {
        return Err(store_err(
            &r.path,
            "the scores fail their checksum (the file was altered or damaged); score the round again",
        ));
    }
    Ok((scores, key))
}

/// Why saved scores cannot stand in for scoring the round again.
#[derive(Debug, thiserror::Error)]
pub enum NotReusable {
    /// The round was never scored (or its file was removed).
    #[error("no saved scores")]
    Missing,
    /// The file could not be read, or failed a CRC, its checksum or a shape check.
    #[error("saved scores not used: {0}")]
    Unreadable(NoveltyError),
    /// The novelty settings, spec or demonstrations changed since.
    #[error(
        "saved scores not used: they were made with other novelty settings, spec or demonstrations"
    )]
    ModelChanged,
    /// The round's data changed since.
    #[error("saved scores not used: the round's data changed since it was scored")]
    DataChanged,
}

/// The one reuse rule for saved scores (the command line and the window both call it): the
/// saved scores of `round` when they were made by the campaign's novelty model as it is now
/// ([`ScoresKey::model`]) over the round's data as it is now ([`ScoresKey::data`]) and pass
/// every integrity check; otherwise the reason they cannot be reused.
pub fn reusable_scores(
    c: &Campaign,
    round: u32,
    steps: &StepTable,
) -> Result<RoundScores, NotReusable> {
    if !scores_path(&c.root, round).is_file() {
        return Err(NotReusable::Missing);
    }
    let (scores, saved) = load_scores(&c.root, round, steps).map_err(NotReusable::Unreadable)?;
    let now = ScoresKey::of(c, steps);
    if saved.model != now.model {
        return Err(NotReusable::ModelChanged);
    }
    if saved.data != now.data {
        return Err(NotReusable::DataChanged);
    }
    Ok(scores)
}

fn read_scores<R: Read + Seek>(
    r: &mut Reader<R>,
    steps: &StepTable,
) -> Result<RoundScores, NoveltyError> {
    let n = steps.len() as u64;
    let (d, a) = (steps.state_dim as u64, steps.action_dim as u64);
    let t = r.floats("t", &[n])?;
    if t.iter().zip(&steps.t).any(|(x, y)| *x as i64 != *y) {
        return Err(store_err(
            &r.path,
            "array `t` does not match the round's steps; score the round again",
        ));
    }
    let nb = r
        .src
        .array("neighbours")
        .map_err(|e| store_err(&r.path, e))?;
    let k = nb
        .as_ref()
        .and_then(|a| a.shape.get(1).copied())
        .unwrap_or(0);
    Ok(RoundScores {
        state_dim: d as usize,
        action_dim: a as usize,
        k: k as usize,
        novelty: r.f32s("novelty", &[n])?,
        p_value: r.f32s("p_value", &[n])?,
        flagged: r
            .floats("flagged", &[n])?
            .into_iter()
            .map(|x| x != 0.0)
            .collect(),
        contributions: r.f32s("contributions", &[n, d])?,
        action_gap: r.f32s("action_gap", &[n])?,
        neighbour_action: r.f32s("neighbour_action", &[n, a])?,
        neighbour_spread: r.f32s("neighbour_spread", &[n])?,
        ensemble_spread: r.f32s("ensemble_spread", &[n])?,
        neighbours: r
            .floats("neighbours", &[n, k])?
            .into_iter()
            .map(|x| x as u32)
            .collect(),
        threshold: r.f32s("threshold", &[1])?[0],
        alpha: r.floats("alpha", &[1])?[0],
        scale: r.f32s("scale", &[d])?,
    })
}
