//! Library values to Python dicts of numpy arrays (and back for scores).
//!
//! Numbers become numpy arrays without a copy beyond the one out of Rust; text (episode
//! names, reasons) becomes a list of `str`, which the Python side turns into a numpy unicode
//! array.

use numpy::IntoPyArray;
use numpy::ndarray::Array2;
use numpy::{PyArray1, PyReadonlyArray1, PyUntypedArrayMethods};
use pyo3::prelude::*;
use pyo3::types::PyDict;

use countersteer::campaign::StepTable;
use countersteer::export::MergedSet;
use countersteer::novelty::RoundScores;
use countersteer::novelty::scale::ScaleOrigin;

/// A row-major matrix as a 2-D numpy array.
pub fn matrix<'py, T: numpy::Element + Clone>(
    py: Python<'py>,
    values: Vec<T>,
    cols: usize,
) -> PyResult<Bound<'py, PyAny>> {
    let rows = values.len().checked_div(cols).unwrap_or(0);
    let a = Array2::from_shape_vec((rows, cols), values)
        .map_err(|e| pyo3::exceptions::PyValueError::new_err(e.to_string()))?;
    Ok(a.into_pyarray(py).into_any())
}

/// A vector as a 1-D numpy array.
pub fn vector<'py, T: numpy::Element>(py: Python<'py>, values: Vec<T>) -> Bound<'py, PyAny> {
    PyArray1::from_vec(py, values).into_any()
}

/// Each row's episode name.
pub fn episode_names(t: &StepTable) -> Vec<String> {
    t.episodes
        .iter()
        .flat_map(|e| std::iter::repeat_n(e.name.clone(), e.len))
        .collect()
}

/// A step table: `episode`, `t`, `states`, `actions`, and `intervention` when known.
pub fn table<'py>(py: Python<'py>, t: &StepTable) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item("episode", episode_names(t))?;
    d.set_item("t", vector(py, t.t.clone()))?;
    d.set_item("states", matrix(py, t.states.clone(), t.state_dim)?)?;
    d.set_item("actions", matrix(py, t.actions.clone(), t.action_dim)?)?;
    if !t.interventions.is_empty() {
        d.set_item("intervention", vector(py, t.interventions.clone()))?;
    }
    Ok(d)
}

/// Scores as the fields of `scores.npz` (see `countersteer::novelty::store`).
pub fn scores<'py>(
    py: Python<'py>,
    steps: &StepTable,
    s: RoundScores,
) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item("episode", episode_names(steps))?;
    d.set_item("t", vector(py, steps.t.clone()))?;
    d.set_item("novelty", vector(py, s.novelty))?;
    d.set_item("p_value", vector(py, s.p_value))?;
    d.set_item("flagged", vector(py, s.flagged))?;
    d.set_item("contributions", matrix(py, s.contributions, s.state_dim)?)?;
    d.set_item("action_gap", vector(py, s.action_gap))?;
    d.set_item(
        "neighbour_action",
        matrix(py, s.neighbour_action, s.action_dim)?,
    )?;
    d.set_item("neighbour_spread", vector(py, s.neighbour_spread))?;
    d.set_item("ensemble_spread", vector(py, s.ensemble_spread))?;
    d.set_item("neighbours", matrix(py, s.neighbours, s.k)?)?;
    d.set_item("threshold", vector(py, vec![s.threshold]))?;
    d.set_item("alpha", vector(py, vec![s.alpha]))?;
    d.set_item("scale", vector(py, s.scale))?;
    let phases: Vec<i64> = s.phase_start.iter().map(|&p| p as i64).collect();
    d.set_item("phase_start", vector(py, phases))?;
    d.set_item("phase_threshold", vector(py, s.phase_threshold))?;
    let origin: Vec<&str> = s.scale_origin.iter().map(|o| o.label()).collect();
    d.set_item("scale_origin", origin)?;
    Ok(d)
}

fn get<'py>(d: &Bound<'py, PyDict>, name: &str) -> PyResult<Bound<'py, PyAny>> {
    d.get_item(name)?
        .ok_or_else(|| crate::errors::usage(name, format!("scores: the array `{name}` is missing")))
}

fn flat<T: numpy::Element + Copy>(d: &Bound<'_, PyDict>, name: &str) -> PyResult<Vec<T>> {
    let a = get(d, name)?;
    let a: PyReadonlyArray1<'_, T> = a
        .call_method0("ravel")?
        .extract()
        .map_err(|e| crate::errors::usage(name, format!("scores: `{name}`: {e}")))?;
    Ok(a.as_array().iter().copied().collect())
}

fn width(d: &Bound<'_, PyDict>, name: &str) -> PyResult<usize> {
    let a: Bound<'_, numpy::PyUntypedArray> = get(d, name)?
        .cast_into()
        .map_err(|e| crate::errors::usage(name, format!("scores: `{name}`: {e}")))?;
    Ok(a.shape().get(1).copied().unwrap_or(0))
}

/// Scores from a dict holding the fields of `scores.npz` (numpy arrays of those dtypes).
pub fn scores_from(d: &Bound<'_, PyDict>) -> PyResult<RoundScores> {
    let one = |name: &str| -> PyResult<f64> {
        let v: Vec<f64> = flat::<f64>(d, name)
            .or_else(|_| flat::<f32>(d, name).map(|v| v.into_iter().map(f64::from).collect()))?;
        v.first()
            .copied()
            .ok_or_else(|| crate::errors::usage(name, "scores: empty"))
    };
    let threshold = one("threshold")? as f32;
    let state_dim = width(d, "contributions")?;
    // Scores made before per-phase calibration have one phase and scales given by the spec.
    let phase_start = match d.get_item("phase_start")? {
        Some(_) => flat::<i64>(d, "phase_start")?
            .into_iter()
            .map(|p| p.max(0) as usize)
            .collect(),
        None => vec![0],
    };
    let phase_threshold = match d.get_item("phase_threshold")? {
        Some(_) => flat(d, "phase_threshold")?,
        None => vec![threshold],
    };
    let scale_origin = match d.get_item("scale_origin")? {
        Some(v) => {
            // A numpy array of strings (`tolist` gives Python strings) or a list.
            let labels: Vec<String> = match v.call_method0("tolist") {
                Ok(l) => l.extract()?,
                Err(_) => v.extract()?,
            };
            labels
                .iter()
                .map(|l| {
                    ScaleOrigin::from_label(l).ok_or_else(|| {
                        let msg = format!("scores: `scale_origin`: unknown origin `{l}`");
                        crate::errors::usage("scale_origin", msg)
                    })
                })
                .collect::<PyResult<_>>()?
        }
        None => vec![ScaleOrigin::Spec; state_dim],
    };
    Ok(RoundScores {
        state_dim,
        action_dim: width(d, "neighbour_action")?,
        k: width(d, "neighbours")?,
        novelty: flat(d, "novelty")?,
        p_value: flat(d, "p_value")?,
        flagged: flat(d, "flagged")?,
        contributions: flat(d, "contributions")?,
        action_gap: flat(d, "action_gap")?,
        neighbour_action: flat(d, "neighbour_action")?,
        neighbour_spread: flat(d, "neighbour_spread")?,
        ensemble_spread: flat(d, "ensemble_spread")?,
        neighbours: flat(d, "neighbours")?,
        threshold,
        alpha: one("alpha")?,
        scale: flat(d, "scale")?,
        phase_start,
        phase_threshold,
        scale_origin,
    })
}

/// A merged set: columns as arrays (`round` is -1 and `agreement` NaN where absent).
pub fn merged<'py>(py: Python<'py>, m: MergedSet) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    let (sd, ad) = (m.state_names.len(), m.action_names.len());
    d.set_item("state_names", m.state_names)?;
    d.set_item("action_names", m.action_names)?;
    let source: Vec<&str> = m.source.iter().map(|s| s.name()).collect();
    d.set_item("source", source)?;
    let round: Vec<i64> = m.round.iter().map(|r| r.map_or(-1, i64::from)).collect();
    d.set_item("round", vector(py, round))?;
    d.set_item("episode", m.episode)?;
    d.set_item("t", vector(py, m.t))?;
    d.set_item("states", matrix(py, m.states, sd)?)?;
    d.set_item("actions", matrix(py, m.actions, ad)?)?;
    d.set_item("weight", vector(py, m.weight))?;
    let annotators: Vec<i64> = m.annotators.iter().map(|&x| i64::from(x)).collect();
    d.set_item("annotators", vector(py, annotators))?;
    let agreement: Vec<f32> = m.agreement.iter().map(|a| a.unwrap_or(f32::NAN)).collect();
    d.set_item("agreement", vector(py, agreement))?;
    Ok(d)
}

/// A 1-D numpy array's values (any contiguity).
pub fn values<T: numpy::Element + Copy>(a: &PyReadonlyArray1<'_, T>) -> Vec<T> {
    a.as_array().iter().copied().collect()
}

/// A 2-D numpy array's values, row-major, with its width.
pub fn rows<T: numpy::Element + Copy>(a: &numpy::PyReadonlyArray2<'_, T>) -> (Vec<T>, usize) {
    let w = a.shape()[1];
    (a.as_array().iter().copied().collect(), w)
}
