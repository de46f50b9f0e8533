//! The study: several rounds of aggregation on the demo scenario, for several labelling
//! strategies at equal expert budgets, with the scripted pure-pursuit expert standing in for
//! the human labeller.
//!
//! Every labelled strategy goes through the same library path as the workbench: the round's
//! rollouts are written as a campaign round and loaded back, scored ([`crate::novelty`]),
//! planned ([`crate::review`]), labelled into a ledger ([`crate::ledger`]), tallied
//! ([`crate::consensus`]), exported as a merged set ([`crate::export`]) and read back with the
//! export reader; the learner is refit on what the reader returns.
//!
//! Strategies (Ross, Gordon & Bagnell 2011 for DAgger):
//! * `more-demos`: behaviour cloning with as many extra expert demonstration states as the
//!   budget (more of the expert's own driving instead of corrections);
//! * `dagger-all`: every state the learner visited is labelled;
//! * `random`: uniformly random visited states, as many per round as the review list used
//!   (the full budget when the review list is not run);
//! * `top-novelty`: the most novel visited states, no diversity, as many per round as the
//!   review list used (the full budget when the review list is not run);
//! * `review-list`: the countersteer review list.
//!
//! The learner refit after every round is a setting ([`LearnerKind`]); the default, a radial
//! basis function network, has local capacity: it is right near its training states and falls
//! back to its mean action elsewhere, which is what labelling for coverage is meant to fix.

pub mod chain;
mod label;
mod report;

use std::path::{Path, PathBuf};

pub use crate::sim::model::{LearnerKind, Model};
pub use report::{write_csv, write_plot};

use crate::progress::Progress;
use crate::review::PlanSettings;
use crate::sim::{DemoConfig, EpisodeRun, RolloutConfig};

/// A labelling strategy.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Strategy {
    /// Extra expert demonstration states instead of corrections.
    MoreDemos,
    /// Every visited state labelled (full DAgger).
    DaggerAll,
    /// Uniformly random visited states.
    Random,
    /// The most novel visited states.
    TopNovelty,
    /// The countersteer review list.
    ReviewList,
}

impl Strategy {
    /// All strategies, in report order.
    pub const ALL: [Strategy; 5] = [
        Strategy::MoreDemos,
        Strategy::DaggerAll,
        Strategy::Random,
        Strategy::TopNovelty,
        Strategy::ReviewList,
    ];

    /// Short name used in tables, folders and the plot.
    pub fn name(self) -> &'static str {
        match self {
            Strategy::MoreDemos => "more-demos",
            Strategy::DaggerAll => "dagger-all",
            Strategy::Random => "random",
            Strategy::TopNovelty => "top-novelty",
            Strategy::ReviewList => "review-list",
        }
    }
}

/// Sizes and seeds of a study.
#[derive(Debug, Clone)]
pub struct StudyConfig {
    /// Seed of every draw.
    pub seed: u64,
    /// Aggregation rounds after the initial behaviour-cloned learner.
    pub rounds: usize,
    /// Expert demonstration episodes the first learner is fit on.
    pub demo_episodes: usize,
    /// Learner episodes rolled out per round (the states available for labelling).
    pub train_episodes: usize,
    /// Fresh evaluation episodes (fixed seeds, the same for every strategy and round).
    pub eval_episodes: usize,
    /// Expert labels per round for the budgeted strategies.
    pub budget: usize,
    /// Bootstrap resamples for the confidence intervals.
    pub bootstrap: usize,
    /// Strategies to run.
    pub strategies: Vec<Strategy>,
    /// The learner refit after every round.
    pub learner: LearnerKind,
    /// Steering noise injected while the expert drives demonstrations (rad; DART, see
    /// [`DemoConfig::demo_steer_noise`]).
    pub demo_steer_noise: f64,
    /// Steps before a failed episode's end that the review list may choose (0: none).
    pub before_failure: usize,
}

impl Default for StudyConfig {
    fn default() -> Self {
        StudyConfig {
            seed: 11,
            rounds: 4,
            demo_episodes: 20,
            train_episodes: 20,
            eval_episodes: 100,
            budget: 300,
            bootstrap: 1000,
            strategies: Strategy::ALL.to_vec(),
            learner: LearnerKind::Rbf,
            demo_steer_noise: DemoConfig::default().demo_steer_noise,
            before_failure: PlanSettings::default().before_failure,
        }
    }
}

/// A mean with a 95 % bootstrap percentile interval (Efron & Tibshirani 1993).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// Mean over evaluation episodes.
    pub mean: f64,
    /// 2.5 % bootstrap percentile.
    pub low: f64,
    /// 97.5 % bootstrap percentile.
    pub high: f64,
}

/// One line of the result table.
#[derive(Debug, Clone, PartialEq)]
pub struct ResultRow {
    /// Strategy.
    pub strategy: Strategy,
    /// Round (0 = the learner fit on the demonstrations alone).
    pub round: usize,
    /// Expert labels spent so far.
    pub labels: usize,
    /// Share of evaluation episodes that left the lane.
    pub departure: Estimate,
    /// Mean absolute lateral offset (m).
    pub lateral: Estimate,
    /// Mean episode cost.
    pub cost: Estimate,
}

/// Error of a study run.
#[derive(Debug, thiserror::Error)]
pub enum StudyError {
    /// A library step failed; the message names it.
    #[error("{stage}: {message}")]
    Step {
        /// What was being done.
        stage: String,
        /// The underlying error.
        message: String,
    },
}

fn step_err(stage: &str) -> impl Fn(String) -> StudyError + '_ {
    move |message| StudyError::Step {
        stage: stage.to_string(),
        message,
    }
}

const EVAL_SET: u64 = 9_000;
const EXTRA_DEMO_SET: u64 = 5_000;

fn sim_config(cfg: &StudyConfig, episodes: usize) -> DemoConfig {
    DemoConfig {
        seed: cfg.seed,
        episodes,
        frame_episodes: 0,
        demo_steer_noise: cfg.demo_steer_noise,
        ..DemoConfig::default()
    }
}

/// Runs the study; the strategies' campaigns are written under `work`.
pub fn run_study(
    cfg: &StudyConfig,
    work: &Path,
    progress: &Progress,
) -> Result<Vec<ResultRow>, StudyError> {
    let demo_cfg = sim_config(cfg, cfg.demo_episodes);
    let demos = label::expert_runs(&demo_cfg, 0, progress);
    let learner0 = label::fit_runs(&demos, cfg.learner).map_err(step_err("fit"))?;
    let eval_cfg = sim_config(cfg, cfg.eval_episodes);
    let first = evaluate(cfg, &eval_cfg, &learner0, progress);
    let mut rows = Vec::new();
    // The review list runs first: random and top-novelty selection then spend exactly what it
    // spent in each round, so the three are compared at the same number of labels.
    let mut order = cfg.strategies.clone();
    order.sort_by_key(|&s| s != Strategy::ReviewList);
    let mut review_spend: Vec<usize> = Vec::new();
    for s in order {
        rows.push(ResultRow {
            strategy: s,
            round: 0,
            labels: 0,
            departure: first.0,
            lateral: first.1,
            cost: first.2,
        });
        let dir = work.join(s.name());
        let mut run = label::StrategyRun::create(s, &dir, &demos, learner0.clone(), cfg.learner)
            .map_err(step_err("setup"))?;
        for r in 1..=cfg.rounds {
            progress.stage(&format!("{} round {r}", s.name()), 0);
            let before = run.labels;
            let budget = match (s, review_spend.get(r - 1)) {
                (Strategy::Random | Strategy::TopNovelty, Some(&b)) => b,
                _ => cfg.budget,
            };
            run.round(cfg, r, budget, progress)?;
            if s == Strategy::ReviewList {
                review_spend.push(run.labels - before);
            }
            let (d, l, c) = evaluate(cfg, &eval_cfg, &run.learner, progress);
            rows.push(ResultRow {
                strategy: s,
                round: r,
                labels: run.labels,
                departure: d,
                lateral: l,
                cost: c,
            });
        }
    }
    rows.sort_by_key(|r| (Strategy::ALL.iter().position(|&s| s == r.strategy), r.round));
    Ok(rows)
}

/// Closed-loop evaluation of a learner on the fixed evaluation episodes.
pub fn evaluate(
    cfg: &StudyConfig,
    eval_cfg: &DemoConfig,
    learner: &Model,
    progress: &Progress,
) -> (Estimate, Estimate, Estimate) {
    let runs = label::learner_runs(
        eval_cfg,
        EVAL_SET,
        learner,
        &RolloutConfig::default(),
        progress,
    );
    let pick = |f: &dyn Fn(&EpisodeRun) -> f64| runs.iter().map(f).collect::<Vec<f64>>();
    let dep = pick(&|r| f64::from(u8::from(r.metrics.left_lane)));
    let lat = pick(&|r| r.metrics.mean_abs_lateral);
    let cost = pick(&|r| r.metrics.cost);
    let seed = cfg.seed ^ 0xB007;
    (
        bootstrap(&dep, cfg.bootstrap, seed),
        bootstrap(&lat, cfg.bootstrap, seed + 1),
        bootstrap(&cost, cfg.bootstrap, seed + 2),
    )
}

/// Mean and 95 % percentile bootstrap interval of `x` (resampling episodes with replacement).
pub fn bootstrap(x: &[f64], resamples: usize, seed: u64) -> Estimate {
    let n = x.len();
    let mean = x.iter().sum::<f64>() / n.max(1) as f64;
    if n == 0 || resamples == 0 {
        return Estimate {
            mean,
            low: mean,
            high: mean,
        };
    }
    let mut rng = crate::sim::rng::SplitMix64::new(seed);
    let mut means: Vec<f64> = (0..resamples)
        .map(|_| (0..n).map(|_| x[rng.index(n)]).sum::<f64>() / n as f64)
        .collect();
    means.sort_by(f64::total_cmp);
    let at = |q: f64| means[((q * (resamples - 1) as f64).round() as usize).min(resamples - 1)];
    Estimate {
        mean,
        low: at(0.025),
        high: at(0.975),
    }
}

/// Where `countersteer study` writes its results inside a campaign folder.
pub fn output_dir(campaign: &Path) -> PathBuf {
    campaign.join("study")
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A sample of eight 0/1 outcomes with three ones: the mean is 3/8 and every bootstrap
    /// mean is a multiple of 1/8 between 0 and 1 (common practice: percentile interval).
    #[test]
    fn bootstrap_interval_brackets_the_mean_on_the_right_grid() {
        let x = [1.0, 0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 0.0];
        let e = bootstrap(&x, 2000, 3);
        assert_eq!(e.mean, 0.375);
        assert!(e.low < 0.375 && e.high > 0.375);
        assert_eq!((e.low * 8.0).fract(), 0.0);
        assert!(e.low >= 0.0 && e.high <= 1.0);
        let same = bootstrap(&[0.5; 10], 100, 1);
        assert_eq!((same.low, same.high), (0.5, 0.5));
    }
}
