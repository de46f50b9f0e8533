//! `countersteer._native`: the countersteer library for Python, numpy in and out.
//!
//! Thin by design: each function loads what it needs and calls one library function (the
//! same ones the command line calls), with the interpreter released (`Python::detach`) while
//! the library works. The Python package `countersteer` wraps these functions (dtype
//! conversion, unicode arrays, the optional torch adapter).

mod convert;
mod correct;
mod errors;
mod model;
mod steps;

use std::path::{Path, PathBuf};

use pyo3::prelude::*;
use pyo3::types::PyDict;

use countersteer::campaign::{Campaign as Loaded, LoadOptions, load_campaign};
use countersteer::progress::Progress;

/// Loads a campaign folder (the interpreter released meanwhile).
pub(crate) fn load(py: Python<'_>, dir: &Path) -> PyResult<Loaded> {
    let dir = dir.to_path_buf();
    py.detach(move || load_campaign(&dir, &LoadOptions::default(), &Progress::new()))
        .map_err(errors::campaign)
}

/// An opened campaign: its spec, demonstrations and rounds.
#[pyclass(frozen, module = "countersteer._native")]
pub struct Campaign {
    inner: Loaded,
}

#[pymethods]
impl Campaign {
    /// Opens (loads and checks) the campaign folder `path`.
    #[new]
    fn new(py: Python<'_>, path: PathBuf) -> PyResult<Self> {
        Ok(Campaign {
            inner: load(py, &path)?,
        })
    }

    /// The campaign folder.
    #[getter]
    fn root(&self) -> String {
        self.inner.root.display().to_string()
    }

    /// The campaign's name.
    #[getter]
    fn name(&self) -> String {
        self.inner.file.name.clone()
    }

    /// The round numbers, ascending.
    #[getter]
    fn rounds(&self) -> Vec<u32> {
        self.inner.rounds.iter().map(|r| r.number).collect()
    }

    /// The spec and novelty settings as JSON text (campaign.json's own fields).
    fn spec_json(&self) -> PyResult<String> {
        serde_json::to_string(&self.inner.file).map_err(|e| errors::usage("spec", e.to_string()))
    }

    /// The demonstrations as arrays.
    fn demonstrations<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        convert::table(py, &self.inner.demonstrations)
    }

    /// A round's steps as arrays.
    fn round<'py>(&self, py: Python<'py>, number: u32) -> PyResult<Bound<'py, PyDict>> {
        let r = self
            .inner
            .round(number)
            .ok_or_else(|| errors::usage("round", format!("no round {number} in rounds/")))?;
        convert::table(py, &r.steps)
    }
}

/// The module.
#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    let py = m.py();
    m.add(
        "CountersteerError",
        py.get_type::<errors::CountersteerError>(),
    )?;
    m.add("CampaignError", py.get_type::<errors::CampaignError>())?;
    m.add("LedgerError", py.get_type::<errors::LedgerError>())?;
    m.add("NoveltyError", py.get_type::<errors::NoveltyError>())?;
    m.add("StaleModelError", py.get_type::<errors::StaleModelError>())?;
    m.add("ExportError", py.get_type::<errors::ExportError>())?;
    m.add("UsageError", py.get_type::<errors::UsageError>())?;
    m.add("VERSION", countersteer::VERSION)?;
    m.add("SAFETY_CAUTION", countersteer::SAFETY_CAUTION)?;
    m.add_class::<Campaign>()?;
    m.add_class::<model::Model>()?;
    m.add_function(wrap_pyfunction!(steps::write_round, m)?)?;
    m.add_function(wrap_pyfunction!(steps::score, m)?)?;
    m.add_function(wrap_pyfunction!(steps::save_scores, m)?)?;
    m.add_function(wrap_pyfunction!(steps::plan, m)?)?;
    m.add_function(wrap_pyfunction!(correct::correct, m)?)?;
    m.add_function(wrap_pyfunction!(steps::tally, m)?)?;
    m.add_function(wrap_pyfunction!(steps::export, m)?)?;
    m.add_function(wrap_pyfunction!(steps::load_merged, m)?)?;
    Ok(())
}
