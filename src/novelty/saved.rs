//! The novelty model as a file: `analysis/model.bin`, which any process can load to score
//! steps (a shard of a round on another machine, a worker of a cluster) without calibrating
//! again, and which refuses demonstrations other than those it was built from.
//!
//! **Format** (our own; little-endian throughout):
//!
//! | bytes | content |
//! | --- | --- |
//! | 8 | magic `CSNOVMDL` |
//! | 4 | format version, `u32` (this is version 2: per-phase calibration, scale origins) |
//! | 4 | header length `h`, `u32` |
//! | `h` | header: a JSON object (see [`Header`]): settings, split, dimensions, fingerprint |
//! | `4 * state_dim` | per-feature scales, `f32` |
//! | `4 * n` | the `n` calibration novelties, ascending, `f32` (the pooled calibration) |
//! | `4 * m` | each phase's calibration novelties, ascending, phase after phase (`phase_scores` in the header) |
//! | 32 | SHA-256 of every byte before it (a truncated or damaged file is refused) |
//!
//! **The index is rebuilt, not stored.** [`KnnIndex::build`] is deterministic (kiddo's
//! immutable tree from a slice; the principal axes of the subspace path from a fixed Jacobi
//! sweep), so the index over every demonstration row, rebuilt from the same demonstrations
//! with the same scales, answers exactly as the one that was saved. Rebuilding takes a
//! fraction of building the model (no calibration search), and the file stays small. The
//! [`fingerprint`] of the demonstrations (every state, action, time index and episode name)
//! is what makes this safe: a load against demonstrations with another fingerprint is
//! refused ([`ModelFileError::Stale`]), and so is one whose campaign asks for another `k`,
//! `alpha` or scales.
//!
//! **Shards.** Scoring is map-only over steps: [`score_shard`] scores rows `a..b` of a round
//! and gives exactly rows `a..b` of the whole round's scores (bit for bit, every field),
//! because each search returns its one canonical answer whatever the chain of hints that led
//! to it (see [`super::query`]).

use std::ops::Range;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use super::NoveltyError;
use super::conformal::Conformal;
use super::model::{EpisodeSplit, NoveltyModel};
use super::phase::PhasedConformal;
use super::scale::ScaleOrigin;
use super::scale::feature_scales;
use super::score::{RoundScores, score_steps_from};
use super::store::ANALYSIS_DIR;
use crate::campaign::{ActionChannel, Campaign, Episode, StepTable};
use crate::progress::Progress;

/// File name of the saved model in the campaign's `analysis/` folder.
pub const MODEL_FILE: &str = "model.bin";
/// The file's first eight bytes.
pub const MAGIC: &[u8; 8] = b"CSNOVMDL";
/// The format version this code writes and reads.
pub const FORMAT_VERSION: u32 = 3;

/// `analysis/model.bin` of a campaign.
pub fn model_path(root: &Path) -> PathBuf {
    root.join(ANALYSIS_DIR).join(MODEL_FILE)
}

/// Why a model file could not be written, read or used.
#[derive(Debug, thiserror::Error)]
pub enum ModelFileError {
    /// The file could not be read.
    #[error("{path}: {message}")]
    Io {
        /// The file.
        path: PathBuf,
        /// What the system said.
        message: String,
    },
    /// The bytes are not a model file of this version (or are damaged).
    #[error("{path}: {field}: {message}")]
    Format {
        /// The file.
        path: PathBuf,
        /// The part of the file at fault (`magic`, `version`, `header`, `scale`, ...).
        field: String,
        /// What is wrong.
        message: String,
    },
    /// The model was built from other demonstrations or settings than the campaign's.
    #[error(
        "{path}: {field}: the model was built for {saved}, the campaign now has {now}; \
         build the model again (scoring against it would flag the wrong steps)"
    )]
    Stale {
        /// The file.
        path: PathBuf,
        /// What differs (`demonstrations`, `novelty.k`, `novelty.alpha`, `scale`).
        field: String,
        /// The saved value.
        saved: String,
        /// The campaign's value.
        now: String,
    },
    /// Building, rebuilding or scoring failed.
    #[error(transparent)]
    Novelty(#[from] NoveltyError),
}

/// The JSON header of a model file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Header {
    /// Always `"countersteer novelty model"`.
    pub format: String,
    /// The version of the tool that wrote it.
    pub tool: String,
    /// Which neighbour's distance is the novelty.
    pub k: usize,
    /// The flag level.
    pub alpha: f64,
    /// State features.
    pub state_dim: usize,
    /// Action channels.
    pub action_dim: usize,
    /// Demonstration steps the model was built from.
    pub demonstration_steps: usize,
    /// Demonstration episodes the model was built from.
    pub demonstration_episodes: usize,
    /// [`fingerprint`] of those demonstrations (64 hex digits).
    pub fingerprint: String,
    /// The calibration folds of episode indices (see [`super::model`]).
    pub split: SplitHeader,
    /// Number of calibration novelties stored after the scales.
    pub calibration_scores: usize,
    /// The first position of each calibration phase (see [`super::phase`]).
    pub phase_start: Vec<usize>,
    /// Number of calibration novelties of each phase, stored after the pooled ones.
    pub phase_scores: Vec<usize>,
    /// Where each feature's scale came from ([`ScaleOrigin::label`]).
    pub scale_origin: Vec<String>,
    /// The search path the index takes, in words (informational).
    pub index: String,
}

/// The episode folds as stored in the header.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SplitHeader {
    /// Each fold's episodes, ascending.
    pub folds: Vec<Vec<usize>>,
}

/// SHA-256 of a demonstration table as 64 hex digits: dimensions, then every episode's name
/// and length, then every time index, state value and action value (their bit patterns), all
/// little-endian. Any change to what scoring reads from the demonstrations changes it.
pub fn fingerprint(demos: &StepTable) -> String {
    let mut h = Sha256::new();
    for n in [
        demos.state_dim,
        demos.action_dim,
        demos.len(),
        demos.episodes.len(),
    ] {
        h.update((n as u64).to_le_bytes());
    }
    for e in &demos.episodes {
        h.update((e.name.len() as u64).to_le_bytes());
        h.update(e.name.as_bytes());
        h.update((e.len as u64).to_le_bytes());
    }
    demos.t.iter().for_each(|t| h.update(t.to_le_bytes()));
    for v in demos.states.iter().chain(&demos.actions) {
        h.update(v.to_bits().to_le_bytes());
    }
    hex(&h.finalize())
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// The file's bytes for a model built from `demos`.
pub fn encode(model: &NoveltyModel, demos: &StepTable) -> Vec<u8> {
    let split = model.split();
    let header = Header {
        format: "countersteer novelty model".into(),
        tool: crate::VERSION.into(),
        k: model.k(),
        alpha: model.alpha(),
        state_dim: demos.state_dim,
        action_dim: demos.action_dim,
        demonstration_steps: demos.len(),
        demonstration_episodes: demos.episodes.len(),
        fingerprint: fingerprint(demos),
        split: SplitHeader {
            folds: split.folds.clone(),
        },
        calibration_scores: model.conformal().len(),
        phase_start: model.phased().starts().to_vec(),
        phase_scores: model.phased().parts().iter().map(Conformal::len).collect(),
        scale_origin: model
            .scale_origin()
            .iter()
            .map(|o| o.label().to_string())
            .collect(),
        index: model.index().path(),
    };
    let json = serde_json::to_vec(&header).unwrap_or_default();
    let mut out = Vec::with_capacity(48 + json.len() + 4 * header.calibration_scores);
    out.extend_from_slice(MAGIC);
    out.extend_from_slice(&FORMAT_VERSION.to_le_bytes());
    out.extend_from_slice(&(json.len() as u32).to_le_bytes());
    out.extend_from_slice(&json);
    let phases = model.phased().parts().iter().flat_map(Conformal::scores);
    for v in model
        .scale()
        .iter()
        .chain(model.conformal().scores())
        .chain(phases)
    {
        out.extend_from_slice(&v.to_le_bytes());
    }
    let digest = Sha256::digest(&out);
    out.extend_from_slice(&digest);
    out
}

/// Saves a model built from `demos` to `path` durably (through [`crate::durable`]: written
/// beside it, fsync'd, renamed).
pub fn save_model(
    path: &Path,
    model: &NoveltyModel,
    demos: &StepTable,
) -> Result<(), ModelFileError> {
    let bytes = encode(model, demos);
    crate::durable::write_bytes(path, &bytes).map_err(|e| ModelFileError::Io {
        path: path.to_path_buf(),
        message: e.to_string(),
    })
}

/// A model file's decoded parts (the index is rebuilt by [`load_model`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Decoded {
    /// The header.
    pub header: Header,
    /// Per-feature scales.
    pub scale: Vec<f32>,
    /// Calibration novelties, ascending.
    pub calibration: Vec<f32>,
    /// Each phase's calibration novelties, ascending.
    pub phases: Vec<Vec<f32>>,
}

struct Cursor<'a> {
    bytes: &'a [u8],
    at: usize,
    path: &'a Path,
}

impl<'a> Cursor<'a> {
    fn take(&mut self, n: usize, field: &str) -> Result<&'a [u8], ModelFileError> {
        let end = self.at.checked_add(n).filter(|&e| e <= self.bytes.len());
        let end = end.ok_or_else(|| {
            format_err(
                self.path,
                field,
                format!("the file ends early (byte {})", self.at),
            )
        })?;
        let s = &self.bytes[self.at..end];
        self.at = end;
        Ok(s)
    }

    fn u32(&mut self, field: &str) -> Result<u32, ModelFileError> {
        let b = self.take(4, field)?;
        Ok(u32::from_le_bytes([b[0], b[1], b[2], b[3]]))
    }

    fn f32s(&mut self, n: usize, field: &str) -> Result<Vec<f32>, ModelFileError> {
        let len = n
            .checked_mul(4)
            .ok_or_else(|| format_err(self.path, field, "too long"))?;
        let b = self.take(len, field)?;
        Ok(b.chunks_exact(4)
            .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]))
            .collect())
    }
}

fn format_err(path: &Path, field: &str, message: impl std::fmt::Display) -> ModelFileError {
    ModelFileError::Format {
        path: path.to_path_buf(),
        field: field.into(),
        message: message.to_string(),
    }
}

/// Decodes a model file's bytes (`path` names it in errors).
pub fn decode(bytes: &[u8], path: &Path) -> Result<Decoded, ModelFileError> {
    if bytes.len() < 48 || &bytes[..8] != MAGIC {
        return Err(format_err(
            path,
            "magic",
            "not a countersteer novelty model file",
        ));
    }
    let (body, digest) = bytes.split_at(bytes.len() - 32);
    if Sha256::digest(body).as_slice() != digest {
        return Err(format_err(
            path,
            "checksum",
            "the file is damaged or truncated",
        ));
    }
    let mut c = Cursor {
        bytes: body,
        at: 8,
        path,
    };
    let version = c.u32("version")?;
    if version != FORMAT_VERSION {
        return Err(format_err(
            path,
            "version",
            format!("format version {version}; this build reads version {FORMAT_VERSION}"),
        ));
    }
    let len = c.u32("header")? as usize;
    let header: Header = serde_json::from_slice(c.take(len, "header")?)
        .map_err(|e| format_err(path, "header", e))?;
    let scale = c.f32s(header.state_dim, "scale")?;
    let calibration = c.f32s(header.calibration_scores, "calibration")?;
    if header.phase_scores.len() != header.phase_start.len() || header.phase_start.is_empty() {
        return Err(format_err(
            path,
            "header",
            "`phase_start` and `phase_scores` must name the same phases (at least one)",
        ));
    }
    let phases = header
        .phase_scores
        .iter()
        .map(|&n| c.f32s(n, "phases"))
        .collect::<Result<Vec<_>, _>>()?;
    if c.at != body.len() {
        return Err(format_err(
            path,
            "calibration",
            "unexpected bytes after the scores",
        ));
    }
    Ok(Decoded {
        header,
        scale,
        calibration,
        phases,
    })
}

fn stale(path: &Path, field: &str, saved: impl ToString, now: impl ToString) -> ModelFileError {
    ModelFileError::Stale {
        path: path.to_path_buf(),
        field: field.into(),
        saved: saved.to_string(),
        now: now.to_string(),
    }
}

/// Loads the model at `path` for the demonstrations `demos`: refuses other demonstrations
/// ([`ModelFileError::Stale`]), then rebuilds the index (see the module documentation).
pub fn load_model(path: &Path, demos: &StepTable) -> Result<NoveltyModel, ModelFileError> {
    let bytes = std::fs::read(path).map_err(|e| ModelFileError::Io {
        path: path.to_path_buf(),
        message: e.to_string(),
    })?;
    let d = decode(&bytes, path)?;
    let now = fingerprint(demos);
    if d.header.fingerprint != now {
        let describe = |steps: usize, episodes: usize, f: &str| {
            format!(
                "demonstrations of {steps} steps in {episodes} episodes (fingerprint {})",
                &f[..f.len().min(16)]
            )
        };
        return Err(stale(
            path,
            "demonstrations",
            describe(
                d.header.demonstration_steps,
                d.header.demonstration_episodes,
                &d.header.fingerprint,
            ),
            describe(demos.len(), demos.episodes.len(), &now),
        ));
    }
    let split = EpisodeSplit::from_folds(d.header.split.folds);
    let alpha = d.header.alpha;
    let conformal = Conformal::new(d.calibration, alpha);
    let parts = d.phases.into_iter().map(|p| Conformal::new(p, alpha));
    let phased = PhasedConformal::from_parts(d.header.phase_start, parts.collect());
    let origin = d
        .header
        .scale_origin
        .iter()
        .map(|o| {
            ScaleOrigin::from_label(o)
                .ok_or_else(|| format_err(path, "header", format!("unknown scale origin `{o}`")))
        })
        .collect::<Result<Vec<_>, _>>()?;
    let model = NoveltyModel::from_parts(demos, d.scale, (conformal, phased), d.header.k, split)?;
    Ok(model.with_origins(origin))
}

/// Loads `analysis/model.bin` for a campaign: refuses it when the demonstrations, `k`,
/// `alpha` or the feature scales of the campaign differ from those it was built with.
pub fn load_campaign_model(c: &Campaign) -> Result<NoveltyModel, ModelFileError> {
    let path = model_path(&c.root);
    let model = load_model(&path, &c.demonstrations)?;
    let settings = &c.file.novelty;
    if model.k() != settings.k {
        return Err(stale(&path, "novelty.k", model.k(), settings.k));
    }
    if model.alpha() != settings.alpha {
        return Err(stale(&path, "novelty.alpha", model.alpha(), settings.alpha));
    }
    let scale = feature_scales(c.spec(), &c.demonstrations);
    if model.scale() != scale.as_slice() {
        return Err(stale(
            &path,
            "scale",
            format!("{:?}", model.scale()),
            format!("{scale:?}"),
        ));
    }
    Ok(model)
}

/// Builds the campaign's model and saves it to `analysis/model.bin`; returns the model and
/// the path.
pub fn build_and_save(
    c: &Campaign,
    progress: &Progress,
) -> Result<(NoveltyModel, PathBuf), ModelFileError> {
    let model = super::build_model(c, progress)?;
    let io = |e: std::io::Error| ModelFileError::Io {
        path: c.root.join(ANALYSIS_DIR),
        message: e.to_string(),
    };
    crate::durable::real_dir(&c.root, Path::new(ANALYSIS_DIR)).map_err(io)?;
    let path = model_path(&c.root);
    save_model(&path, &model, &c.demonstrations)?;
    Ok((model, path))
}

/// Rows `rows` of a table as a table of their own: episodes cut at the ends, frames,
/// interventions, samples, origins, rewards, costs and outcomes kept with their rows.
pub fn shard(t: &StepTable, rows: Range<usize>) -> StepTable {
    let rows = rows.start.min(t.len())..rows.end.min(t.len());
    let (a, b) = (rows.start, rows.end);
    let kept = |e: &Episode| e.start.max(a) < (e.start + e.len).min(b);
    let outcomes = if t.outcomes.is_empty() {
        Vec::new()
    } else {
        let each = t.episodes.iter().zip(&t.outcomes);
        each.filter(|(e, _)| kept(e)).map(|(_, o)| *o).collect()
    };
    let episodes = t
        .episodes
        .iter()
        .filter_map(|e| {
            let (s, end) = (e.start.max(a), (e.start + e.len).min(b));
            (s < end).then(|| Episode {
                name: e.name.clone(),
                start: s - a,
                len: end - s,
                source: e.source,
            })
        })
        .collect();
    let cut = |v: &[f32], w: usize| v[a * w..b * w].to_vec();
    let (sample_offsets, samples) = if t.sample_offsets.is_empty() {
        (Vec::new(), Vec::new())
    } else {
        let base = t.sample_offsets[a];
        let offsets = t.sample_offsets[a..=b].iter().map(|o| o - base).collect();
        let (s0, s1) = (base as usize, t.sample_offsets[b] as usize);
        (
            offsets,
            t.samples[s0 * t.action_dim..s1 * t.action_dim].to_vec(),
        )
    };
    StepTable {
        state_dim: t.state_dim,
        action_dim: t.action_dim,
        states: cut(&t.states, t.state_dim),
        actions: cut(&t.actions, t.action_dim),
        t: t.t[rows.clone()].to_vec(),
        episodes,
        interventions: if t.interventions.is_empty() {
            Vec::new()
        } else {
            t.interventions[rows.clone()].to_vec()
        },
        frames: t
            .frames
            .iter()
            .filter(|(r, _)| rows.contains(&(*r as usize)))
            .map(|(r, f)| (*r - a as u32, f.clone()))
            .collect(),
        sample_offsets,
        samples,
        sources: t.sources.clone(),
        origins: t
            .origins
            .get(rows.clone())
            .map(<[u64]>::to_vec)
            .unwrap_or_default(),
        rewards: t
            .rewards
            .get(rows.clone())
            .map(<[f32]>::to_vec)
            .unwrap_or_default(),
        costs: t.costs.get(rows).map(<[f32]>::to_vec).unwrap_or_default(),
        outcomes,
    }
}

/// Scores rows `rows` of `steps` (a round scored against the model built from `demos`):
/// exactly those rows of [`score_steps`] over the whole table.
pub fn score_shard(
    model: &NoveltyModel,
    demos: &StepTable,
    channels: &[ActionChannel],
    steps: &StepTable,
    rows: Range<usize>,
    progress: &Progress,
) -> Result<RoundScores, NoveltyError> {
    let lead = if rows.start < steps.len() {
        steps.position(rows.start)
    } else {
        0
    };
    let part = shard(steps, rows);
    score_steps_from(model, demos, channels, (&part, lead), progress)
}

#[cfg(test)]
#[path = "saved_tests.rs"]
mod tests;
