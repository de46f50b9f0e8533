//! Reading a NumPy step set row by row: every array is streamed ([`super::ArrayStream`]), so
//! the only copy of the data in memory is the step table being built.

use std::path::Path;

use super::super::accept::{RowMeta, accept};
use super::super::error::{Location, ProblemKind, ProblemLog};
use super::super::steps::StepTableBuilder;
use super::super::validate::{RawValue, RowChecker, resolve_frame};
use super::{ArraySource, ArrayStream, ValueKind, oversized};
use crate::progress::Progress;

/// The arrays of one step set, opened.
struct Columns {
    states: ArrayStream,
    actions: ArrayStream,
    episode: ArrayStream,
    t: ArrayStream,
    intervention: Option<ArrayStream>,
    frame: Option<ArrayStream>,
    samples: Option<ArrayStream>,
}

/// Opens the named array after checking its declared shape against the cap and the spec;
/// `None` (with the problem logged) when absent, oversized or unreadable.
fn open(
    src: &mut dyn ArraySource,
    name: &str,
    required: bool,
    (cap, d, a): (u64, usize, usize),
    log: &mut ProblemLog,
) -> Result<Option<ArrayStream>, ()> {
    match src.shape(name) {
        Ok(Some(shape)) => {
            if let Some((kind, msg)) = oversized(name, &shape, cap, d, a) {
                log.error(kind, Location::File, name, msg);
                return Err(());
            }
        }
        Ok(None) => {
            if required {
                let msg = format!("array `{name}` is missing");
                log.error(ProblemKind::MissingColumn, Location::File, name, msg);
            }
            return Ok(None);
        }
        Err(msg) => {
            log.error(ProblemKind::MalformedNumpy, Location::File, name, msg);
            return Ok(None);
        }
    }
    src.stream(name).map_err(|msg| {
        log.error(ProblemKind::MalformedNumpy, Location::File, name, msg);
    })
}

fn open_all(
    src: &mut dyn ArraySource,
    dims: (u64, usize, usize),
    log: &mut ProblemLog,
) -> Option<Columns> {
    let mut get =
        |name: &str, required: bool, log: &mut ProblemLog| open(src, name, required, dims, log);
    // An oversized array stops the reading at once: nothing more is opened.
    let states = get("states", true, log).ok()?;
    let actions = get("actions", true, log).ok()?;
    let episode = get("episode", true, log).ok()?;
    let t = get("t", true, log).ok()?;
    let intervention = get("intervention", false, log).ok()?;
    let frame = get("frame", false, log).ok()?;
    let samples = get("samples", false, log).ok()?;
    Some(Columns {
        states: states?,
        actions: actions?,
        episode: episode?,
        t: t?,
        intervention,
        frame,
        samples,
    })
}

/// Checks every array's shape against `n` rows and the spec, and its kind of values.
fn shapes_fit(c: &Columns, d: usize, a: usize, log: &mut ProblemLog) -> bool {
    let n = c.states.shape.first().copied().unwrap_or(0);
    let mut ok = true;
    let mut want = |name: &str, arr: &ArrayStream, shape: &[Option<u64>], kinds: &[ValueKind]| {
        let fits = arr.shape.len() == shape.len()
            && arr
                .shape
                .iter()
                .zip(shape)
                .all(|(&g, w)| w.is_none_or(|w| w == g));
        if !fits {
            let w: Vec<String> = shape
                .iter()
                .map(|x| x.map_or("S".into(), |v| v.to_string()))
                .collect();
            let msg = format!(
                "shape {:?} does not match the expected ({})",
                arr.shape,
                w.join(", ")
            );
            log.error(ProblemKind::WrongDimension, Location::File, name, msg);
            ok = false;
        } else if !kinds.contains(&arr.value_kind()) {
            let msg = match name {
                "t" => "`t` must be an integer array".to_string(),
                "episode" => "`episode` must be integers or strings".to_string(),
                "frame" => "`frame` must be strings".to_string(),
                _ => format!("`{name}` must be numbers"),
            };
            log.error(ProblemKind::MalformedNumpy, Location::File, name, msg);
            ok = false;
        }
    };
    use ValueKind::{Float, Integer, Text};
    want(
        "states",
        &c.states,
        &[Some(n), Some(d as u64)],
        &[Float, Integer],
    );
    want(
        "actions",
        &c.actions,
        &[Some(n), Some(a as u64)],
        &[Float, Integer],
    );
    want("episode", &c.episode, &[Some(n)], &[Integer, Text]);
    want("t", &c.t, &[Some(n)], &[Integer]);
    if let Some(x) = &c.intervention {
        want("intervention", x, &[Some(n)], &[Float, Integer]);
    }
    if let Some(x) = &c.frame {
        want("frame", x, &[Some(n)], &[Text]);
    }
    if let Some(x) = &c.samples {
        want(
            "samples",
            x,
            &[Some(n), None, Some(a as u64)],
            &[Float, Integer],
        );
    }
    ok
}

/// One row's values, read from every array (always all of them, so that the arrays stay
/// aligned whatever the row's faults).
struct Row {
    episode: String,
    t: i64,
    intervention: Option<bool>,
    frame: Option<String>,
}

fn read_row(
    c: &mut Columns,
    raw: &mut RowBuffers,
    d: usize,
    a: usize,
) -> Result<Row, (&'static str, String)> {
    raw.state.clear();
    for _ in 0..d {
        raw.state
            .push(c.states.number().map_err(|e| ("states", e))?);
    }
    raw.action.clear();
    for _ in 0..a {
        raw.action
            .push(c.actions.number().map_err(|e| ("actions", e))?);
    }
    raw.samples.clear();
    if let Some(s) = &mut c.samples {
        let per = s.shape.get(1).copied().unwrap_or(0) as usize * a;
        for _ in 0..per {
            raw.samples.push(s.number().map_err(|e| ("samples", e))?);
        }
    }
    let episode = match c.episode.value_kind() {
        ValueKind::Text => c.episode.text(),
        _ => c.episode.integer().map(|v| v.to_string()),
    }
    .map_err(|e| ("episode", e))?;
    let t = c.t.integer().map_err(|e| ("t", e))?;
    let intervention = match &mut c.intervention {
        Some(x) => Some(x.number().map_err(|e| ("intervention", e))? != 0.0),
        None => None,
    };
    let frame = match &mut c.frame {
        Some(x) => Some(x.text().map_err(|e| ("frame", e))?),
        None => None,
    };
    Ok(Row {
        episode,
        t,
        intervention,
        frame: frame.filter(|f| !f.is_empty()),
    })
}

#[derive(Default)]
struct RowBuffers {
    state: Vec<f64>,
    action: Vec<f64>,
    samples: Vec<f64>,
    raw: Vec<RawValue>,
}

/// Reads one NumPy step set into the builder, reporting every fault to `log`.
pub fn read_numpy(
    src: &mut dyn ArraySource,
    data_dir: &Path,
    checker: &mut RowChecker<'_>,
    b: &mut StepTableBuilder,
    log: &mut ProblemLog,
    progress: &Progress,
) {
    let (d, a) = (checker.spec().state_dim(), checker.spec().action_dim());
    let Some(mut c) = open_all(src, (b.record_cap() as u64, d, a), log) else {
        return;
    };
    if !shapes_fit(&c, d, a, log) {
        return;
    }
    let n = c.states.shape.first().copied().unwrap_or(0) as usize;
    if n == 0 {
        log.error(
            ProblemKind::Empty,
            Location::File,
            "",
            "the arrays hold no steps",
        );
        return;
    }
    let mut buf = RowBuffers::default();
    for i in 0..n {
        if i % 4096 == 0 {
            progress.advance(4096);
            if progress.is_cancelled() {
                return;
            }
        }
        let at = Location::Record(i as u64);
        let row = match read_row(&mut c, &mut buf, d, a) {
            Ok(r) => r,
            Err((name, msg)) => {
                log.error(ProblemKind::MalformedNumpy, at, name, msg);
                return;
            }
        };
        if !check_row(checker, &mut buf, a, log, at) {
            continue;
        }
        let frame = match row.frame.as_deref().map(|f| resolve_frame(data_dir, f)) {
            None => None,
            Some(Ok(p)) => Some(p),
            Some(Err(msg)) => {
                log.error(ProblemKind::BadFramePath, at, "frame", msg);
                continue;
            }
        };
        let meta = RowMeta {
            episode: row.episode,
            t: row.t,
            frame,
            intervention: row.intervention,
        };
        if !accept(b, log, at, meta, checker) {
            return;
        }
    }
    finish(c, log);
}

/// The state, action and samples of a row through the checker (which keeps them for
/// [`accept`]); false when any is refused.
fn check_row(
    checker: &mut RowChecker<'_>,
    buf: &mut RowBuffers,
    a: usize,
    log: &mut ProblemLog,
    at: Location,
) -> bool {
    let mut ok = checker.state(buf.state.iter().copied(), log, at);
    buf.raw.clear();
    buf.raw
        .extend(buf.action.iter().map(|&x| RawValue::Number(x)));
    ok &= checker.action(buf.raw.iter(), log, at, "actions");
    checker.samples.clear();
    for (j, s) in buf.samples.chunks_exact(a.max(1)).enumerate() {
        if s.iter().all(|x| x.is_nan()) {
            continue; // an all-NaN sample row pads a step with fewer samples
        }
        buf.raw.clear();
        buf.raw.extend(s.iter().map(|&x| RawValue::Number(x)));
        ok &= checker.sample(buf.raw.iter(), log, at, &format!("samples[{j}]"));
    }
    ok
}

/// Reads each array's member to its end so that its CRC-32 is checked.
fn finish(c: Columns, log: &mut ProblemLog) {
    let all = [
        ("states", Some(c.states)),
        ("actions", Some(c.actions)),
        ("episode", Some(c.episode)),
        ("t", Some(c.t)),
        ("intervention", c.intervention),
        ("frame", c.frame),
        ("samples", c.samples),
    ];
    for (name, s) in all {
        if let Some(Err(msg)) = s.map(ArrayStream::finish) {
            log.error(ProblemKind::MalformedNumpy, Location::File, name, msg);
        }
    }
}
