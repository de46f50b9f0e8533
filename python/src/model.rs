//! The saved novelty model (`analysis/model.bin`) for scoring in shards, one load per worker.

use std::path::PathBuf;

use numpy::{PyReadonlyArray1, PyReadonlyArray2};
use pyo3::prelude::*;
use pyo3::types::PyDict;

use countersteer::campaign::Campaign;
use countersteer::campaign::arrays::{StepArrays, check_arrays};
use countersteer::novelty::NoveltyModel;
use countersteer::novelty::saved::{build_and_save, fingerprint, load_campaign_model, score_shard};
use countersteer::novelty::score_steps;
use countersteer::progress::Progress;

use crate::convert::{self, rows, values, vector};
use crate::{errors, load};

/// A campaign's novelty model, loaded once and used for many shards.
#[pyclass(frozen, module = "countersteer._native")]
pub struct Model {
    campaign: Campaign,
    model: NoveltyModel,
}

#[pymethods]
impl Model {
    /// Builds the campaign's model and saves it as `analysis/model.bin`.
    #[staticmethod]
    fn build(py: Python<'_>, campaign: PathBuf) -> PyResult<Model> {
        let c = load(py, &campaign)?;
        let (model, _) = py
            .detach(|| build_and_save(&c, &Progress::new()))
            .map_err(errors::model_file)?;
        Ok(Model { campaign: c, model })
    }

    /// Loads `analysis/model.bin` of a campaign; raises `StaleModelError` when the campaign's
    /// demonstrations or novelty settings changed since it was built.
    #[staticmethod]
    fn load(py: Python<'_>, campaign: PathBuf) -> PyResult<Model> {
        let c = load(py, &campaign)?;
        let model = py
            .detach(|| load_campaign_model(&c))
            .map_err(errors::model_file)?;
        Ok(Model { campaign: c, model })
    }

    /// The novelty above which steps are flagged.
    #[getter]
    fn threshold(&self) -> f32 {
        self.model.threshold()
    }

    /// Which neighbour's distance is the novelty.
    #[getter]
    fn k(&self) -> usize {
        self.model.k()
    }

    /// The flag level.
    #[getter]
    fn alpha(&self) -> f64 {
        self.model.alpha()
    }

    /// Per-feature scales of the novelty distance.
    #[getter]
    fn scale<'py>(&self, py: Python<'py>) -> Bound<'py, PyAny> {
        vector(py, self.model.scale().to_vec())
    }

    /// The fingerprint of the demonstrations the model belongs to.
    #[getter]
    fn fingerprint(&self) -> String {
        fingerprint(&self.campaign.demonstrations)
    }

    /// Scores rows `start..stop` of a round: exactly those rows of a whole-round scoring.
    /// The dict has the `scores.npz` fields and `row` (the rows' indices in the round).
    fn score_rows<'py>(
        &self,
        py: Python<'py>,
        round: u32,
        start: usize,
        stop: usize,
    ) -> PyResult<Bound<'py, PyDict>> {
        let c = &self.campaign;
        let steps = &c
            .round(round)
            .ok_or_else(|| errors::usage("round", format!("no round {round} in rounds/")))?
            .steps;
        if start > stop || stop > steps.len() {
            return Err(errors::usage(
                "stop",
                format!("rows {start}..{stop} of a round of {}", steps.len()),
            ));
        }
        let s = py
            .detach(|| {
                score_shard(
                    &self.model,
                    &c.demonstrations,
                    &c.spec().actions,
                    steps,
                    start..stop,
                    &Progress::new(),
                )
            })
            .map_err(errors::novelty)?;
        let part = countersteer::novelty::saved::shard(steps, start..stop);
        let d = convert::scores(py, &part, s)?;
        d.set_item("row", vector(py, (start as i64..stop as i64).collect()))?;
        Ok(d)
    }

    /// Scores steps given as arrays (rows in episode order; an episode may continue from the
    /// previous batch): the rows a whole-round scoring gives those steps.
    #[pyo3(signature = (episode, t, states, actions, intervention=None))]
    fn score_arrays<'py>(
        &self,
        py: Python<'py>,
        episode: Vec<String>,
        t: PyReadonlyArray1<'_, i64>,
        states: PyReadonlyArray2<'_, f32>,
        actions: PyReadonlyArray2<'_, f32>,
        intervention: Option<PyReadonlyArray1<'_, bool>>,
    ) -> PyResult<Bound<'py, PyDict>> {
        let a = StepArrays {
            episode,
            t: values(&t),
            states: rows(&states).0,
            actions: rows(&actions).0,
            intervention: intervention.as_ref().map(values),
        };
        let c = &self.campaign;
        let (steps, _) = check_arrays(&a, c.spec(), std::path::Path::new("<arrays>"))
            .map_err(errors::campaign)?;
        let s = py
            .detach(|| {
                score_steps(
                    &self.model,
                    &c.demonstrations,
                    &c.spec().actions,
                    &steps,
                    &Progress::new(),
                )
            })
            .map_err(errors::novelty)?;
        convert::scores(py, &steps, s)
    }
}
