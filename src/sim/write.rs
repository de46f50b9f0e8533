//! Writes the simulated scenario as a campaign folder.
//!
//! Layout: `campaign.json`; `demonstrations/expert.jsonl`; `rounds/1/learner.jsonl` (the
//! learner alone, with ensemble samples); `rounds/2/takeover.csv` and
//! `rounds/2/takeover.npz` (the learner with scripted interventions, split over two
//! formats). Frames are drawn for the episodes of each round that strayed furthest (in
//! round 2 from the CSV part, which carries frame paths). During an intervention the
//! recorded action is the expert's.

use std::fs::{self, File};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use rayon::prelude::*;
use thiserror::Error;

use super::features::demo_spec;
use super::frames::{encode_png, render_frame};
use super::scenario::{DemoConfig, DemoRun, EpisodeRun, departure_share, simulate_demo};
use crate::campaign::spec::{CampaignFile, NoveltySettings, Spec};
use crate::campaign::steps::{StepRow, StepTable, StepTableBuilder};
use crate::campaign::write::{write_csv, write_jsonl, write_npz_with_outcomes};
use crate::progress::Progress;

/// Why the demo campaign could not be written.
#[derive(Debug, Error)]
pub enum DemoError {
    /// The target folder already holds something.
    #[error("{0}: the folder is not empty; choose a new or empty folder (nothing was written)")]
    NotEmpty(PathBuf),
    /// A file could not be written.
    #[error("{path}: {source}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// A frame image could not be encoded.
    #[error("{path}: cannot encode the frame: {message}")]
    Image {
        /// The frame file.
        path: PathBuf,
        /// The cause.
        message: String,
    },
    /// The learner could not be fit.
    #[error("fitting the learner: {0}")]
    Fit(String),
    /// The work was cancelled.
    #[error("cancelled")]
    Cancelled,
}

/// Counts of one written set of episodes.
#[derive(Debug, Clone, PartialEq)]
pub struct SetSummary {
    /// Label ("demonstrations", "round 1", ...).
    pub label: String,
    /// Episodes.
    pub episodes: usize,
    /// Steps.
    pub steps: usize,
    /// Share of episodes that left the lane.
    pub departure_share: f64,
    /// Steps driven by the expert after an intervention.
    pub intervention_steps: usize,
}

/// What was written.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoSummary {
    /// The demonstrations and each round.
    pub sets: Vec<SetSummary>,
    /// Frame images written.
    pub frames: usize,
}

/// Simulates the scenario of `cfg` and writes it as a campaign into `dir`, which must be
/// missing or empty.
pub fn write_demo_campaign(
    dir: &Path,
    cfg: &DemoConfig,
    progress: &Progress,
) -> Result<DemoSummary, DemoError> {
    ensure_empty(dir)?;
    let run = simulate_demo(cfg, progress).map_err(DemoError::Fit)?;
    if progress.is_cancelled() {
        return Err(DemoError::Cancelled);
    }
    let spec = demo_spec();
    write_campaign_file(dir, cfg, &spec)?;
    let demos = table(&run.demonstrations, "", 0, false);
    write_file(dir, "demonstrations/expert.jsonl", |w| {
        write_jsonl(&demos, &spec, "demonstrations", w)
    })?;
    let frame_dir = |r: usize| format!("rounds/{r}/frames");
    let r1 = table(&run.rounds[0], &frame_dir(1), cfg.frame_episodes, false);
    write_file(dir, "rounds/1/learner.jsonl", |w| {
        write_jsonl(&r1, &spec, "rounds/1", w)
    })?;
    let split = run.rounds[1].len().div_ceil(2);
    let (head, tail) = run.rounds[1].split_at(split);
    let r2 = table(head, &frame_dir(2), cfg.frame_episodes, true);
    write_file(dir, "rounds/2/takeover.csv", |w| {
        write_csv(&r2, &spec, "rounds/2", w)
    })?;
    if !tail.is_empty() {
        let r2b = table(tail, "", 0, true);
        write_file(dir, "rounds/2/takeover.npz", |w| {
            write_npz_with_outcomes(&r2b, Some(&spec), w)
        })?;
    }
    let frames = write_frames(dir, cfg, &run, progress)?;
    Ok(summary(&run, frames))
}

fn ensure_empty(dir: &Path) -> Result<(), DemoError> {
    let io = |source| DemoError::Io {
        path: dir.to_path_buf(),
        source,
    };
    if dir.exists() {
        if fs::read_dir(dir).map_err(io)?.next().is_some() {
            return Err(DemoError::NotEmpty(dir.to_path_buf()));
        }
    } else {
        fs::create_dir_all(dir).map_err(io)?;
    }
    Ok(())
}

fn description(cfg: &DemoConfig) -> String {
    format!(
        "Demo scenario: an orchard rover follows a curving lane between two tree rows. \
Demonstrations come from a pure pursuit expert with curve-aware speed control; rounds 1 and 2 \
are rollouts of a {} learner fit on them (round 1 with bootstrap ensemble samples, round 2 \
with scripted expert interventions past 0.6 m lateral offset). The lane is 2.4 m wide.",
        cfg.learner.describe()
    )
}

fn write_campaign_file(dir: &Path, cfg: &DemoConfig, spec: &Spec) -> Result<(), DemoError> {
    let file = CampaignFile {
        name: format!("orchard rover demo (seed {})", cfg.seed),
        description: description(cfg),
        step_seconds: Some(cfg.rollout.dt),
        spec: spec.clone(),
        novelty: NoveltySettings::default(),
    };
    write_file(dir, "campaign.json", |mut w| {
        serde_json::to_writer_pretty(&mut w, &file)?;
        w.write_all(b"\n")
    })
}

fn write_file(
    dir: &Path,
    rel: &str,
    body: impl FnOnce(&mut BufWriter<File>) -> std::io::Result<()>,
) -> Result<(), DemoError> {
    let path = dir.join(rel);
    let io = |source| DemoError::Io {
        path: path.clone(),
        source,
    };
    if let Some(parent) = path.parent() {
        fs::create_dir_all(parent).map_err(io)?;
    }
    crate::durable::write_file(&path, body).map_err(io)
}

/// A value rounded to 4 decimals: sensor-like resolution and compact files.
fn q(v: f64) -> f32 {
    ((v * 1e4).round() / 1e4) as f32
}

/// The step table of a set of episodes (values rounded to 4 decimals); the
/// `frame_episodes` episodes that strayed furthest from the centreline (see
/// [`framed_episodes`]) reference frames under `frame_dir` (relative to the campaign folder);
/// `flags` records every step's intervention flag. Each episode's outcome is `failure` when
/// the rover left the lane, else `success` (the spec's default outcomes).
pub fn table(
    runs: &[EpisodeRun],
    frame_dir: &str,
    frame_episodes: usize,
    flags: bool,
) -> StepTable {
    let mut b = StepTableBuilder::new(super::FEATURE_COUNT, 2);
    b.begin_source(PathBuf::new());
    let framed = framed_episodes(runs, frame_episodes);
    for (i, run) in runs.iter().enumerate() {
        for s in &run.steps {
            let state: Vec<f32> = s.features.iter().map(|&v| q(v)).collect();
            let action: Vec<f32> = s.action.to_array().iter().map(|&v| q(v)).collect();
            let samples: Vec<f32> = s.samples.iter().flat_map(|a| a.to_array()).map(q).collect();
            b.push(StepRow {
                episode: &run.name,
                t: s.t,
                state: &state,
                action: &action,
                frame: framed[i].then(|| frame_path(frame_dir, &run.name, s.t)),
                intervention: flags.then_some(s.intervention),
                samples: &samples,
                origin: 0,
                ..Default::default()
            });
        }
    }
    let mut t = b.finish();
    t.outcomes = runs
        .iter()
        .filter(|r| !r.steps.is_empty())
        .map(|r| Some(u32::from(r.metrics.left_lane)))
        .collect();
    t
}

/// Which episodes get frames: the `n` with the largest `|lateral_offset|` (ties by order),
/// so the pictures show the learner in trouble.
pub fn framed_episodes(runs: &[EpisodeRun], n: usize) -> Vec<bool> {
    let mut order: Vec<usize> = (0..runs.len()).collect();
    order.sort_by(|&a, &b| {
        let (x, y) = (&runs[a].metrics, &runs[b].metrics);
        y.max_abs_lateral
            .total_cmp(&x.max_abs_lateral)
            .then(a.cmp(&b))
    });
    let mut out = vec![false; runs.len()];
    for &i in order.iter().take(n) {
        out[i] = true;
    }
    out
}

fn frame_path(frame_dir: &str, episode: &str, t: i64) -> String {
    format!("{frame_dir}/{episode}/{t:04}.png")
}

fn write_frames(
    dir: &Path,
    cfg: &DemoConfig,
    run: &DemoRun,
    progress: &Progress,
) -> Result<usize, DemoError> {
    let mut jobs = Vec::new();
    for (r, episodes) in run.rounds.iter().enumerate() {
        let candidates = if r == 1 {
            &episodes[..episodes.len().div_ceil(2)] // the CSV part, which carries frames
        } else {
            &episodes[..]
        };
        let framed = framed_episodes(candidates, cfg.frame_episodes);
        for (e, _) in candidates.iter().zip(framed).filter(|(_, f)| *f) {
            for s in &e.steps {
                let rel = frame_path(&format!("rounds/{}/frames", r + 1), &e.name, s.t);
                jobs.push((rel, &e.lane, s.pose));
            }
        }
    }
    progress.stage("drawing frames", jobs.len() as u64);
    let images: Vec<(String, Result<Vec<u8>, String>)> = jobs
        .par_iter()
        .map(|(rel, lane, pose)| {
            let img = render_frame(lane, pose, &cfg.expert.car, cfg.frame_width);
            progress.advance(1);
            (rel.clone(), encode_png(&img).map_err(|e| e.to_string()))
        })
        .collect();
    for (rel, png) in &images {
        let png = png.as_ref().map_err(|m| DemoError::Image {
            path: dir.join(rel),
            message: m.clone(),
        })?;
        write_file(dir, rel, |w| w.write_all(png))?;
    }
    Ok(images.len())
}

fn summary(run: &DemoRun, frames: usize) -> DemoSummary {
    let set = |label: String, runs: &[EpisodeRun]| SetSummary {
        label,
        episodes: runs.len(),
        steps: runs.iter().map(|r| r.steps.len()).sum(),
        departure_share: departure_share(runs),
        intervention_steps: runs.iter().map(|r| r.metrics.intervention_steps).sum(),
    };
    let mut sets = vec![set("demonstrations".into(), &run.demonstrations)];
    for (i, r) in run.rounds.iter().enumerate() {
        sets.push(set(format!("round {}", i + 1), r));
    }
    DemoSummary { sets, frames }
}
