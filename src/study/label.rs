//! One strategy's campaign: roll the learner out, choose the states to label, label them
//! through a ledger, tally, export, read the merged set back and refit.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::{EXTRA_DEMO_SET, Strategy, StudyConfig, StudyError, sim_config, step_err};
use crate::campaign::{Campaign, LoadOptions, StepTable, load_campaign};
use crate::export::{ExportOptions, Format, export, read_merged};
use crate::ledger::{Correction, Ledger, Verdict, fingerprint};
use crate::progress::Progress;
use crate::review::{PlanSettings, plan};
use crate::sim::features::FEATURE_COUNT;
use crate::sim::rng::SplitMix64;
use crate::sim::scenario::run_set;
use std::sync::Arc;

use crate::sim::model::{LearnerKind, Model};
use crate::sim::{Action, DemoConfig, Drivers, EpisodeRun, RolloutConfig, demo_spec};

/// The annotator name under which the scripted expert's labels are written.
pub const SCRIPTED_EXPERT: &str = "scripted-expert";

/// Expert episodes of one set, driven as the demo scenario's demonstrations are (with its
/// demonstration steering noise; the recorded actions are the expert's clean commands).
pub fn expert_runs(cfg: &DemoConfig, set: u64, progress: &Progress) -> Vec<EpisodeRun> {
    let drivers = Drivers {
        policy: &cfg.expert,
        expert: &cfg.expert,
        ensemble: None,
    };
    let noisy = RolloutConfig {
        steer_noise: cfg.demo_steer_noise,
        ..cfg.rollout.clone()
    };
    run_set(cfg, set, &drivers, &noisy, progress)
}

/// Learner episodes of one set.
pub fn learner_runs(
    cfg: &DemoConfig,
    set: u64,
    learner: &Model,
    rollout: &RolloutConfig,
    progress: &Progress,
) -> Vec<EpisodeRun> {
    let drivers = Drivers {
        policy: learner,
        expert: &cfg.expert,
        ensemble: None,
    };
    run_set(cfg, set, &drivers, rollout, progress)
}

/// Fits a learner on the states and actions of some episodes.
pub fn fit_runs(runs: &[EpisodeRun], kind: LearnerKind) -> Result<Arc<Model>, String> {
    let (x, y) = crate::sim::scenario::training_data(runs);
    Model::fit(kind, &x, &y, None)
}

/// A strategy's campaign folder and learner.
pub struct StrategyRun {
    strategy: Strategy,
    dir: PathBuf,
    /// The current learner.
    pub learner: Arc<Model>,
    /// Expert labels spent so far.
    pub labels: usize,
    corrected: Vec<f32>,
    kind: LearnerKind,
}

fn io(e: std::io::Error) -> String {
    e.to_string()
}

impl StrategyRun {
    /// Writes a fresh campaign (spec + demonstrations) for a strategy.
    pub fn create(
        strategy: Strategy,
        dir: &Path,
        demos: &[EpisodeRun],
        learner: Arc<Model>,
        kind: LearnerKind,
    ) -> Result<Self, String> {
        if dir.exists() {
            std::fs::remove_dir_all(dir).map_err(io)?;
        }
        std::fs::create_dir_all(dir.join("demonstrations")).map_err(io)?;
        let file = serde_json::json!({
            "name": format!("study: {}", strategy.name()),
            "description": "Written by `countersteer study`: one labelling strategy's campaign.",
            "step_seconds": RolloutConfig::default().dt,
            "spec": demo_spec(),
        });
        crate::durable::write_bytes(&dir.join("campaign.json"), file.to_string().as_bytes())
            .map_err(io)?;
        write_table(
            &dir.join("demonstrations/expert.jsonl"),
            "demonstrations",
            &crate::sim::write::table(demos, "", 0, false),
        )?;
        Ok(StrategyRun {
            strategy,
            dir: dir.to_path_buf(),
            learner,
            labels: 0,
            corrected: Vec::new(),
            kind,
        })
    }

    /// One aggregation round.
    pub fn round(
        &mut self,
        cfg: &StudyConfig,
        r: usize,
        budget: usize,
        progress: &Progress,
    ) -> Result<(), StudyError> {
        let train = sim_config(cfg, cfg.train_episodes);
        if self.strategy == Strategy::MoreDemos {
            self.add_demonstrations(cfg, r, budget, progress)
                .map_err(step_err("more demonstrations"))?;
        } else {
            let runs = learner_runs(&train, r as u64, &self.learner, &train.rollout, progress);
            let rel = format!("rounds/{r}");
            std::fs::create_dir_all(self.dir.join(&rel))
                .map_err(|e| step_err("write round")(e.to_string()))?;
            let table = crate::sim::write::table(&runs, "", 0, false);
            write_table(&self.dir.join(&rel).join("rollouts.jsonl"), &rel, &table)
                .map_err(step_err("write round"))?;
            let c = self.load()?;
            let round = c
                .round(r as u32)
                .ok_or_else(|| step_err("load")(format!("round {r} missing")))?;
            let rows = self.select(cfg, &c, &round.steps, r, budget, progress)?;
            self.label(&c, &round.steps, r, &rows, &runs)
                .map_err(step_err("label"))?;
        }
        self.refit(r, progress)
    }

    fn load(&self) -> Result<Campaign, StudyError> {
        load_campaign(&self.dir, &LoadOptions::default(), &Progress::new())
            .map_err(|e| step_err("load")(e.to_string()))
    }

    fn add_demonstrations(
        &mut self,
        cfg: &StudyConfig,
        r: usize,
        budget: usize,
        progress: &Progress,
    ) -> Result<(), String> {
        let extra_cfg = sim_config(cfg, cfg.train_episodes);
        let runs = expert_runs(&extra_cfg, EXTRA_DEMO_SET + r as u64, progress);
        let total: usize = runs.iter().map(|x| x.steps.len()).sum();
        let mut keep = sample_without_replacement(total, budget, cfg.seed ^ (r as u64) << 8);
        keep.sort_unstable();
        let mut chosen = Vec::new();
        let mut at = 0;
        let mut k = keep.iter().peekable();
        for run in &runs {
            let steps: Vec<_> = run
                .steps
                .iter()
                .enumerate()
                .filter(|(i, _)| k.next_if_eq(&&(at + i)).is_some())
                .map(|(_, s)| s.clone())
                .collect();
            at += run.steps.len();
            if !steps.is_empty() {
                chosen.push(EpisodeRun {
                    name: format!("extra{r}-{}", run.name),
                    steps,
                    ..run.clone()
                });
            }
        }
        self.labels += keep.len();
        let table = crate::sim::write::table(&chosen, "", 0, false);
        write_table(
            &self.dir.join(format!("demonstrations/extra-{r:02}.jsonl")),
            "demonstrations",
            &table,
        )
    }

    fn select(
        &self,
        cfg: &StudyConfig,
        c: &Campaign,
        steps: &StepTable,
        r: usize,
        budget: usize,
        progress: &Progress,
    ) -> Result<Vec<usize>, StudyError> {
        let n = steps.len();
        let scored = || -> Result<_, StudyError> {
            // Every study round adds demonstrations, so the round is always scored afresh.
            let options = crate::workflow::AnalysisOptions {
                rescore: true,
                ..Default::default()
            };
            crate::workflow::analyse(c, r as u32, options, progress)
                .map(|a| a.scores)
                .map_err(|e| step_err("score")(e.to_string()))
        };
        Ok(match self.strategy {
            Strategy::MoreDemos | Strategy::DaggerAll => (0..n).collect(),
            Strategy::Random => sample_without_replacement(n, budget, cfg.seed ^ 0x5EED ^ r as u64),
            Strategy::TopNovelty => {
                let scores = scored()?;
                let mut rows: Vec<usize> = (0..n).collect();
                rows.sort_by(|&a, &b| {
                    scores.novelty[b]
                        .total_cmp(&scores.novelty[a])
                        .then(a.cmp(&b))
                });
                rows.truncate(budget);
                rows
            }
            Strategy::ReviewList => {
                let scores = scored()?;
                let settings = PlanSettings {
                    budget,
                    min_gap: 3,
                    failures: c.spec().failure_indices(),
                    before_failure: cfg.before_failure,
                    ..PlanSettings::default()
                };
                let l = plan(steps, &scores, &self.corrected, &settings);
                l.entries.iter().map(|e| e.row).collect()
            }
        })
    }

    fn label(
        &mut self,
        c: &Campaign,
        steps: &StepTable,
        r: usize,
        rows: &[usize],
        runs: &[EpisodeRun],
    ) -> Result<(), String> {
        let by_name: HashMap<&str, &EpisodeRun> =
            runs.iter().map(|x| (x.name.as_str(), x)).collect();
        let expert = DemoConfig::default().expert;
        let mut corrections = Vec::with_capacity(rows.len());
        for &row in rows {
            let ep = &steps.episodes[steps.episode_of(row)];
            let run = by_name
                .get(ep.name.as_str())
                .ok_or_else(|| format!("episode {} not simulated", ep.name))?;
            let step = run
                .steps
                .iter()
                .find(|s| s.t == steps.t[row])
                .ok_or_else(|| format!("{}:{} not simulated", ep.name, steps.t[row]))?;
            let a: Action = expert.expert_action(&step.pose, &run.lane);
            let action = [a.steer as f32, a.accel as f32];
            corrections.push(Correction {
                round: r as u32,
                episode: ep.name.clone(),
                t: steps.t[row],
                fingerprint: fingerprint(steps, row),
                verdict: Verdict::from_action(c.spec(), &action),
                note: None,
            });
            self.corrected.extend_from_slice(steps.state(row));
        }
        let (mut ledger, _) =
            Ledger::open(&self.dir, SCRIPTED_EXPERT).map_err(|e| e.to_string())?;
        ledger.append_all(corrections).map_err(|e| e.to_string())?;
        self.labels += rows.len();
        Ok(())
    }

    fn refit(&mut self, r: usize, progress: &Progress) -> Result<(), StudyError> {
        let c = self.load()?;
        let tally = crate::workflow::tally_campaign(&c)
            .map_err(|e| step_err("read ledgers")(e.to_string()))?
            .tally;
        let out = self.dir.join(format!("exports/merged-{r:02}.npz"));
        export(&c, &tally, &ExportOptions::new(Format::Npz), &out, progress)
            .map_err(|e| step_err("export")(e.to_string()))?;
        let merged =
            read_merged(&out, c.spec()).map_err(|e| step_err("read merged set")(e.to_string()))?;
        let x: Vec<[f64; FEATURE_COUNT]> = (0..merged.len())
            .map(|i| std::array::from_fn(|j| f64::from(merged.state(i)[j])))
            .collect();
        let a = merged.actions.chunks_exact(2).map(|v| Action {
            steer: f64::from(v[0]),
            accel: f64::from(v[1]),
        });
        let y: Vec<Action> = a.collect();
        let w: Vec<f64> = merged.weight.iter().map(|&v| f64::from(v)).collect();
        self.learner = Model::fit(self.kind, &x, &y, Some(&w)).map_err(step_err("fit"))?;
        Ok(())
    }
}

fn write_table(path: &Path, data_dir: &str, t: &StepTable) -> Result<(), String> {
    crate::durable::write_file(path, |w| {
        crate::campaign::write::write_jsonl(t, &demo_spec(), data_dir, w)
    })
    .map_err(|e| format!("{}: {e}", path.display()))
}

/// `k` distinct indices of `0..n` (all of them when `k >= n`), by a partial Fisher-Yates shuffle.
pub fn sample_without_replacement(n: usize, k: usize, seed: u64) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..n).collect();
    let mut rng = SplitMix64::new(seed);
    let k = k.min(n);
    for i in 0..k {
        let j = i + rng.index(n - i);
        idx.swap(i, j);
    }
    idx.truncate(k);
    idx
}
