//! Closed-loop episodes: a policy drives the rover along a lane, optionally with the expert
//! taking over past a lateral-offset limit, and the metrics of the result.

use super::expert::PurePursuit;
use super::features::{Features, features};
use super::lane::Lane;
use super::learner::Ensemble;
use super::policy::{Action, Observation, Policy};
use super::rng::SplitMix64;
use super::vehicle::Pose;

/// Added to an episode's cost when the rover left the lane.
pub const DEPARTURE_COST: f64 = 10.0;

/// When the expert takes over and hands back (scripted interventions).
#[derive(Debug, Clone, PartialEq)]
pub struct InterventionRule {
    /// The expert takes over once `|lateral_offset|` exceeds this (m). The default, 0.6 m
    /// (half of the lane's half-width), keeps every round 2 episode of seeds 1 to 10 inside
    /// the lane; at 0.8 m the radial basis learner, which leaves the line at a steep heading,
    /// left the lane once in seeds 1 to 3.
    pub engage_offset: f64,
    /// It hands back once `|lateral_offset|` is below this ...
    pub release_offset: f64,
    /// ... and `|heading_error|` below this (rad).
    pub release_heading: f64,
}

impl Default for InterventionRule {
    fn default() -> Self {
        InterventionRule {
            engage_offset: 0.6,
            release_offset: 0.15,
            release_heading: 0.08,
        }
    }
}

/// How episodes are run.
#[derive(Debug, Clone, PartialEq)]
pub struct RolloutConfig {
    /// Seconds per step.
    pub dt: f64,
    /// Most steps per episode.
    pub max_steps: usize,
    /// The episode stops when `|lateral_offset|` exceeds this (the rover reached a tree row).
    pub stop_offset: f64,
    /// Distance before the lane's end at which the episode stops (m).
    pub end_margin: f64,
    /// Standard deviation of the steering actuator's noise (rad).
    pub steer_noise: f64,
    /// Arc length of the start (m).
    pub start_s: f64,
    /// Standard deviations of the start's lateral offset (m) and heading error (rad).
    pub start_spread: (f64, f64),
    /// Start speed (m/s).
    pub start_speed: f64,
    /// Scripted interventions, if any.
    pub intervention: Option<InterventionRule>,
}

impl Default for RolloutConfig {
    fn default() -> Self {
        RolloutConfig {
            dt: 0.1,
            max_steps: 300,
            stop_offset: 1.8,
            end_margin: 8.0,
            steer_noise: 0.02,
            start_s: 2.0,
            start_spread: (0.15, 0.05),
            start_speed: 1.0,
            intervention: None,
        }
    }
}

/// One recorded step.
#[derive(Debug, Clone, PartialEq)]
pub struct Step {
    /// Time index (steps since the start).
    pub t: i64,
    /// World pose and speed at this step.
    pub pose: Pose,
    /// State features at this step.
    pub features: Features,
    /// The commanded action: the driving policy's, or the expert's during an intervention.
    pub action: Action,
    /// True while the expert has taken over.
    pub intervention: bool,
    /// Ensemble members' actions (empty without an ensemble).
    pub samples: Vec<Action>,
}

/// Who drives an episode.
#[derive(Clone, Copy)]
pub struct Drivers<'a> {
    /// The driving policy.
    pub policy: &'a dyn Policy,
    /// The expert, for scripted interventions.
    pub expert: &'a PurePursuit,
    /// An ensemble whose members' actions are recorded as samples.
    pub ensemble: Option<&'a Ensemble>,
}

/// A start pose near the lane's start, perturbed by the configured spread.
pub fn start_pose(lane: &Lane, cfg: &RolloutConfig, rng: &mut SplitMix64) -> Pose {
    let lateral = cfg.start_spread.0 * rng.normal();
    let heading = cfg.start_spread.1 * rng.normal();
    let (x, y) = lane.offset_point(cfg.start_s, lateral);
    let (_, _, h) = lane.pose_at(cfg.start_s);
    Pose {
        x,
        y,
        yaw: h + heading,
        v: cfg.start_speed,
    }
}

/// Runs one episode from `start`; `rng` draws the actuator noise.
pub fn rollout(
    lane: &Lane,
    start: Pose,
    drivers: &Drivers<'_>,
    cfg: &RolloutConfig,
    rng: &mut SplitMix64,
) -> Vec<Step> {
    let mut steps = Vec::with_capacity(cfg.max_steps);
    let mut pose = start;
    let mut hint = None;
    let mut expert_driving = false;
    for t in 0..cfg.max_steps {
        let proj = lane.project(pose.x, pose.y, hint);
        hint = Some(proj.index);
        if proj.lateral.abs() > cfg.stop_offset || proj.s > lane.length() - cfg.end_margin {
            break;
        }
        let f = features(lane, &pose, &proj);
        let obs = Observation {
            pose: &pose,
            lane,
            projection: &proj,
            features: &f,
        };
        if let Some(rule) = &cfg.intervention {
            expert_driving = if expert_driving {
                !(proj.lateral.abs() < rule.release_offset
                    && f[super::features::HEADING].abs() < rule.release_heading)
            } else {
                proj.lateral.abs() > rule.engage_offset
            };
        }
        let action = if expert_driving {
            drivers.expert.act(&obs)
        } else {
            drivers.policy.act(&obs)
        };
        let samples = drivers.ensemble.map(|e| e.samples(&f)).unwrap_or_default();
        steps.push(Step {
            t: t as i64,
            pose,
            features: f,
            action,
            intervention: expert_driving,
            samples,
        });
        let steer = action.steer + cfg.steer_noise * rng.normal();
        pose = drivers.expert.car.step(&pose, steer, action.accel, cfg.dt);
    }
    steps
}

/// How an episode went.
#[derive(Debug, Clone, PartialEq)]
pub struct EpisodeMetrics {
    /// Recorded steps.
    pub steps: usize,
    /// True when `|lateral_offset|` exceeded the lane's half-width at some step.
    pub left_lane: bool,
    /// First step outside the lane.
    pub first_departure: Option<usize>,
    /// Mean `|lateral_offset|` (m).
    pub mean_abs_lateral: f64,
    /// Largest `|lateral_offset|` (m).
    pub max_abs_lateral: f64,
    /// Steps driven by the expert after an intervention.
    pub intervention_steps: usize,
    /// Cost: the time integral of `(lateral_offset / half_width)^2` (s) plus
    /// [`DEPARTURE_COST`] when the rover left the lane.
    pub cost: f64,
}

/// The metrics of a recorded episode.
pub fn episode_metrics(steps: &[Step], half_width: f64, dt: f64) -> EpisodeMetrics {
    let lat = |s: &Step| s.features[super::features::LATERAL].abs();
    let first_departure = steps.iter().position(|s| lat(s) > half_width);
    let n = steps.len().max(1) as f64;
    let tracking: f64 = steps
        .iter()
        .map(|s| (lat(s) / half_width).powi(2) * dt)
        .sum();
    EpisodeMetrics {
        steps: steps.len(),
        left_lane: first_departure.is_some(),
        first_departure,
        mean_abs_lateral: steps.iter().map(lat).sum::<f64>() / n,
        max_abs_lateral: steps.iter().map(lat).fold(0.0, f64::max),
        intervention_steps: steps.iter().filter(|s| s.intervention).count(),
        cost: tracking
            + if first_departure.is_some() {
                DEPARTURE_COST
            } else {
                0.0
            },
    }
}
