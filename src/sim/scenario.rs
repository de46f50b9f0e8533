//! The whole demo scenario in memory: expert demonstrations, the learner fit on them, and
//! two rounds of learner episodes (the second with scripted interventions).

use super::expert::PurePursuit;
use super::features::Features;
use super::lane::{Lane, LaneParams};
use super::learner::{Ensemble, Learner};
use super::policy::{Action, Policy};
use super::ridge::RidgeError;
use super::rng::SplitMix64;
use super::rollout::{
    Drivers, EpisodeMetrics, InterventionRule, RolloutConfig, Step, episode_metrics, rollout,
    start_pose,
};
use crate::progress::Progress;

/// Everything that shapes a demo campaign. Equal configurations give equal campaigns.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoConfig {
    /// Seed of every random draw.
    pub seed: u64,
    /// Episodes in the demonstrations and in each round.
    pub episodes: usize,
    /// Episodes per round that get frame images (those that strayed furthest from the centreline).
    pub frame_episodes: usize,
    /// Side of the square frame images (pixels).
    pub frame_size: u32,
    /// Number of ensemble members (bootstrap resamples).
    pub ensemble_size: usize,
    /// Ridge penalty per unit of training weight, on standardised features. The default is
    /// strong: the learner's feedback on lateral offset comes out several times weaker than
    /// the expert's, which is harmless near the centreline the demonstrations cover and
    /// lets the rover drift outward in tight curves (about a third of episodes leave the
    /// lane on seeds 0-9).
    pub lambda: f64,
    /// Lane generation.
    pub lane: LaneParams,
    /// Episode settings (shared by the expert and the learner).
    pub rollout: RolloutConfig,
    /// The expert.
    pub expert: PurePursuit,
    /// Scripted interventions of round 2.
    pub intervention: InterventionRule,
}

impl Default for DemoConfig {
    fn default() -> Self {
        DemoConfig {
            seed: 1,
            episodes: 20,
            frame_episodes: 1,
            frame_size: 96,
            ensemble_size: 5,
            lambda: 2.5,
            lane: LaneParams::default(),
            rollout: RolloutConfig::default(),
            expert: PurePursuit::default(),
            intervention: InterventionRule::default(),
        }
    }
}

/// One simulated episode with its lane.
#[derive(Debug, Clone, PartialEq)]
pub struct EpisodeRun {
    /// Episode name as written to the campaign.
    pub name: String,
    /// The lane it was driven on.
    pub lane: Lane,
    /// The steps, with world poses.
    pub steps: Vec<Step>,
    /// How it went.
    pub metrics: EpisodeMetrics,
}

/// The simulated demo scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoRun {
    /// Expert episodes.
    pub demonstrations: Vec<EpisodeRun>,
    /// The learner fit on the demonstrations (drives both rounds).
    pub learner: Learner,
    /// Bootstrap ensemble whose actions are round 1's samples.
    pub ensemble: Ensemble,
    /// Round 1 (no interventions, ensemble samples) and round 2 (scripted interventions).
    pub rounds: Vec<Vec<EpisodeRun>>,
}

/// Stream purposes for [`SplitMix64::stream`].
const LANES: u64 = 1;
const NOISE: u64 = 2;
const BOOTSTRAP: u64 = 3;

/// Runs `cfg.episodes` episodes of one set (0 demonstrations, r for round r).
pub fn run_set(
    cfg: &DemoConfig,
    set: u64,
    drivers: &Drivers<'_>,
    rollout_cfg: &RolloutConfig,
    progress: &Progress,
) -> Vec<EpisodeRun> {
    (0..cfg.episodes)
        .map(|i| {
            let lane_seed = SplitMix64::stream(cfg.seed, LANES, set * 1_000_000 + i as u64);
            let lane = Lane::generate(lane_seed.clone().next_u64(), &cfg.lane);
            let mut rng = SplitMix64::stream(cfg.seed, NOISE, set * 1_000_000 + i as u64);
            let start = start_pose(&lane, rollout_cfg, &mut rng);
            let steps = rollout(&lane, start, drivers, rollout_cfg, &mut rng);
            let metrics = episode_metrics(&steps, lane.half_width(), rollout_cfg.dt);
            progress.advance(1);
            let name = match set {
                0 => format!("demo-{i:03}"),
                r => format!("r{r}-{i:03}"),
            };
            EpisodeRun {
                name,
                lane,
                steps,
                metrics,
            }
        })
        .collect()
}

/// States and actions of a set of episodes, as training data.
pub fn training_data(runs: &[EpisodeRun]) -> (Vec<Features>, Vec<Action>) {
    runs.iter()
        .flat_map(|r| r.steps.iter().map(|s| (s.features, s.action)))
        .unzip()
}

/// Simulates the whole scenario.
pub fn simulate_demo(cfg: &DemoConfig, progress: &Progress) -> Result<DemoRun, RidgeError> {
    progress.stage("simulating", 3 * cfg.episodes as u64);
    let expert_only = Drivers {
        policy: &cfg.expert as &dyn Policy,
        expert: &cfg.expert,
        ensemble: None,
    };
    let demonstrations = run_set(cfg, 0, &expert_only, &cfg.rollout, progress);
    let (states, actions) = training_data(&demonstrations);
    let learner = Learner::fit(&states, &actions, None, cfg.lambda)?;
    let boot_seed = SplitMix64::stream(cfg.seed, BOOTSTRAP, 0).next_u64();
    let ensemble = Ensemble::bootstrap(
        &states,
        &actions,
        None,
        cfg.lambda,
        cfg.ensemble_size,
        boot_seed,
    )?;
    let round1 = Drivers {
        policy: &learner,
        expert: &cfg.expert,
        ensemble: Some(&ensemble),
    };
    let first = run_set(cfg, 1, &round1, &cfg.rollout, progress);
    let round2 = Drivers {
        ensemble: None,
        ..round1
    };
    let with_takeover = RolloutConfig {
        intervention: Some(cfg.intervention.clone()),
        ..cfg.rollout.clone()
    };
    let second = run_set(cfg, 2, &round2, &with_takeover, progress);
    Ok(DemoRun {
        demonstrations,
        learner,
        ensemble,
        rounds: vec![first, second],
    })
}

/// Share of episodes that left the lane.
pub fn departure_share(runs: &[EpisodeRun]) -> f64 {
    if runs.is_empty() {
        return 0.0;
    }
    runs.iter().filter(|r| r.metrics.left_lane).count() as f64 / runs.len() as f64
}
