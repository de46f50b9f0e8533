//! Synthetic smooth trajectories: fixture builders shared by the tests and the benchmark.
//!
//! A trajectory is a smooth low-dimensional latent path (sums of slow sinusoids with random
//! frequencies and phases, plus an integrated random walk) mixed into `dim` correlated
//! features by a fixed random matrix, plus a little independent noise. Actions are a smooth
//! function of the state. Learner rollouts can drift: after an onset step, a growing offset
//! along a fixed random direction carries them away from expert territory.

use std::path::PathBuf;

use crate::campaign::{
    ActionChannel, Campaign, CampaignFile, ChannelKind, Episode, Feature, NoveltySettings, Round,
    Spec, StepTable,
};

/// SplitMix64 (Steele, Lea & Flood 2014): a small, seedable, platform-independent generator.
#[derive(Debug, Clone)]
pub struct Rng(u64);

impl Rng {
    /// A generator from a seed.
    pub fn new(seed: u64) -> Self {
        Rng(seed)
    }

    /// Next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }

    /// Uniform in `[0, 1)`.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Standard normal (Box-Muller).
    pub fn normal(&mut self) -> f64 {
        let u = self.uniform().max(1e-300);
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// What to generate.
#[derive(Debug, Clone, PartialEq)]
pub struct SynthSpec {
    /// Number of episodes.
    pub episodes: usize,
    /// Steps per episode.
    pub len: usize,
    /// State features.
    pub dim: usize,
    /// Latent dimension of the smooth path (the data's intrinsic dimension).
    pub latent: usize,
    /// Action channels.
    pub action_dim: usize,
    /// Seed of the episodes (the mixing matrix has its own fixed seed, so different episode
    /// seeds give new episodes of the same "expert").
    pub seed: u64,
    /// Drift per step after the onset, in feature units; 0 for expert-like episodes.
    pub drift: f32,
    /// Episode name prefix.
    pub prefix: String,
}

impl SynthSpec {
    /// Expert-like episodes: `episodes` of `len` steps, `dim` features.
    pub fn expert(episodes: usize, len: usize, dim: usize, seed: u64) -> Self {
        SynthSpec {
            episodes,
            len,
            dim,
            latent: 6.min(dim),
            action_dim: 2,
            seed,
            drift: 0.0,
            prefix: "demo".into(),
        }
    }
}

/// Step of each episode where drifting starts: the middle of the episode.
pub fn drift_onset(len: usize) -> usize {
    len / 2
}

/// Generates a step table (see the module documentation).
pub fn trajectories(s: &SynthSpec) -> StepTable {
    let mut mix_rng = Rng::new(0x5eed);
    let mix: Vec<f64> = (0..s.dim * s.latent).map(|_| mix_rng.normal()).collect();
    let act: Vec<f64> = (0..s.action_dim * s.dim)
        .map(|_| mix_rng.normal())
        .collect();
    let dir: Vec<f64> = (0..s.dim).map(|_| mix_rng.normal()).collect();
    let dir_norm = dir.iter().map(|x| x * x).sum::<f64>().sqrt();
    let mut rng = Rng::new(s.seed);
    let mut t = StepTable::new(s.dim, s.action_dim);
    t.states.reserve(s.episodes * s.len * s.dim);
    for e in 0..s.episodes {
        let start = t.len();
        let freq: Vec<f64> = (0..s.latent * 2)
            .map(|_| 0.002 + 0.02 * rng.uniform())
            .collect();
        let phase: Vec<f64> = (0..s.latent * 2)
            .map(|_| std::f64::consts::TAU * rng.uniform())
            .collect();
        let mut walk = vec![0.0f64; s.latent];
        let mut vel = vec![0.0f64; s.latent];
        let mut z = vec![0.0f64; s.latent];
        for step in 0..s.len {
            for l in 0..s.latent {
                vel[l] = 0.95 * vel[l] + 0.01 * rng.normal();
                walk[l] = 0.995 * walk[l] + vel[l];
                let tt = step as f64;
                z[l] = (freq[2 * l] * tt + phase[2 * l]).sin()
                    + 0.5 * (freq[2 * l + 1] * tt + phase[2 * l + 1]).sin()
                    + walk[l];
            }
            let off = f64::from(s.drift) * step.saturating_sub(drift_onset(s.len)) as f64;
            let x: Vec<f64> = (0..s.dim)
                .map(|j| {
                    let m: f64 = (0..s.latent).map(|l| mix[j * s.latent + l] * z[l]).sum();
                    m + 0.02 * rng.normal() + off * dir[j] / dir_norm
                })
                .collect();
            t.states.extend(x.iter().map(|&v| v as f32));
            for c in 0..s.action_dim {
                let u: f64 = (0..s.dim).map(|j| act[c * s.dim + j] * x[j]).sum();
                t.actions.push((u / (s.dim as f64).sqrt()).tanh() as f32);
            }
            t.t.push(step as i64);
            t.origins.push((start + step + 1) as u64);
        }
        t.episodes.push(Episode {
            name: format!("{}-{e:05}", s.prefix),
            start,
            len: s.len,
            source: 0,
        });
    }
    t.sources.push(PathBuf::from("synthetic"));
    t
}

/// A spec with features `f0..` and continuous channels `a0..` in `[-1, 1]`.
pub fn spec(dim: usize, action_dim: usize) -> Spec {
    Spec {
        features: (0..dim)
            .map(|j| Feature {
                name: format!("f{j}"),
                unit: String::new(),
                scale: None,
                kind: Default::default(),
            })
            .collect(),
        actions: (0..action_dim)
            .map(|c| ActionChannel {
                name: format!("a{c}"),
                unit: String::new(),
                kind: ChannelKind::Continuous {
                    low: -1.0,
                    high: 1.0,
                },
            })
            .collect(),
        position: None,
        outcomes: Vec::new(),
    }
}

/// An in-memory campaign of synthetic demonstrations and one round (number 1).
pub fn campaign(demos: StepTable, round: StepTable, k: usize, alpha: f64) -> Campaign {
    Campaign {
        root: PathBuf::from("."),
        file: CampaignFile {
            name: "synthetic".into(),
            description: String::new(),
            step_seconds: None,
            spec: spec(demos.state_dim, demos.action_dim),
            novelty: NoveltySettings { k, alpha },
        },
        demonstrations: demos,
        rounds: vec![Round {
            number: 1,
            steps: round,
        }],
        inputs: Vec::new(),
    }
}
