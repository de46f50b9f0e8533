//! `countersteer score DIR --round N`: score every step of a round and save the signals.

use std::path::{Path, PathBuf};

use clap::Args;

use super::{CliError, campaign_dir, json, progress_bar::Bar};
use countersteer::campaign::{Campaign, LoadOptions, load_campaign};
use countersteer::novelty::explain::{describe, flagged_shares, top_features};
use countersteer::novelty::scale::ScaleOrigin;
use countersteer::novelty::store::{ScoresKey, save_scores};
use countersteer::novelty::{NoveltyError, NoveltyModel, RoundScores, build_model, score_round};
use countersteer::progress::Progress;
use countersteer::review::episode_stats;
use countersteer::review::{ExcursionSettings, excursions};
use serde_json::{Value, json};

/// Arguments of `score`.
#[derive(Debug, Args)]
pub struct ScoreArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Round number (its folder under rounds/).
    #[arg(long)]
    pub round: u32,
    /// Episodes listed in the summary.
    #[arg(long, default_value_t = 5)]
    pub worst: usize,
    /// Print one JSON object on standard output instead of the text summary (see README).
    #[arg(long)]
    pub json: bool,
}

/// Loads a campaign with a progress bar.
pub fn load(dir: &Path) -> Result<Campaign, CliError> {
    let dir = campaign_dir(dir)?;
    let progress = Progress::new();
    let _bar = Bar::follow(&progress);
    load_campaign(&dir, &LoadOptions::default(), &progress).map_err(|e| {
        CliError::invalid(format!(
            "{e}\n(run `countersteer check {}` for every problem)",
            dir.display()
        ))
    })
}

/// Builds the model and scores one round, with a progress bar.
pub fn build_and_score(c: &Campaign, round: u32) -> Result<(NoveltyModel, RoundScores), CliError> {
    let r = c.round(round).ok_or_else(|| {
        let have: Vec<String> = c.rounds.iter().map(|r| r.number.to_string()).collect();
        CliError::usage(format!(
            "no round {round} in rounds/ (found: {})",
            have.join(", ")
        ))
    })?;
    let progress = Progress::new();
    let _bar = Bar::follow(&progress);
    let err = |e: NoveltyError| CliError::invalid(e.to_string());
    let model = build_model(c, &progress).map_err(err)?;
    for w in model.warnings() {
        tell!("warning: {w}");
    }
    let scores = score_round(&model, c, &r.steps, &progress).map_err(err)?;
    Ok((model, scores))
}

/// Runs `score`.
pub fn run(a: ScoreArgs) -> Result<(), CliError> {
    let c = load(&a.dir)?;
    let (model, scores) = build_and_score(&c, a.round)?;
    let steps = &c
        .round(a.round)
        .ok_or_else(|| CliError::usage("round vanished"))?
        .steps;
    let path = save_scores(&c.root, a.round, steps, &scores, &ScoresKey::of(&c, steps))
        .map_err(|e| CliError::invalid(e.to_string()))?;
    if a.json {
        let mut v = summary_json(&c, &model, steps, &scores, a.worst);
        v["round"] = json!(a.round);
        v["scores_file"] = json!(path.display().to_string());
        json::print_ok(v);
        return Ok(());
    }
    print_summary(&c, &model, steps, &scores, a.worst);
    say!("wrote {}", path.display());
    Ok(())
}

/// The summary as JSON (the same facts as the text).
fn summary_json(
    c: &Campaign,
    model: &NoveltyModel,
    steps: &countersteer::campaign::StepTable,
    s: &RoundScores,
    worst: usize,
) -> Value {
    let ex = excursions(steps, s, &ExcursionSettings::default());
    let names: Vec<&str> = c.spec().features.iter().map(|f| f.name.as_str()).collect();
    let top: Vec<Value> = flagged_shares(s)
        .map(|sh| top_features(&sh, 3, 0.0))
        .unwrap_or_default()
        .into_iter()
        .filter_map(|(i, share)| Some(json!({"feature": names.get(i)?, "share": share})))
        .collect();
    let worst: Vec<Value> = worst_episodes(steps, s, &ex, worst)
        .into_iter()
        .map(|w| {
            json!({
                "episode": w.name, "flagged": w.flagged, "steps": w.len,
                "max_novelty": w.max_novelty, "first_excursion_t": w.onset,
            })
        })
        .collect();
    let split = model.split();
    json!({
        "demonstration_states": c.demonstrations.len(),
        "calibration_episodes": split.calibration.len(),
        "calibration_folds": split.folds.len(),
        "calibration_states": model.conformal().len(),
        "k": model.k(),
        "alpha": model.alpha(),
        "threshold": s.threshold,
        "steps": s.len(),
        "flagged": s.flagged_count(),
        "excursions": ex.len(),
        "episodes_with_excursions": count_episodes(&ex),
        "episodes": steps.episodes.len(),
        "top_features": top,
        "worst_episodes": worst,
    })
}

/// One of the episodes with the most flagged steps.
struct Worst {
    name: String,
    flagged: usize,
    len: usize,
    max_novelty: f32,
    onset: Option<i64>,
}

/// The `worst` episodes with the most flagged steps (ties by peak novelty).
fn worst_episodes(
    steps: &countersteer::campaign::StepTable,
    s: &RoundScores,
    ex: &[countersteer::review::Excursion],
    worst: usize,
) -> Vec<Worst> {
    let mut eps: Vec<(usize, usize, f32)> = episode_stats(steps, Some(s))
        .into_iter()
        .map(|e| {
            (
                e.episode,
                e.flagged.unwrap_or(0),
                e.peak_novelty.unwrap_or(0.0),
            )
        })
        .filter(|x| x.1 > 0)
        .collect();
    eps.sort_by(|a, b| b.1.cmp(&a.1).then(b.2.total_cmp(&a.2)));
    eps.into_iter()
        .take(worst)
        .map(|(i, flagged, max_novelty)| Worst {
            name: steps.episodes[i].name.clone(),
            flagged,
            len: steps.episodes[i].len,
            max_novelty,
            onset: ex.iter().find(|x| x.episode == i).map(|x| steps.t[x.onset]),
        })
        .collect()
}

fn print_summary(
    c: &Campaign,
    model: &NoveltyModel,
    steps: &countersteer::campaign::StepTable,
    s: &RoundScores,
    worst: usize,
) {
    let n = s.len();
    let flagged = s.flagged_count();
    let split = model.split();
    say!(
        "round scored against {} demonstration states ({})",
        c.demonstrations.len(),
        model.index().path()
    );
    say!(
        "  calibration: {} episodes in {} folds (cross-conformal), {} states; k = {}, alpha = {}",
        split.calibration.len(),
        split.folds.len(),
        model.conformal().len(),
        model.k(),
        model.alpha()
    );
    say!(
        "  flag threshold: novelty > {:.4} (scaled units) past the episode's first {} steps",
        s.threshold,
        s.phase_start.last().copied().unwrap_or(0)
    );
    print_phases(model, steps, s);
    say!(
        "  steps: {n}, flagged: {flagged} ({:.1}%)",
        100.0 * flagged as f64 / n.max(1) as f64
    );
    let ex = excursions(steps, s, &ExcursionSettings::default());
    say!(
        "  excursions: {} in {} of {} episodes",
        ex.len(),
        count_episodes(&ex),
        steps.episodes.len()
    );
    print_scales(c.spec(), &s.scale, &s.scale_origin);
    print_features(c, s);
    print_worst(steps, s, &ex, worst);
}

/// Prints each calibration phase: its threshold, calibration scores and this round's flagged
/// share, beside the share the pooled calibration (all phases together) would flag.
fn print_phases(model: &NoveltyModel, steps: &countersteer::campaign::StepTable, s: &RoundScores) {
    let phased = model.phased();
    let p = phased.parts().len();
    let (mut n, mut own, mut pooled) = (vec![0usize; p], vec![0usize; p], vec![0usize; p]);
    for row in 0..s.len() {
        let i = phased.phase(steps.position(row));
        n[i] += 1;
        own[i] += usize::from(s.flagged[row]);
        pooled[i] += usize::from(model.conformal().flagged(s.novelty[row]));
    }
    say!(
        "  calibration phases (steps from the episode's start; Mondrian conformal); the pooled calibration's threshold is {:.4}:",
        model.conformal().threshold()
    );
    let starts = phased.starts();
    for i in 0..p {
        let end = starts
            .get(i + 1)
            .map_or("end".to_string(), |e| e.to_string());
        let pct = |c: usize| 100.0 * c as f64 / n[i].max(1) as f64;
        say!(
            "    [{:>5}, {:>5}) {:>6} calibration scores, threshold {:>8.4}; {:>7} steps, {:>5.1}% flagged (pooled calibration {:.1}%)",
            starts[i],
            end,
            phased.parts()[i].len(),
            phased.parts()[i].threshold(),
            n[i],
            pct(own[i]),
            pct(pooled[i])
        );
    }
}

/// Prints every feature's novelty scale and where it came from.
pub fn print_scales(spec: &countersteer::campaign::Spec, scale: &[f32], origin: &[ScaleOrigin]) {
    say!("  novelty scales (each feature is divided by its scale):");
    for (j, (s, o)) in scale.iter().zip(origin).enumerate() {
        let f = spec.features.get(j);
        say!(
            "    {:<24} {:>12.5} {:<6} from {}",
            f.map_or("?", |f| f.name.as_str()),
            s,
            f.map_or("", |f| f.unit.as_str()),
            o.label()
        );
    }
}

fn count_episodes(ex: &[countersteer::review::Excursion]) -> usize {
    let mut e: Vec<usize> = ex.iter().map(|x| x.episode).collect();
    e.dedup();
    e.len()
}

fn print_features(c: &Campaign, s: &RoundScores) {
    let Some(shares) = flagged_shares(s) else {
        return;
    };
    let names: Vec<&str> = c.spec().features.iter().map(|f| f.name.as_str()).collect();
    say!(
        "  features that make flagged steps novel: {}",
        describe(&names, &top_features(&shares, 3, 0.0))
    );
}

fn print_worst(
    steps: &countersteer::campaign::StepTable,
    s: &RoundScores,
    ex: &[countersteer::review::Excursion],
    worst: usize,
) {
    let eps = worst_episodes(steps, s, ex, worst);
    if eps.is_empty() {
        return;
    }
    say!("  episodes with the most flagged steps:");
    for w in eps {
        let onset = w.onset.map_or("no excursion".to_string(), |t| {
            format!("first excursion at t = {t}")
        });
        say!(
            "    {:<24} {:>6} of {:>6} flagged, max novelty {:.3}, {onset}",
            w.name,
            w.flagged,
            w.len,
            w.max_novelty
        );
    }
}
