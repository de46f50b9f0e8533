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
//! | `threshold` | float32 | (1,) | novelty above which steps of the last phase are flagged |
//! | `phase_start` | int64 | (P,) | first position (steps from the episode's start) of each calibration phase |
//! | `phase_threshold` | float32 | (P,) | novelty above which steps of each phase are flagged |
//! | `alpha` | float64 | (1,) | flag level |
//! | `scale` | float32 | (D,) | per-feature scales of the novelty distance |
//! | `scale_origin` | unicode | (D,) | where each scale came from: `spec`, `MAD`, `IQR`, `standard deviation`, `unit`, `binary`, `categorical` |
//!
//! Scores are derived data: scoring again replaces the file through [`crate::durable`]
//! (written under a temporary name unique to the writer, fsync'd, then renamed), so a reader
//! never sees half a file and concurrent scorers never share a temporary file; the last
//! rename wins. Nothing the experts entered lives here.

use std::io::Write;
use std::path::{Path, PathBuf};

use crate::campaign::npz::NpzWriter;

use super::NoveltyError;
use super::scale::ScaleOrigin;
use super::score::RoundScores;
use crate::campaign::StepTable;
use crate::campaign::numpy::{Array, ArraySource, NpzSource, Values};

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

/// Saves scores of `steps` to `analysis/<round>/scores.npz` and returns the path.
pub fn save_scores(
    root: &Path,
    round: u32,
    steps: &StepTable,
    s: &RoundScores,
) -> Result<PathBuf, NoveltyError> {
    let path = real_round_dir(root, round)?.join(SCORES_FILE);
    crate::durable::write_file(&path, |w| write_npz(steps, s, w))
        .map_err(|e| store_err(&path, e))?;
    Ok(path)
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
    let phases: Vec<i64> = s.phase_start.iter().map(|&p| p as i64).collect();
    put(&mut npz, "phase_start", &[phases.len() as u64], &phases)?;
    let p = s.phase_threshold.len() as u64;
    put(&mut npz, "phase_threshold", &[p], &s.phase_threshold)?;
    put(&mut npz, "alpha", &[1], &[s.alpha])?;
    put(&mut npz, "scale", &[s.state_dim as u64], &s.scale)?;
    npz.strings("scale_origin", s.scale_origin.iter().map(|o| o.label()))?;
    npz.finish().map(drop)
}

struct Reader {
    src: NpzSource,
    path: PathBuf,
}

impl Reader {
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
}

impl Reader {
    fn phase_count(&mut self) -> Result<u64, NoveltyError> {
        let a = self
            .src
            .array("phase_start")
            .map_err(|e| store_err(&self.path, e))?;
        a.and_then(|a| a.shape.first().copied()).ok_or_else(|| {
            store_err(
                &self.path,
                "array `phase_start` is missing; score the round again",
            )
        })
    }

    fn phase_starts(&mut self) -> Result<Vec<usize>, NoveltyError> {
        let p = self.phase_count()?;
        let v = self.floats("phase_start", &[p])?;
        if v.first() != Some(&0.0) || v.windows(2).any(|w| w[0] >= w[1]) {
            return Err(store_err(
                &self.path,
                "array `phase_start` must start at 0 and increase",
            ));
        }
        Ok(v.into_iter().map(|x| x as usize).collect())
    }

    fn origins(&mut self, d: u64) -> Result<Vec<ScaleOrigin>, NoveltyError> {
        let Values::Text(v) = self.array("scale_origin", &[d])?.values else {
            return Err(store_err(
                &self.path,
                "array `scale_origin` holds numbers, not text",
            ));
        };
        v.iter()
            .map(|s| {
                ScaleOrigin::from_label(s).ok_or_else(|| {
                    store_err(
                        &self.path,
                        format!("array `scale_origin`: unknown origin `{s}`"),
                    )
                })
            })
            .collect()
    }
}

/// Loads saved scores of a round; refuses a file whose step count or dimensions do not match
/// `steps` (the round changed since it was scored).
pub fn load_scores(
    root: &Path,
    round: u32,
    steps: &StepTable,
) -> Result<RoundScores, NoveltyError> {
    let path = scores_path(root, round);
    let src = NpzSource::open(&path).map_err(|e| store_err(&path, e))?;
    let mut r = Reader { src, path };
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
        phase_start: r.phase_starts()?,
        phase_threshold: {
            let p = r.phase_count()?;
            r.f32s("phase_threshold", &[p])?
        },
        alpha: r.floats("alpha", &[1])?[0],
        scale: r.f32s("scale", &[d])?,
        scale_origin: r.origins(d)?,
    })
}
