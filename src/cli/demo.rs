//! `countersteer demo DIR`: write the orchard-rover demo campaign.

use std::path::PathBuf;

use clap::Args;

use super::{CliError, progress_bar::Bar};
use countersteer::progress::Progress;
use countersteer::sim::{DemoConfig, DemoError, LearnerKind, write_demo_campaign};

/// Arguments of `demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Folder to create the campaign in (must be new or empty).
    pub dir: PathBuf,
    /// Seed of every random draw: the same seed gives the same files.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Learner episodes in each round.
    #[arg(long, default_value_t = 20, value_parser = clap::value_parser!(u16).range(1..=2000))]
    pub episodes: u16,
    /// Expert demonstration episodes.
    #[arg(long, default_value_t = DemoConfig::default().demo_episodes as u16,
          value_parser = clap::value_parser!(u16).range(1..=5000))]
    pub demo_episodes: u16,
    /// Steering noise injected while the expert drives the demonstrations (rad, standard
    /// deviation); the recorded actions stay the expert's clean commands.
    #[arg(long, default_value_t = DemoConfig::default().demo_steer_noise)]
    pub demo_steer_noise: f64,
    /// Episodes per round that get top-down frame images.
    #[arg(long, default_value_t = 1)]
    pub frame_episodes: u16,
    /// The learner that drives the rounds: rbf (radial basis functions), ridge (linear) or
    /// knn (nearest neighbours).
    #[arg(long, default_value = DemoConfig::default().learner.name())]
    pub learner: String,
}

/// Runs `demo`.
pub fn run(a: DemoArgs) -> Result<(), CliError> {
    if !(0.0..=0.5).contains(&a.demo_steer_noise) {
        return Err(CliError::usage(format!(
            "--demo-steer-noise must be between 0 and 0.5 rad, not {}",
            a.demo_steer_noise
        )));
    }
    let learner = LearnerKind::from_name(&a.learner).ok_or_else(|| {
        CliError::usage(format!(
            "--learner {}: expected rbf, ridge or knn",
            a.learner
        ))
    })?;
    let cfg = DemoConfig {
        seed: a.seed,
        learner,
        episodes: a.episodes as usize,
        demo_episodes: a.demo_episodes as usize,
        demo_steer_noise: a.demo_steer_noise,
        frame_episodes: a.frame_episodes as usize,
        ..DemoConfig::default()
    };
    let progress = Progress::new();
    let result = {
        let _bar = Bar::follow(&progress);
        write_demo_campaign(&a.dir, &cfg, &progress)
    };
    let summary = result.map_err(|e| match e {
        DemoError::NotEmpty(_) => CliError::usage(e.to_string()),
        other => CliError::invalid(other.to_string()),
    })?;
    say!("demo campaign written to {}", a.dir.display());
    for s in &summary.sets {
        say!(
            "  {:<15} {:>4} episodes {:>7} steps, {:>3.0}% left the lane, {} intervention steps",
            s.label,
            s.episodes,
            s.steps,
            100.0 * s.departure_share,
            s.intervention_steps
        );
    }
    say!("  {} frame images", summary.frames);
    Ok(())
}
