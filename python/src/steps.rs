//! The pipeline's steps as Python functions: write a round, score, plan, correct, tally,
//! export, load a merged set. Each mirrors the command of the same name.

use std::path::{Path, PathBuf};

use numpy::{PyReadonlyArray1, PyReadonlyArray2};
use pyo3::prelude::*;
use pyo3::types::PyDict;

use countersteer::campaign::arrays::{StepArrays, save_round_arrays};
use countersteer::campaign::{Campaign, StepTable};
use countersteer::consensus::tally as tally_of;
use countersteer::export::{ExportOptions, Format, Weighting, read_merged};
use countersteer::ledger::read_ledgers;
use countersteer::novelty::store::{ScoresKey, save_scores as save};
use countersteer::novelty::{RoundScores, build_model, score_round};
use countersteer::progress::Progress;
use countersteer::review::store::save_review_list;
use countersteer::review::{PlanSettings, plan as plan_list, states_of_rows};
use countersteer::workflow::{AnalysisOptions, WorkflowError, analyse};

use crate::convert::{self, matrix, rows, values, vector};
use crate::errors;
use crate::load;

fn steps_of(c: &Campaign, round: u32) -> PyResult<&StepTable> {
    c.round(round)
        .map(|r| &r.steps)
        .ok_or_else(|| errors::usage("round", format!("no round {round} in rounds/")))
}

/// Checks steps given as arrays and saves them as `rounds/<round>/<name>.npz`, the campaign's
/// own step format, atomically; never replaces a file. Returns the path.
#[pyfunction]
#[pyo3(signature = (campaign, round, name, episode, t, states, actions, intervention=None))]
#[allow(clippy::too_many_arguments)]
pub fn write_round(
    py: Python<'_>,
    campaign: PathBuf,
    round: u32,
    name: &str,
    episode: Vec<String>,
    t: PyReadonlyArray1<'_, i64>,
    states: PyReadonlyArray2<'_, f32>,
    actions: PyReadonlyArray2<'_, f32>,
    intervention: Option<PyReadonlyArray1<'_, bool>>,
) -> PyResult<String> {
    let file = countersteer::campaign::folder::read_campaign_file(&campaign).map_err(|p| {
        errors::campaign(countersteer::campaign::CampaignError::Invalid {
            problems: vec![p],
            more: 0,
        })
    })?;
    let a = StepArrays {
        episode,
        t: values(&t),
        states: rows(&states).0,
        actions: rows(&actions).0,
        intervention: intervention.as_ref().map(values),
    };
    let spec = file.spec;
    let path = py
        .detach(|| save_round_arrays(&campaign, round, name, &a, &spec))
        .map_err(errors::campaign)?;
    Ok(path.display().to_string())
}

/// Builds the novelty model and scores a round (as `countersteer score`); saves
/// `analysis/<round>/scores.npz` unless `save` is false. Returns the file's fields.
#[pyfunction]
#[pyo3(signature = (campaign, round, save=true))]
pub fn score<'py>(
    py: Python<'py>,
    campaign: PathBuf,
    round: u32,
    save: bool,
) -> PyResult<Bound<'py, PyDict>> {
    let c = load(py, &campaign)?;
    let steps = steps_of(&c, round)?;
    let s = py.detach(
        || -> Result<RoundScores, countersteer::novelty::NoveltyError> {
            let p = Progress::new();
            let model = build_model(&c, &p)?;
            let s = score_round(&model, &c, steps, &p)?;
            if save {
                self::save(&c.root, round, steps, &s, &ScoresKey::of(&c, steps))?;
            }
            Ok(s)
        },
    );
    convert::scores(py, steps, s.map_err(errors::novelty)?)
}

/// Saves scores (a dict of the `scores.npz` fields, e.g. gathered from shards) as the round's
/// `analysis/<round>/scores.npz`. Returns the path.
#[pyfunction]
pub fn save_scores(
    py: Python<'_>,
    campaign: PathBuf,
    round: u32,
    scores: &Bound<'_, PyDict>,
) -> PyResult<String> {
    let c = load(py, &campaign)?;
    let steps = steps_of(&c, round)?;
    let s = convert::scores_from(scores)?;
    if s.len() != steps.len() {
        let msg = format!("{} scored steps for a round of {}", s.len(), steps.len());
        return Err(errors::usage("scores", msg));
    }
    let path = py
        .detach(|| save(&c.root, round, steps, &s, &ScoresKey::of(&c, steps)))
        .map_err(errors::novelty)?;
    Ok(path.display().to_string())
}

/// The round's scores through the library's pipeline driver, as `countersteer plan` obtains
/// them: the saved scores under their one reuse rule, else scored now and saved.
fn scores_for(
    c: &Campaign,
    round: u32,
    rescore: bool,
) -> Result<RoundScores, countersteer::novelty::NoveltyError> {
    let options = AnalysisOptions {
        rescore,
        save: true,
        ..Default::default()
    };
    match analyse(c, round, options, &Progress::new()) {
        Ok(a) => Ok(a.scores),
        Err(WorkflowError::Novelty(e)) => Err(e),
        // The round was found before; no other failure comes from obtaining scores.
        Err(e) => Err(countersteer::novelty::NoveltyError::Index(e.to_string())),
    }
}

fn judged_rows(c: &Campaign, round: u32, steps: &StepTable) -> PyResult<Vec<usize>> {
    let ledgers = read_ledgers(&c.root).map_err(errors::ledger)?;
    Ok(countersteer::workflow::judged_rows(
        steps, round, &ledgers, None,
    ))
}

/// Plans a round's review list (as `countersteer plan`, which it saves the same way):
/// arrays of the entries by rank, with their reasons.
#[pyfunction]
#[pyo3(signature = (campaign, round, budget=50, min_gap=10, before_intervention=10, action_gap=0.25, fill=true, rescore=false))]
#[allow(clippy::too_many_arguments)]
pub fn plan<'py>(
    py: Python<'py>,
    campaign: PathBuf,
    round: u32,
    budget: usize,
    min_gap: usize,
    before_intervention: usize,
    action_gap: f32,
    fill: bool,
    rescore: bool,
) -> PyResult<Bound<'py, PyDict>> {
    if budget == 0 {
        return Err(errors::usage("budget", "budget must be at least 1"));
    }
    let c = load(py, &campaign)?;
    let steps = steps_of(&c, round)?;
    let judged = judged_rows(&c, round, steps)?;
    let settings = PlanSettings {
        budget,
        min_gap,
        pre_intervention: before_intervention,
        action_gap_min: action_gap,
        fill,
        ..Default::default()
    };
    let list = py
        .detach(|| -> Result<_, countersteer::novelty::NoveltyError> {
            let s = scores_for(&c, round, rescore)?;
            let list = plan_list(steps, &s, &states_of_rows(steps, &judged), &settings);
            save_review_list(&c.root, round, steps, &list)?;
            Ok(list)
        })
        .map_err(errors::novelty)?;
    let e = &list.entries;
    let d = PyDict::new(py);
    d.set_item("row", vector(py, e.iter().map(|x| x.row as i64).collect()))?;
    let names: Vec<&str> = e
        .iter()
        .map(|x| steps.episodes[x.episode].name.as_str())
        .collect();
    d.set_item("episode", names)?;
    d.set_item("t", vector(py, e.iter().map(|x| x.t).collect()))?;
    d.set_item(
        "pick",
        vector(py, e.iter().map(|x| x.pick as i64).collect()),
    )?;
    let reasons: Vec<Vec<&str>> = e
        .iter()
        .map(|x| x.reasons.iter().map(|r| r.as_str()).collect())
        .collect();
    d.set_item("reasons", reasons)?;
    d.set_item(
        "priority",
        vector(py, e.iter().map(|x| x.priority).collect()),
    )?;
    d.set_item("novelty", vector(py, e.iter().map(|x| x.novelty).collect()))?;
    d.set_item("p_value", vector(py, e.iter().map(|x| x.p_value).collect()))?;
    d.set_item(
        "action_gap",
        vector(py, e.iter().map(|x| x.action_gap).collect()),
    )?;
    d.set_item(
        "distance",
        vector(py, e.iter().map(|x| x.distance).collect()),
    )?;
    d.set_item("covering_radius", list.covering_radius)?;
    d.set_item("candidates", list.candidates)?;
    d.set_item("pool", list.pool)?;
    Ok(d)
}

/// The consensus of every judged step (as `countersteer tally`): arrays by (round, row);
/// `action` is NaN and `agreement` NaN where there is none.
#[pyfunction]
pub fn tally<'py>(py: Python<'py>, campaign: PathBuf) -> PyResult<Bound<'py, PyDict>> {
    let c = load(py, &campaign)?;
    let ledgers = read_ledgers(&c.root).map_err(errors::ledger)?;
    let t = py.detach(|| tally_of(&c, &ledgers));
    let a = c.spec().action_dim();
    let s = &t.steps;
    let d = PyDict::new(py);
    d.set_item(
        "round",
        vector(py, s.iter().map(|x| i64::from(x.round)).collect()),
    )?;
    d.set_item("row", vector(py, s.iter().map(|x| x.row as i64).collect()))?;
    d.set_item(
        "episode",
        s.iter().map(|x| x.episode.clone()).collect::<Vec<_>>(),
    )?;
    d.set_item("t", vector(py, s.iter().map(|x| x.t).collect()))?;
    d.set_item(
        "actions",
        vector(py, s.iter().map(|x| x.actions as i64).collect()),
    )?;
    d.set_item(
        "skips",
        vector(py, s.iter().map(|x| x.skips as i64).collect()),
    )?;
    d.set_item(
        "unrecoverable",
        vector(py, s.iter().map(|x| x.unrecoverable as i64).collect()),
    )?;
    let action: Vec<f32> = s
        .iter()
        .flat_map(|x| x.action.clone().unwrap_or_else(|| vec![f32::NAN; a]))
        .collect();
    d.set_item("action", matrix(py, action, a)?)?;
    let agreement: Vec<f64> = s.iter().map(|x| x.agreement.unwrap_or(f64::NAN)).collect();
    d.set_item("agreement", vector(py, agreement))?;
    d.set_item("mismatches", t.mismatches.len())?;
    d.set_item("unapplied", t.unapplied.len())?;
    d.set_item("ledger_problems", t.ledger_problems.len())?;
    Ok(d)
}

fn export_options(
    out: &Path,
    format: Option<&str>,
    min_agreement: Option<f64>,
    min_annotators: usize,
    weighting: &str,
    correction_weight: f64,
) -> PyResult<ExportOptions> {
    let format = match format {
        Some("jsonl") => Format::JsonLines,
        Some("csv") => Format::Csv,
        Some("npz") => Format::Npz,
        Some(other) => {
            return Err(errors::usage(
                "format",
                format!("`{other}`; use jsonl, csv or npz"),
            ));
        }
        None => Format::from_path(out).ok_or_else(|| {
            errors::usage("format", "say format=, or end out in .jsonl, .csv or .npz")
        })?,
    };
    let weighting = match weighting {
        "uniform" => Weighting::Uniform,
        "agreement" => Weighting::Agreement,
        other => {
            return Err(errors::usage(
                "weighting",
                format!("`{other}`; use uniform or agreement"),
            ));
        }
    };
    if min_agreement.is_some_and(|m| !(0.0..=1.0).contains(&m)) {
        return Err(errors::usage("min_agreement", "not within 0..1"));
    }
    if !(correction_weight.is_finite() && correction_weight >= 0.0) {
        return Err(errors::usage("correction_weight", "needs a number >= 0"));
    }
    Ok(ExportOptions {
        format,
        min_agreement,
        min_annotators,
        weighting,
        correction_weight,
    })
}

/// Exports the merged set to `out` with its manifest (as `countersteer export`); returns
/// the manifest as JSON text.
#[pyfunction]
#[pyo3(signature = (campaign, out, format=None, min_agreement=None, min_annotators=1, weighting="uniform", correction_weight=1.0))]
pub fn export(
    py: Python<'_>,
    campaign: PathBuf,
    out: PathBuf,
    format: Option<&str>,
    min_agreement: Option<f64>,
    min_annotators: usize,
    weighting: &str,
    correction_weight: f64,
) -> PyResult<String> {
    let opts = export_options(
        &out,
        format,
        min_agreement,
        min_annotators,
        weighting,
        correction_weight,
    )?;
    let c = load(py, &campaign)?;
    let ledgers = read_ledgers(&c.root).map_err(errors::ledger)?;
    let m = py
        .detach(|| {
            let t = tally_of(&c, &ledgers);
            countersteer::export::export(&c, &t, &opts, &out, &Progress::new())
        })
        .map_err(errors::export)?;
    serde_json::to_string(&m).map_err(|e| errors::usage("manifest", e.to_string()))
}

/// Reads a merged set back (any of its formats) with the campaign's spec.
#[pyfunction]
pub fn load_merged<'py>(
    py: Python<'py>,
    path: PathBuf,
    campaign: PathBuf,
) -> PyResult<Bound<'py, PyDict>> {
    let file = countersteer::campaign::folder::read_campaign_file(&campaign).map_err(|p| {
        errors::campaign(countersteer::campaign::CampaignError::Invalid {
            problems: vec![p],
            more: 0,
        })
    })?;
    let m = py
        .detach(|| read_merged(&path, &file.spec))
        .map_err(errors::export)?;
    convert::merged(py, m)
}
