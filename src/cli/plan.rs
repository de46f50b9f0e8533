//! `countersteer plan DIR --round N --budget B`: choose the steps the expert should review.

use std::path::PathBuf;

use clap::Args;

use super::progress_bar::Bar;
use super::score::load;
use super::{CliError, json};
use countersteer::campaign::{Campaign, StepTable};
use countersteer::novelty::RoundScores;
use countersteer::progress::Progress;
use countersteer::review::store::save_review_list;
use countersteer::review::{
    DEFAULT_BUDGET, DEFAULT_SAMPLE_SHARE, PlanSettings, Planner, ReviewList,
};
use countersteer::workflow::{AnalysisOptions, ScoreSource, analyse, tally_campaign};
use serde_json::{Value, json};

/// Arguments of `plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Round number (its folder under rounds/).
    #[arg(long)]
    pub round: u32,
    /// Most steps on the list.
    #[arg(long, default_value_t = DEFAULT_BUDGET)]
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
    /// Share of the budget drawn uniformly from the round's visited steps, with known
    /// inclusion probabilities (0 to 1; see README, "The review list"); the rest goes to
    /// onsets, peaks and the other focused candidates.
    #[arg(long, default_value_t = DEFAULT_SAMPLE_SHARE, value_parser = share)]
    pub sample_share: f32,
    /// Seed of the sampled part's draw.
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
    /// Print one JSON object on standard output instead of the text list (see README).
    #[arg(long)]
    pub json: bool,
}

fn share(s: &str) -> Result<f32, String> {
    match s.parse::<f32>() {
        Ok(x) if (0.0..=1.0).contains(&x) => Ok(x),
        _ => Err(format!("`{s}` is not a share between 0 and 1")),
    }
}

fn analysis_for(c: &Campaign, a: &PlanArgs) -> Result<RoundScores, CliError> {
    let options = AnalysisOptions {
        rescore: a.rescore,
        save: true,
        ..Default::default()
    };
    let progress = Progress::new();
    let analysis = {
        let _bar = Bar::follow(&progress);
        analyse(c, a.round, options, &progress)
    }
    .map_err(CliError::from)?;
    match (&analysis.source, &analysis.stale) {
        (ScoreSource::Saved(p), _) => tell!("using saved scores in {}", p.display()),
        (ScoreSource::Scored(_), Some(why)) => tell!("{why}; scoring again"),
        (ScoreSource::Scored(_), None) => {}
    }
    if let (ScoreSource::Scored(_), Some(m)) = (&analysis.source, &analysis.model) {
        for w in m.warnings() {
            tell!("warning: {w}");
        }
    }
    Ok(analysis.scores)
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
    let scores = analysis_for(&c, &a)?;
    let settings = PlanSettings {
        budget: a.budget,
        min_gap: a.min_gap,
        pre_intervention: a.before_intervention,
        action_gap_min: a.action_gap,
        fill: !a.no_fill,
        failures: c.spec().failure_indices(),
        before_failure: a.before_failure,
        sample_share: a.sample_share,
        seed: a.seed,
        ..Default::default()
    };
    let judged = judged_rows(&c, a.round, steps)?;
    let list =
        Planner::new(steps, &scores, &settings).plan_judged(steps, &scores, &judged, a.budget);
    // Saved before anything is printed: a reader that stops early (`| head`) loses no file.
    let path = save_review_list(&c.root, a.round, steps, &list)
        .map_err(|e| CliError::invalid(e.to_string()))?;
    if a.json {
        let mut v = list_json(steps, &list);
        v["round"] = json!(a.round);
        v["already_judged"] = json!(judged.len());
        v["review_list_file"] = json!(path.display().to_string());
        json::print_ok(v);
        return Ok(());
    }
    if !judged.is_empty() {
        say!(
            "{} step(s) of round {} already judged in the ledgers: the list avoids their ground",
            judged.len(),
            a.round
        );
    }
    print_list(steps, &list);
    say!("wrote {}", path.display());
    Ok(())
}

/// Rows of the round with a standing verdict in any annotator's ledger, each once.
fn judged_rows(c: &Campaign, round: u32, steps: &StepTable) -> Result<Vec<usize>, CliError> {
    let ledgers = tally_campaign(c)?.ledgers;
    super::correct::warn_skipped_ledgers(&c.root);
    Ok(countersteer::workflow::judged_rows(
        steps, round, &ledgers, None,
    ))
}

/// The review list as JSON (non-finite numbers become `null`).
fn list_json(steps: &StepTable, list: &ReviewList) -> Value {
    let entries: Vec<Value> = list
        .entries
        .iter()
        .map(|e| {
            let reasons: Vec<&str> = e.reasons.iter().map(|r| r.as_str()).collect();
            json!({
                "episode": steps.episodes[e.episode].name,
                "t": e.t,
                "novelty": e.novelty,
                "p_value": e.p_value,
                "action_gap": e.action_gap,
                "priority": e.priority,
                "reasons": reasons,
                "inclusion": e.inclusion,
            })
        })
        .collect();
    json!({
        "candidates": list.candidates,
        "pool": list.pool,
        "covering_radius": list.covering_radius,
        "notes": list.notes.iter().map(|n| n.to_string()).collect::<Vec<_>>(),
        "entries": entries,
    })
}

fn print_list(steps: &StepTable, list: &ReviewList) {
    say!(
        "review list: {} step(s) chosen from {} candidate(s) ({} in the diversity pool); covering radius {:.3}",
        list.entries.len(),
        list.candidates,
        list.pool,
        list.covering_radius
    );
    say!(
        "{:>4}  {:<24} {:>7}  {:>8} {:>9} {:>7}  reasons",
        "#",
        "episode",
        "t",
        "novelty",
        "p-value",
        "gap"
    );
    for n in &list.notes {
        say!("note: {n}");
    }
    for (i, e) in list.entries.iter().enumerate() {
        let reasons: Vec<&str> = e.reasons.iter().map(|r| r.as_str()).collect();
        say!(
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
