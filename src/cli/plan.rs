//! `countersteer plan DIR --round N --budget B`: choose the steps the expert should review.

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use super::score::{build_and_score, load};
use crate::campaign::{Campaign, StepTable};
use crate::ledger::read_ledgers;
use crate::novelty::RoundScores;
use crate::novelty::store::{load_scores, save_scores, scores_path};
use crate::review::sitting::judgements;
use crate::review::store::save_review_list;
use crate::review::{PlanSettings, ReviewList, plan, states_of_rows};

/// Arguments of `plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Round number (its folder under rounds/).
    #[arg(long)]
    pub round: u32,
    /// Most steps on the list.
    #[arg(long, default_value_t = 50)]
    pub budget: usize,
    /// Fewest steps between two entries of one episode.
    #[arg(long, default_value_t = 10)]
    pub min_gap: usize,
    /// Steps before an intervention that are candidates.
    #[arg(long, default_value_t = 10)]
    pub before_intervention: usize,
    /// Steps before the end of an episode that failed (its outcome is a failure) that are
    /// candidates (at most a quarter of the budget); 0, the default, leaves them out (on the
    /// orchard study they cost departures, see README).
    #[arg(long, default_value_t = 0)]
    pub before_failure: usize,
    /// Action gap (share of a channel's range) from which a step is a candidate.
    #[arg(long, default_value_t = 0.25)]
    pub action_gap: f32,
    /// Score the round again even when saved scores exist.
    #[arg(long)]
    pub rescore: bool,
    /// Leave the budget unspent once the onsets, peaks, steps before interventions and large
    /// action gaps are chosen, instead of filling it with the excursions' other flagged steps.
    #[arg(long)]
    pub no_fill: bool,
}

fn scores_for(c: &Campaign, a: &PlanArgs, steps: &StepTable) -> Result<RoundScores, CliError> {
    if !a.rescore && scores_path(&c.root, a.round).is_file() {
        match load_scores(&c.root, a.round, steps) {
            Ok(s)
                if s.k == c.file.novelty.k.min(c.demonstrations.len())
                    && s.alpha == c.file.novelty.alpha =>
            {
                eprintln!(
                    "using saved scores in {}",
                    scores_path(&c.root, a.round).display()
                );
                return Ok(s);
            }
            Ok(_) => eprintln!("saved scores were made with other novelty settings; scoring again"),
            Err(e) => eprintln!("{e}; scoring again"),
        }
    }
    let (_, s) = build_and_score(c, a.round)?;
    save_scores(&c.root, a.round, steps, &s).map_err(|e| CliError::invalid(e.to_string()))?;
    Ok(s)
}

/// Runs `plan`.
pub fn run(a: PlanArgs) -> Result<(), CliError> {
    if a.budget == 0 {
        return Err(CliError::usage("--budget must be at least 1"));
    }
    let c = load(&a.dir)?;
    let steps = &c
        .round(a.round)
        .ok_or_else(|| CliError::usage(format!("no round {} in rounds/", a.round)))?
        .steps;
    let scores = scores_for(&c, &a, steps)?;
    let settings = PlanSettings {
        budget: a.budget,
        min_gap: a.min_gap,
        pre_intervention: a.before_intervention,
        action_gap_min: a.action_gap,
        fill: !a.no_fill,
        failures: c.spec().failure_indices(),
        before_failure: a.before_failure,
        ..Default::default()
    };
    let judged = judged_rows(&c, a.round, steps)?;
    if !judged.is_empty() {
        println!(
            "{} step(s) of round {} already judged in the ledgers: the list avoids their ground",
            judged.len(),
            a.round
        );
    }
    let list = plan(steps, &scores, &states_of_rows(steps, &judged), &settings);
    print_list(steps, &list);
    let path = save_review_list(&c.root, a.round, steps, &list)
        .map_err(|e| CliError::invalid(e.to_string()))?;
    println!("wrote {}", path.display());
    Ok(())
}

/// Rows of the round with a standing verdict in any annotator's ledger, each once.
fn judged_rows(c: &Campaign, round: u32, steps: &StepTable) -> Result<Vec<usize>, CliError> {
    let ledgers = read_ledgers(&c.root).map_err(|e| CliError::invalid(e.to_string()))?;
    super::correct::warn_skipped_ledgers(&c.root);
    let mut rows: Vec<usize> = ledgers
        .iter()
        .flat_map(|l| judgements(steps, round, &l.records))
        .map(|j| j.row)
        .collect();
    rows.sort_unstable();
    rows.dedup();
    Ok(rows)
}

fn print_list(steps: &StepTable, list: &ReviewList) {
    println!(
        "review list: {} step(s) chosen from {} candidate(s) ({} in the diversity pool); covering radius {:.3}",
        list.entries.len(),
        list.candidates,
        list.pool,
        list.covering_radius
    );
    println!(
        "{:>4}  {:<24} {:>7}  {:>8} {:>9} {:>7}  reasons",
        "#", "episode", "t", "novelty", "p-value", "gap"
    );
    for (i, e) in list.entries.iter().enumerate() {
        let reasons: Vec<&str> = e.reasons.iter().map(|r| r.as_str()).collect();
        println!(
            "{:>4}  {:<24} {:>7}  {:>8.3} {:>9.4} {:>7.3}  {}",
            i + 1,
            steps.episodes[e.episode].name,
            e.t,
            e.novelty,
            e.p_value,
            e.action_gap,
            reasons.join(", ")
        );
    }
}
