//! Bulk corrections from arrays: one call, one batch, all or nothing (the library's batch
//! path, as `countersteer correct --from`).

use std::path::PathBuf;

use numpy::{PyReadonlyArray1, PyReadonlyArray2};
use pyo3::prelude::*;

use countersteer::campaign::Campaign;
use countersteer::ledger::Verdict;
use countersteer::ledger::batch::{self, Batch, BatchItem, BatchLine};

use crate::convert::{rows, values, vector};
use crate::{errors, load};

/// The batch for [`correct`]: one line per row of the arrays (line = row + 1).
#[allow(clippy::too_many_arguments)]
fn batch_of(
    c: &Campaign,
    round: u32,
    episode: &[String],
    t: &[i64],
    verdict: &[String],
    actions: Option<(Vec<f32>, usize)>,
    note: Option<Vec<Option<String>>>,
    retracts: Option<Vec<i64>>,
) -> PyResult<Batch> {
    let n = verdict.len();
    let width = c.spec().action_dim();
    let mut lines = Vec::with_capacity(n);
    for i in 0..n {
        let line = i as u64 + 1;
        let step = |v: Verdict| BatchItem::Correction {
            round,
            episode: episode.get(i).cloned().unwrap_or_default(),
            t: t.get(i).copied().unwrap_or_default(),
            verdict: v,
            note: note.as_ref().and_then(|n| n.get(i).cloned().flatten()),
        };
        let item = match verdict[i].as_str() {
            "action" => {
                let (a, w) = actions.as_ref().ok_or_else(|| {
                    errors::usage("actions", "action verdicts need an `actions` array")
                })?;
                if *w != width {
                    return Err(errors::usage(
                        "actions",
                        format!("{w} columns; the spec has {width} action channels"),
                    ));
                }
                step(Verdict::from_action(c.spec(), &a[i * w..(i + 1) * w]))
            }
            "skip" => step(Verdict::Skip),
            "unrecoverable" => step(Verdict::Unrecoverable),
            "retract" => {
                let seq = retracts
                    .as_ref()
                    .and_then(|r| r.get(i).copied())
                    .filter(|&s| s > 0);
                let seq = seq.ok_or_else(|| {
                    errors::usage(
                        "retracts",
                        format!("row {i}: a retraction needs a sequence number"),
                    )
                })?;
                BatchItem::Retraction {
                    retracts: seq as u64,
                }
            }
            other => {
                return Err(errors::usage(
                    "verdict",
                    format!("row {i}: `{other}`; use action, skip, unrecoverable or retract"),
                ));
            }
        };
        lines.push(BatchLine { line, item });
    }
    Ok(Batch {
        source: PathBuf::from("<arrays>"),
        lines,
        problems: Vec::new(),
    })
}

/// Appends many verdicts to one annotator's ledger at once, all or nothing (the library's
/// bulk corrections, as `countersteer correct --from`). `verdict[i]` is `action`, `skip`,
/// `unrecoverable` or `retract`; action rows read `actions[i]` (choice indices for discrete
/// channels), retractions `retracts[i]`. Returns the sequence numbers written.
#[pyfunction]
#[pyo3(signature = (campaign, annotator, round, episode, t, verdict, actions=None, note=None, retracts=None))]
#[allow(clippy::too_many_arguments)]
pub fn correct<'py>(
    py: Python<'py>,
    campaign: PathBuf,
    annotator: &str,
    round: u32,
    episode: Vec<String>,
    t: PyReadonlyArray1<'_, i64>,
    verdict: Vec<String>,
    actions: Option<PyReadonlyArray2<'_, f32>>,
    note: Option<Vec<Option<String>>>,
    retracts: Option<PyReadonlyArray1<'_, i64>>,
) -> PyResult<Bound<'py, PyAny>> {
    let c = load(py, &campaign)?;
    let b = batch_of(
        &c,
        round,
        &episode,
        &values(&t),
        &verdict,
        actions.as_ref().map(rows),
        note,
        retracts.as_ref().map(values),
    )?;
    let seqs = py.detach(|| -> PyResult<Vec<i64>> {
        let (mut ledger, _, _) = batch::open(&c.root, annotator).map_err(errors::ledger)?;
        let done = batch::apply(&c, &mut ledger, &b).map_err(errors::batch)?;
        Ok(done.records.iter().map(|r| r.seq as i64).collect())
    })?;
    Ok(vector(py, seqs))
}
