//! The library's typed errors as Python exceptions carrying `file`, `line` and `field`.
//!
//! Every exception derives from `countersteer.CountersteerError` and has the attributes
//! `file` (str or None), `line` (int or None: a 1-based text line or a 0-based record of a
//! binary file), `field` (str or None) and, for errors that found several faults, `problems`
//! (a list of dicts with the same keys and `message`).

use pyo3::exceptions::PyException;
use pyo3::prelude::*;
use pyo3::types::PyDict;

use countersteer::campaign::{CampaignError as Campaign, Location, Problem};
use countersteer::export::ExportError as Export;
use countersteer::ledger::{LedgerError as Ledger, LedgerProblem};
use countersteer::novelty::NoveltyError as Novelty;
use countersteer::novelty::saved::ModelFileError;

pyo3::create_exception!(
    _native,
    CountersteerError,
    PyException,
    "Base of every countersteer error."
);
pyo3::create_exception!(
    _native,
    CampaignError,
    CountersteerError,
    "A campaign or step data that does not load."
);
pyo3::create_exception!(
    _native,
    LedgerError,
    CountersteerError,
    "A ledger or batch of verdicts that cannot be used."
);
pyo3::create_exception!(
    _native,
    NoveltyError,
    CountersteerError,
    "Scoring, or saved scores, failed."
);
pyo3::create_exception!(
    _native,
    StaleModelError,
    NoveltyError,
    "A saved novelty model built from other demonstrations or settings."
);
pyo3::create_exception!(
    _native,
    ExportError,
    CountersteerError,
    "An export or a merged set that does not read back."
);
pyo3::create_exception!(
    _native,
    UsageError,
    CountersteerError,
    "A call with arguments that cannot work."
);

/// Where a fault is: file, line or record, field.
#[derive(Debug, Default, Clone)]
pub struct Place {
    /// The file.
    pub file: Option<String>,
    /// Line (text) or record (binary).
    pub line: Option<u64>,
    /// The field or column.
    pub field: Option<String>,
    /// What is wrong.
    pub message: String,
}

impl From<&Problem> for Place {
    fn from(p: &Problem) -> Self {
        let line = match p.location {
            Location::File => None,
            Location::Line(n) | Location::Record(n) => Some(n),
        };
        Place {
            file: Some(p.file.display().to_string()),
            line,
            field: (!p.field.is_empty()).then(|| p.field.clone()),
            message: p.message.clone(),
        }
    }
}

impl From<&LedgerProblem> for Place {
    fn from(p: &LedgerProblem) -> Self {
        Place {
            file: Some(p.file.display().to_string()),
            line: Some(p.line),
            field: (!p.field.is_empty()).then(|| p.field.clone()),
            message: p.message.clone(),
        }
    }
}

fn path_place(path: &std::path::Path) -> Place {
    Place {
        file: Some(path.display().to_string()),
        ..Default::default()
    }
}

/// Raises `T` with `message`, the first place's attributes and every place as `problems`.
pub fn raise<T: pyo3::PyTypeInfo>(message: String, places: &[Place]) -> PyErr {
    Python::attach(|py| {
        let err = PyErr::new::<T, _>(message);
        let value = err.value(py);
        let first = places.first().cloned().unwrap_or_default();
        let problems: Vec<Bound<'_, PyDict>> = places
            .iter()
            .filter_map(|p| place_dict(py, p).ok())
            .collect();
        let set = || -> PyResult<()> {
            value.setattr("file", first.file)?;
            value.setattr("line", first.line)?;
            value.setattr("field", first.field)?;
            value.setattr("problems", problems)?;
            Ok(())
        };
        match set() {
            Ok(()) => err,
            Err(e) => e,
        }
    })
}

fn place_dict<'py>(py: Python<'py>, p: &Place) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item("file", &p.file)?;
    d.set_item("line", p.line)?;
    d.set_item("field", &p.field)?;
    d.set_item("message", &p.message)?;
    Ok(d)
}

/// A campaign error as a Python exception.
pub fn campaign(e: Campaign) -> PyErr {
    let places: Vec<Place> = match &e {
        Campaign::Invalid { problems, .. } => {
            let mut errors: Vec<&Problem> = problems
                .iter()
                .filter(|p| p.severity == countersteer::campaign::Severity::Error)
                .collect();
            errors.extend(
                problems
                    .iter()
                    .filter(|p| p.severity != countersteer::campaign::Severity::Error),
            );
            errors.into_iter().map(Place::from).collect()
        }
        Campaign::Folder { path, .. } => vec![path_place(path)],
        Campaign::Cancelled => Vec::new(),
    };
    raise::<CampaignError>(e.to_string(), &places)
}

/// A ledger error as a Python exception.
pub fn ledger(e: Ledger) -> PyErr {
    let place = match &e {
        Ledger::Io { path, .. }
        | Ledger::Locked { path, .. }
        | Ledger::NotSaved { path, .. }
        | Ledger::ChangedOnDisk { path, .. }
        | Ledger::IsLink { path, .. }
        | Ledger::NotAFile { path, .. }
        | Ledger::SeqExhausted { path, .. }
        | Ledger::TooLarge { path, .. }
        | Ledger::NoSuchCorrection { path, .. }
        | Ledger::AlreadyRetracted { path, .. } => path_place(path),
        Ledger::BadAnnotator { .. } => Place {
            field: Some("annotator".into()),
            ..Default::default()
        },
    };
    raise::<LedgerError>(e.to_string(), &[place])
}

/// A batch of verdicts that was refused (every problem, by input line and field).
pub fn batch(e: countersteer::ledger::batch::BatchError) -> PyErr {
    use countersteer::ledger::batch::BatchError;
    match e {
        BatchError::Invalid { ref problems, .. } => {
            let places: Vec<Place> = problems.iter().map(Place::from).collect();
            raise::<LedgerError>(e.to_string(), &places)
        }
        BatchError::Ledger(e) => ledger(e),
    }
}

/// A scoring error as a Python exception.
pub fn novelty(e: Novelty) -> PyErr {
    let places = match &e {
        Novelty::Store { path, .. } => vec![path_place(path)],
        Novelty::TooFewStates { .. } => vec![Place {
            file: Some("campaign.json".into()),
            field: Some("novelty.k".into()),
            ..Default::default()
        }],
        _ => Vec::new(),
    };
    raise::<NoveltyError>(e.to_string(), &places)
}

/// A model-file error as a Python exception (`StaleModelError` for changed demonstrations).
pub fn model_file(e: ModelFileError) -> PyErr {
    let message = e.to_string();
    match e {
        ModelFileError::Stale { path, field, .. } => {
            let p = Place {
                field: Some(field),
                ..path_place(&path)
            };
            raise::<StaleModelError>(message, &[p])
        }
        ModelFileError::Format { path, field, .. } => {
            let p = Place {
                field: Some(field),
                ..path_place(&path)
            };
            raise::<NoveltyError>(message, &[p])
        }
        ModelFileError::Io { path, .. } => raise::<NoveltyError>(message, &[path_place(&path)]),
        ModelFileError::Novelty(e) => novelty(e),
    }
}

/// An export error as a Python exception.
pub fn export(e: Export) -> PyErr {
    let places = match &e {
        Export::Invalid {
            path,
            location,
            field,
            ..
        } => vec![Place {
            line: *location,
            field: Some(field.clone()),
            ..path_place(path)
        }],
        Export::Io { path, .. } => vec![path_place(path)],
        Export::Cancelled => Vec::new(),
    };
    raise::<ExportError>(e.to_string(), &places)
}

/// A call that cannot work, naming the argument as its field.
pub fn usage(field: &str, message: impl Into<String>) -> PyErr {
    let p = Place {
        field: Some(field.into()),
        ..Default::default()
    };
    raise::<UsageError>(message.into(), &[p])
}
