//! `countersteer rounds DIR`: the trend across rounds (did aggregation pay off?).

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use super::progress_bar::Bar;
use super::score::load;
use countersteer::progress::Progress;
use countersteer::trend::{NOVELTY_QUANTILES, RoundTrend, campaign_trend};

/// Arguments of `rounds`.
#[derive(Debug, Args)]
pub struct RoundsArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Print the trend as JSON (one object per round) instead of a table.
    #[arg(long)]
    pub json: bool,
    /// Score every round again even when saved scores exist.
    #[arg(long)]
    pub rescore: bool,
}

/// Runs `rounds`.
pub fn run(a: RoundsArgs) -> Result<(), CliError> {
    let c = load(&a.dir)?;
    let progress = Progress::new();
    let trend = {
        let _bar = Bar::follow(&progress);
        campaign_trend(&c, a.rescore, &progress)?
    };
    if a.json {
        let text =
            serde_json::to_string_pretty(&trend).map_err(|e| CliError::invalid(e.to_string()))?;
        say!("{text}");
        return Ok(());
    }
    print_table(&trend);
    Ok(())
}

fn print_table(trend: &[RoundTrend]) {
    let q: Vec<String> = NOVELTY_QUANTILES
        .iter()
        .map(|q| format!("nov q{:.0}", q * 100.0))
        .collect();
    say!(
        "{:>5} {:>8} {:>8} {:>8} {:>10} {:>10} {:>9} {:>9} {:>9} {:>9} {:>7}",
        "round",
        "episodes",
        "steps",
        "flagged",
        "excur/ep",
        "interv/ep",
        "fail/ep",
        q[0],
        q[1],
        q[2],
        "labels"
    );
    for r in trend {
        let fail = r
            .failures
            .map_or("-".to_string(), |f| format!("{:.2}", r.per_episode(f)));
        let nq = |i: usize| r.novelty_quantiles.get(i).copied().unwrap_or(f32::NAN);
        say!(
            "{:>5} {:>8} {:>8} {:>7.1}% {:>10.2} {:>10.2} {:>9} {:>9.3} {:>9.3} {:>9.3} {:>7}",
            r.round,
            r.episodes,
            r.steps,
            100.0 * r.flagged_share(),
            r.per_episode(r.excursions),
            r.per_episode(r.interventions),
            fail,
            nq(0),
            nq(1),
            nq(2),
            r.labels
        );
    }
    say!("(labels: standing verdicts in the ledgers on each round's steps)");
}
