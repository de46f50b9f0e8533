//! The whole demo scenario in memory: expert demonstrations, the learner fit on them, and
//! two rounds of learner episodes (the second with scripted interventions).

use super::expert::PurePursuit;
use super::features::Features;
use super::lane::{Lane, LaneParams};
use super::learner::Ensemble;
use super::model::{LearnerKind, Model};
use super::policy::{Action, Policy};
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
    /// Learner episodes in each round.
    pub episodes: usize,
    /// Expert demonstration episodes.
    pub demo_episodes: usize,
    /// Standard deviation of the steering noise injected while the expert drives the
    /// demonstrations (rad). The recorded action stays the expert's own clean command, so
    /// the demonstrations show recoveries from the small errors the noise causes: noise
    /// injection during demonstration, DART (Laskey et al. 2017, "DART: Noise Injection for
    /// Robust Imitation Learning"). It replaces the rollout's actuator noise for them.
    pub demo_steer_noise: f64,
    /// Episodes per round that get frame images (those that strayed furthest from the centreline).
    pub frame_episodes: usize,
    /// Width of the forward-camera frame images (pixels); their height is
    /// [`super::frames::ASPECT`] of it.
    pub frame_width: u32,
    /// Number of ensemble members (bootstrap resamples).
    pub ensemble_size: usize,
    /// The learner fit on the demonstrations that drives the rounds. The default, radial
    /// basis functions ([`LearnerKind::Rbf`]), follows the demonstrations closely where they
    /// are and falls back to its mean action away from them, so it drives like the expert
    /// until a curve takes it off the demonstrated line, and then leaves the lane: on the
    /// default settings it leaves in 11 of 20 round 1 episodes, and about 13 % of its steps
    /// are flagged. The linear ridge learner ([`LearnerKind::Ridge`]) corrects too weakly
    /// everywhere, so almost all of its steps lie outside the demonstrations.
    pub learner: LearnerKind,
    /// Ridge penalty per unit of training weight, on standardised features, for the ridge
    /// learner. The default is strong: the learner's feedback on lateral offset comes out
    /// several times weaker than the expert's, which lets the rover drift outward in tight
    /// curves (about a third of episodes leave the lane on seeds 0-9).
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
            demo_episodes: 20,
            demo_steer_noise: 0.02,
            frame_episodes: 1,
            frame_width: 160,
            ensemble_size: 5,
            learner: LearnerKind::Rbf,
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
#[derive(Debug)]
pub struct DemoRun {
    /// Expert episodes.
    pub demonstrations: Vec<EpisodeRun>,
    /// The learner fit on the demonstrations (drives both rounds).
    pub learner: Model,
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

/// The expert's demonstration episodes: `cfg.demo_episodes` episodes driven by the expert
/// with `cfg.demo_steer_noise` on the steering actuator.
pub fn demonstration_runs(cfg: &DemoConfig, progress: &Progress) -> Vec<EpisodeRun> {
    let expert_only = Drivers {
        policy: &cfg.expert as &dyn Policy,
        expert: &cfg.expert,
        ensemble: None,
    };
    let set_cfg = DemoConfig {
        episodes: cfg.demo_episodes,
        ..cfg.clone()
    };
    let noisy = RolloutConfig {
        steer_noise: cfg.demo_steer_noise,
        ..cfg.rollout.clone()
    };
    run_set(&set_cfg, 0, &expert_only, &noisy, progress)
}

/// States and actions of a set of episodes, as training data.
pub fn training_data(runs: &[EpisodeRun]) -> (Vec<Features>, Vec<Action>) {
    runs.iter()
        .flat_map(|r| r.steps.iter().map(|s| (s.features, s.action)))
        .unzip()
}

/// Simulates the whole scenario.
pub fn simulate_demo(cfg: &DemoConfig, progress: &Progress) -> Result<DemoRun, String> {
    progress.stage("simulating", (cfg.demo_episodes + 2 * cfg.episodes) as u64);
    let demonstrations = demonstration_runs(cfg, progress);
    let (states, actions) = training_data(&demonstrations);
    let learner = Model::fit_one(cfg.learner, &states, &actions, None, cfg.lambda)?;
    let boot_seed = SplitMix64::stream(cfg.seed, BOOTSTRAP, 0).next_u64();
    let ensemble = Ensemble::bootstrap(
        cfg.learner,
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::expert::label;

    /// DART keeps the expert's clean command as the label: every recorded action is the
    /// expert's action at the recorded pose, while the injected noise widens the visited
    /// states (the spread of lateral offsets grows with the noise).
    #[test]
    fn demonstrations_record_clean_expert_actions_under_injected_noise() {
        let spread = |noise: f64| {
            let cfg = DemoConfig {
                demo_episodes: 3,
                demo_steer_noise: noise,
                ..DemoConfig::default()
            };
            let runs = demonstration_runs(&cfg, &Progress::new());
            assert_eq!(runs.len(), 3);
            let mut sq = 0.0;
            let mut n = 0.0;
            for run in &runs {
                for st in &run.steps {
                    let (f, a) = label(&cfg.expert, &run.lane, &st.pose);
                    assert!((a.steer - st.action.steer).abs() < 1e-9);
                    assert!((a.accel - st.action.accel).abs() < 1e-9);
                    sq += f[0] * f[0];
                    n += 1.0;
                }
            }
            (sq / n).sqrt()
        };
        let (quiet, noisy) = (spread(0.0), spread(0.1));
        // Our own bound (1.5x): DART's point (Laskey et al. 2017) is that injected noise
        // widens the states visited; the factor is not from the paper.
        assert!(noisy > 1.5 * quiet, "rms lateral {quiet} -> {noisy}");
    }
}
