//! `countersteer study DIR`: the labelling-strategy study on the demo scenario.

use std::path::PathBuf;

use clap::Args;

use super::{CliError, progress_bar::Bar};
use countersteer::progress::Progress;
use countersteer::study::{
    LearnerKind, ResultRow, Strategy, StudyConfig, output_dir, run_study, write_csv, write_plot,
};

/// Arguments of `study`.
#[derive(Debug, Args)]
pub struct StudyArgs {
    /// Campaign folder to write the results into (under `study/`); created when missing.
    pub dir: PathBuf,
    /// Seed of every draw.
    #[arg(long, default_value_t = 11)]
    pub seed: u64,
    /// Aggregation rounds.
    #[arg(long, default_value_t = 4)]
    pub rounds: usize,
    /// Expert demonstration episodes for the first learner.
    #[arg(long, default_value_t = 20)]
    pub demo_episodes: usize,
    /// Learner episodes per round.
    #[arg(long, default_value_t = 20)]
    pub train_episodes: usize,
    /// Evaluation episodes (fixed seeds).
    #[arg(long, default_value_t = 100)]
    pub eval_episodes: usize,
    /// Expert labels per round for the budgeted strategies.
    #[arg(long, default_value_t = 300)]
    pub budget: usize,
    /// The learner refit after every round: ridge, knn or rbf.
    #[arg(long, default_value = "rbf")]
    pub learner: String,
    /// Steering noise injected while the expert drives demonstrations (rad); the labels
    /// stay the expert's clean commands.
    #[arg(long, default_value_t = countersteer::sim::DemoConfig::default().demo_steer_noise)]
    pub demo_noise: f64,
    /// Steps before a failed episode's end (the rover left the lane) that the review list
    /// may choose; 0 leaves them out.
    #[arg(long, default_value_t = countersteer::review::PlanSettings::default().before_failure)]
    pub before_failure: usize,
}

/// Runs `study`.
pub fn run(a: StudyArgs) -> Result<(), CliError> {
    let learner = LearnerKind::from_name(&a.learner).ok_or_else(|| {
        CliError::usage(format!(
            "--learner {}: expected ridge, knn or rbf",
            a.learner
        ))
    })?;
    if !(a.demo_noise.is_finite() && a.demo_noise >= 0.0) {
        return Err(CliError::usage(format!(
            "--demo-noise {}: expected a finite value of at least 0",
            a.demo_noise
        )));
    }
    let cfg = StudyConfig {
        learner,
        demo_steer_noise: a.demo_noise,
        seed: a.seed,
        rounds: a.rounds.max(1),
        demo_episodes: a.demo_episodes.max(2),
        train_episodes: a.train_episodes.max(1),
        eval_episodes: a.eval_episodes.max(1),
        budget: a.budget.max(1),
        before_failure: a.before_failure,
        ..StudyConfig::default()
    };
    let out = output_dir(&a.dir);
    std::fs::create_dir_all(&out)
        .map_err(|e| CliError::usage(format!("{}: {e}", out.display())))?;
    let progress = Progress::new();
    let rows = {
        let _bar = Bar::follow(&progress);
        run_study(&cfg, &out.join("work"), &progress)
            .map_err(|e| CliError::invalid(e.to_string()))?
    };
    print_table(&rows);
    let csv = out.join("results.csv");
    countersteer::durable::write_file(&csv, |w| write_csv(&rows, w))
        .map_err(|e| CliError::usage(format!("{}: {e}", csv.display())))?;
    let png = out.join("departures.png");
    write_plot(&rows, &png).map_err(|e| CliError::usage(format!("{}: {e}", png.display())))?;
    say!("wrote {} and {}", csv.display(), png.display());
    Ok(())
}

fn print_table(rows: &[ResultRow]) {
    say!(
        "{:<12} {:>5} {:>7}  {:>22}  {:>22}  {:>22}",
        "strategy",
        "round",
        "labels",
        "lane departures [95% CI]",
        "mean |offset| m",
        "episode cost"
    );
    for s in Strategy::ALL {
        for r in rows.iter().filter(|r| r.strategy == s) {
            let (d, l, c) = (r.departure, r.lateral, r.cost);
            say!(
                "{:<12} {:>5} {:>7}  {:>6.3} [{:.3}, {:.3}]  {:>6.3} [{:.3}, {:.3}]  {:>6.2} [{:.2}, {:.2}]",
                s.name(),
                r.round,
                r.labels,
                d.mean,
                d.low,
                d.high,
                l.mean,
                l.low,
                l.high,
                c.mean,
                c.low,
                c.high
            );
        }
    }
}
