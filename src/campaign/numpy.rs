//! NumPy step data: an `.npz` archive, or a set of `.npy` files sharing a stem
//! (`part.states.npy`, `part.actions.npy`, `part.episode.npy`, `part.t.npy`, ...).
//!
//! Arrays: `states` (n, D) float, `actions` (n, A) float (discrete channels hold choice
//! indices), `episode` (n,) integer or string, `t` (n,) integer; optional `intervention` (n,)
//! bool or integer, `frame` (n,) string (empty for none), `samples` (n, S, A) float,
//! `reward` and `cost` (n,) float (NaN for none), `outcome` (n,) string (empty for none).
//! Parsing is npyz's; before any array is read its declared size is checked against the bytes
//! that hold it, so a header cannot make the loader allocate more than the file carries.

use std::fs::File;
use std::io::{BufReader, Read, Seek};
use std::path::Path;

use npyz::{NpyFile, Order, TypeChar};

mod header;

pub use header::{MAX_HEADER_BYTES, MAX_HEADER_NESTING, declared_shape};

use super::accept::{RowMeta, accept};
use super::error::{Location, ProblemKind, ProblemLog};
use super::npz;
use super::outcome::RawOutcome;
use super::steps::StepTableBuilder;
use super::validate::{RawValue, RowChecker, resolve_frame};
use crate::progress::Progress;

/// The array names a NumPy step set may hold.
pub const ARRAY_NAMES: [&str; 10] = [
    "states",
    "actions",
    "episode",
    "t",
    "intervention",
    "frame",
    "samples",
    "reward",
    "cost",
    "outcome",
];

/// Values of one array, converted to a common type.
#[derive(Debug, Clone, PartialEq)]
pub enum Values {
    /// Floats, integers and bools as f64.
    Numbers(Vec<f64>),
    /// Integers kept exact.
    Integers(Vec<i64>),
    /// Strings.
    Text(Vec<String>),
}

/// One array: its shape (C order) and values.
#[derive(Debug, Clone, PartialEq)]
pub struct Array {
    /// Shape, C order.
    pub shape: Vec<u64>,
    /// Values, C order.
    pub values: Values,
}

/// Longest accepted fixed-width string item (episode names, frame paths), in bytes.
pub const MAX_TEXT_BYTES: u64 = 4096;

/// Reads an array, refusing a declared size larger than `available` bytes.
pub fn read_array<R: Read>(r: R, available: u64) -> Result<Array, String> {
    let npy =
        NpyFile::new(header::checked_start(r)?).map_err(|e| format!("not a NumPy array: {e}"))?;
    let shape = npy.shape().to_vec();
    let count = shape
        .iter()
        .try_fold(1u64, |a, &d| a.checked_mul(d))
        .ok_or("shape overflows")?;
    let npyz::DType::Plain(ts) = npy.dtype() else {
        return Err("structured or nested dtypes are not supported".into());
    };
    let item = ts.num_bytes().unwrap_or(0) as u64;
    let text = matches!(ts.type_char(), TypeChar::UnicodeStr | TypeChar::ByteStr);
    if text && item > MAX_TEXT_BYTES {
        return Err(format!(
            "strings of {item} bytes each; names and paths may take at most {MAX_TEXT_BYTES}"
        ));
    }
    // Found by fuzzing: a zero-width type (`<U0`) passes the size check below with any
    // count, and reading 10^16 empty strings exhausted memory.
    if item == 0 && count > 0 {
        return Err(format!(
            "header declares {count} values of 0 bytes each; a zero-width type holds no data"
        ));
    }
    if count.saturating_mul(item) > available {
        return Err(format!(
            "header declares {count} values of {item} bytes but only {available} bytes follow"
        ));
    }
    let fortran = npy.order() == Order::Fortran;
    let size = ts.size_field();
    let e = |e: std::io::Error| format!("array data: {e}");
    let values = match (ts.type_char(), size) {
        (TypeChar::Float, 4) => Values::Numbers(
            npy.into_vec::<f32>()
                .map_err(e)?
                .into_iter()
                .map(f64::from)
                .collect(),
        ),
        (TypeChar::Float, 8) => Values::Numbers(npy.into_vec::<f64>().map_err(e)?),
        (TypeChar::Int, 8) => Values::Integers(npy.into_vec::<i64>().map_err(e)?),
        (TypeChar::Int, 4) => Values::Integers(
            npy.into_vec::<i32>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Int, 2) => Values::Integers(
            npy.into_vec::<i16>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Int, 1) => Values::Integers(
            npy.into_vec::<i8>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Uint, 4) => Values::Integers(
            npy.into_vec::<u32>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Uint, 2) => Values::Integers(
            npy.into_vec::<u16>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Uint, 1) => Values::Integers(
            npy.into_vec::<u8>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Bool, _) => Values::Integers(
            npy.into_vec::<bool>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::UnicodeStr | TypeChar::ByteStr, _) => {
            Values::Text(npy.into_vec::<String>().map_err(e)?)
        }
        (c, s) => return Err(format!("dtype {c:?} of {s} bytes is not supported")),
    };
    let got = match &values {
        Values::Numbers(v) => v.len(),
        Values::Integers(v) => v.len(),
        Values::Text(v) => v.len(),
    } as u64;
    if got != count {
        return Err(format!("expected {count} values, the data holds {got}"));
    }
    let values = if fortran && shape.len() > 1 {
        to_c_order(values, &shape)
    } else {
        values
    };
    Ok(Array { shape, values })
}

fn to_c_order(v: Values, shape: &[u64]) -> Values {
    let dims: Vec<usize> = shape.iter().map(|&d| d as usize).collect();
    let n: usize = dims.iter().product();
    let idx: Vec<usize> = (0..n)
        .map(|c| {
            // c is a C-order index; find its Fortran-order position.
            let (mut rem, mut f, mut stride) = (c, 0, 1);
            let mut coords = vec![0; dims.len()];
            for (k, &d) in dims.iter().enumerate().rev() {
                coords[k] = rem % d.max(1);
                rem /= d.max(1);
            }
            for (k, &d) in dims.iter().enumerate() {
                f += coords[k] * stride;
                stride *= d;
            }
            f
        })
        .collect();
    match v {
        Values::Numbers(x) => Values::Numbers(idx.iter().map(|&i| x[i]).collect()),
        Values::Integers(x) => Values::Integers(idx.iter().map(|&i| x[i]).collect()),
        Values::Text(x) => Values::Text(idx.iter().map(|&i| x[i].clone()).collect()),
    }
}

/// A source of named arrays: an open .npz, or sibling .npy files.
pub trait ArraySource {
    /// Reads the named array, `Ok(None)` when absent.
    fn array(&mut self, name: &str) -> Result<Option<Array>, String>;

    /// The shape the named array's header declares, reading nothing else; `Ok(None)` when
    /// absent. Lets a reader refuse an oversized array before allocating for it.
    fn shape(&mut self, name: &str) -> Result<Option<Vec<u64>>, String>;
}

/// Arrays of an `.npz` archive (a file by default; any seekable reader for tests and fuzzing).
pub struct NpzSource<R: Read + Seek = BufReader<File>>(zip::ZipArchive<R>);

impl NpzSource {
    /// Opens an archive.
    pub fn open(path: &Path) -> Result<Self, String> {
        let file = File::open(path).map_err(|e| format!("not a readable .npz archive: {e}"))?;
        NpzSource::new(BufReader::new(file))
    }
}

impl<R: Read + Seek> NpzSource<R> {
    /// Reads an archive from any seekable reader.
    pub fn new(r: R) -> Result<Self, String> {
        zip::ZipArchive::new(r)
            .map(NpzSource)
            .map_err(|e| format!("not a readable .npz archive: {e}"))
    }

    /// Names of the arrays in the archive.
    pub fn names(&self) -> Vec<String> {
        self.0
            .file_names()
            .filter_map(npz::array_name)
            .map(str::to_string)
            .collect()
    }
}

impl<R: Read + Seek> ArraySource for NpzSource<R> {
    fn array(&mut self, name: &str) -> Result<Option<Array>, String> {
        let member = npz::member_name(name);
        match self.0.by_name(&member) {
            Ok(f) => {
                let size = f.size();
                read_array(f, size)
                    .map(Some)
                    .map_err(|e| format!("member `{member}`: {e}"))
            }
            Err(zip::result::ZipError::FileNotFound) => Ok(None),
            Err(e) => Err(format!("member `{member}`: {e}")),
        }
    }

    fn shape(&mut self, name: &str) -> Result<Option<Vec<u64>>, String> {
        let member = npz::member_name(name);
        match self.0.by_name(&member) {
            Ok(f) => declared_shape(f)
                .map(Some)
                .map_err(|e| format!("member `{member}`: {e}")),
            Err(zip::result::ZipError::FileNotFound) => Ok(None),
            Err(e) => Err(format!("member `{member}`: {e}")),
        }
    }
}

/// Arrays of `<stem>.<name>.npy` files in one folder of a campaign.
pub struct NpySetSource {
    /// The campaign folder: no file is read from outside it, even through a link.
    pub root: std::path::PathBuf,
    /// Folder of the files, relative to `root`.
    pub dir: std::path::PathBuf,
    /// Shared stem.
    pub stem: String,
}

impl NpySetSource {
    fn open(&self, name: &str) -> Result<Option<File>, String> {
        let file = format!("{}.{name}.npy", self.stem);
        let path = match super::confine::confined(&self.root, &self.dir.join(&file)) {
            Ok(p) => p,
            Err(super::confine::Refused::Missing) => return Ok(None),
            Err(e) => return Err(format!("{file}: {e}")),
        };
        File::open(&path)
            .map(Some)
            .map_err(|e| format!("{file}: {e}"))
    }
}

impl ArraySource for NpySetSource {
    fn array(&mut self, name: &str) -> Result<Option<Array>, String> {
        let Some(f) = self.open(name)? else {
            return Ok(None);
        };
        let size = f.metadata().map(|m| m.len()).unwrap_or(0);
        read_array(BufReader::new(f), size)
            .map(Some)
            .map_err(|e| format!("{name}.npy: {e}"))
    }

    fn shape(&mut self, name: &str) -> Result<Option<Vec<u64>>, String> {
        let Some(f) = self.open(name)? else {
            return Ok(None);
        };
        declared_shape(BufReader::new(f))
            .map(Some)
            .map_err(|e| format!("{name}.npy: {e}"))
    }
}

/// Most ensemble samples per step a NumPy `samples` array may declare.
pub const MAX_SAMPLES_PER_STEP: u64 = 1024;

/// Refuses, from its declared shape alone, an array with more rows than the record cap or
/// wider rows than its name allows, so that nothing is allocated for it.
fn oversized(
    name: &str,
    shape: &[u64],
    cap: u64,
    d: usize,
    a: usize,
) -> Option<(ProblemKind, String)> {
    let rows = shape.first().copied().unwrap_or(1);
    if rows > cap {
        let msg = format!(
            "declares {rows} rows; a file may hold at most {cap} records (split it, or raise the record cap)"
        );
        return Some((ProblemKind::TooMany, msg));
    }
    let width = match name {
        "states" => d as u64,
        "actions" => a as u64,
        "samples" => MAX_SAMPLES_PER_STEP * a as u64,
        _ => 1,
    };
    let per_row = shape
        .iter()
        .skip(1)
        .try_fold(1u64, |p, &x| p.checked_mul(x))
        .unwrap_or(u64::MAX);
    (per_row > width.max(1)).then(|| {
        let msg = format!("shape {shape:?} declares {per_row} values per row; at most {width} fit");
        (ProblemKind::WrongDimension, msg)
    })
}

fn numbers(a: &Array) -> Vec<f64> {
    match &a.values {
        Values::Numbers(v) => v.clone(),
        Values::Integers(v) => v.iter().map(|&x| x as f64).collect(),
        Values::Text(_) => Vec::new(),
    }
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
    let cap = b.record_cap() as u64;
    let mut refused = false;
    let mut get = |name: &str, required: bool, log: &mut ProblemLog| {
        if refused {
            return None;
        }
        match src.shape(name) {
            Ok(Some(shape)) => {
                if let Some((kind, msg)) = oversized(name, &shape, cap, d, a) {
                    log.error(kind, Location::File, name, msg);
                    refused = true;
                    return None;
                }
            }
            Ok(None) => {
                if required {
                    log.error(
                        ProblemKind::MissingColumn,
                        Location::File,
                        name,
                        format!("array `{name}` is missing"),
                    );
                }
                return None;
            }
            Err(msg) => {
                log.error(ProblemKind::MalformedNumpy, Location::File, name, msg);
                return None;
            }
        }
        match src.array(name) {
            Ok(arr) => arr,
            Err(msg) => {
                log.error(ProblemKind::MalformedNumpy, Location::File, name, msg);
                None
            }
        }
    };
    let states = get("states", true, log);
    let actions = get("actions", true, log);
    let episode = get("episode", true, log);
    let t = get("t", true, log);
    let intervention = get("intervention", false, log);
    let frame = get("frame", false, log);
    let samples = get("samples", false, log);
    let extra: Vec<Option<Array>> = ["reward", "cost", "outcome"]
        .iter()
        .map(|name| get(name, false, log))
        .collect();
    let (Some(states), Some(actions), Some(episode), Some(t)) = (states, actions, episode, t)
    else {
        return;
    };
    let n = states.shape.first().copied().unwrap_or(0);
    let mut shape_ok = true;
    let mut want = |name: &str, arr: &Array, shape: &[Option<u64>]| {
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
            shape_ok = false;
        }
    };
    want("states", &states, &[Some(n), Some(d as u64)]);
    want("actions", &actions, &[Some(n), Some(a as u64)]);
    want("episode", &episode, &[Some(n)]);
    want("t", &t, &[Some(n)]);
    if let Some(x) = &intervention {
        want("intervention", x, &[Some(n)]);
    }
    if let Some(x) = &frame {
        want("frame", x, &[Some(n)]);
    }
    if let Some(x) = &samples {
        want("samples", x, &[Some(n), None, Some(a as u64)]);
    }
    for (name, x) in ["reward", "cost", "outcome"].iter().zip(&extra) {
        if let Some(x) = x {
            want(name, x, &[Some(n)]);
        }
    }
    if !shape_ok {
        return;
    }
    if n == 0 {
        log.error(
            ProblemKind::Empty,
            Location::File,
            "",
            "the arrays hold no steps",
        );
        return;
    }
    let sv = numbers(&states);
    let av = numbers(&actions);
    let ts: Vec<i64> = match &t.values {
        Values::Integers(v) => v.clone(),
        _ => {
            log.error(
                ProblemKind::MalformedNumpy,
                Location::File,
                "t",
                "`t` must be an integer array",
            );
            return;
        }
    };
    let names: Vec<String> = match episode.values {
        Values::Integers(v) => v.iter().map(i64::to_string).collect(),
        Values::Text(v) => v,
        Values::Numbers(_) => {
            log.error(
                ProblemKind::MalformedNumpy,
                Location::File,
                "episode",
                "`episode` must be integers or strings",
            );
            return;
        }
    };
    let flags = intervention.map(|x| numbers(&x));
    let frames = frame.and_then(|x| match x.values {
        Values::Text(v) => Some(v),
        _ => None,
    });
    let s_count = samples
        .as_ref()
        .and_then(|x| x.shape.get(1).copied())
        .unwrap_or(0) as usize;
    let samples = samples.map(|x| numbers(&x));
    let Some(outcomes) = OutcomeArrays::new(extra, log) else {
        return;
    };
    let n = n as usize;
    let mut raw: Vec<RawValue> = Vec::with_capacity(a);
    for i in 0..n {
        if i % 4096 == 0 {
            progress.advance(4096);
            if progress.is_cancelled() {
                return;
            }
        }
        let at = Location::Record(i as u64);
        let mut ok = checker.state(sv[i * d..(i + 1) * d].iter().copied(), log, at);
        raw.clear();
        raw.extend(av[i * a..(i + 1) * a].iter().map(|&x| RawValue::Number(x)));
        ok &= checker.action(raw.iter(), log, at, "actions");
        checker.samples.clear();
        if let Some(s) = &samples {
            for j in 0..s_count {
                let base = (i * s_count + j) * a;
                raw.clear();
                raw.extend(s[base..base + a].iter().map(|&x| RawValue::Number(x)));
                if raw
                    .iter()
                    .all(|r| matches!(r, RawValue::Number(x) if x.is_nan()))
                {
                    continue; // an all-NaN sample row pads a step with fewer samples
                }
                ok &= checker.sample(raw.iter(), log, at, &format!("samples[{j}]"));
            }
        }
        ok &= checker.outcome(outcomes.row(i), log, at);
        let frame = match frames
            .as_ref()
            .map(|f| f[i].as_str())
            .filter(|f| !f.is_empty())
        {
            None => None,
            Some(f) => match resolve_frame(data_dir, f) {
                Ok(p) => Some(p),
                Err(msg) => {
                    log.error(ProblemKind::BadFramePath, at, "frame", msg);
                    continue;
                }
            },
        };
        if ok {
            let intervention = flags.as_ref().map(|f| f[i] != 0.0);
            let meta = RowMeta {
                episode: names[i].clone(),
                t: ts[i],
                frame,
                intervention,
            };
            if !accept(b, log, at, meta, checker) {
                return;
            }
        }
    }
}

/// The optional `reward`, `cost` and `outcome` arrays of a step set.
struct OutcomeArrays {
    reward: Option<Vec<f64>>,
    cost: Option<Vec<f64>>,
    outcome: Option<Vec<String>>,
}

impl OutcomeArrays {
    /// From the arrays in the order reward, cost, outcome; `None` (logged) when `outcome`
    /// is not a string array.
    fn new(mut arrays: Vec<Option<Array>>, log: &mut ProblemLog) -> Option<Self> {
        let outcome = match arrays.pop().flatten().map(|a| a.values) {
            None => None,
            Some(Values::Text(v)) => Some(v),
            Some(_) => {
                let msg = "`outcome` must be a string array (empty strings for none)";
                log.error(ProblemKind::MalformedNumpy, Location::File, "outcome", msg);
                return None;
            }
        };
        let mut num = |name: &str| match arrays.pop().flatten() {
            Some(a) if matches!(a.values, Values::Text(_)) => {
                let msg = format!("`{name}` must be a number array (NaN for none)");
                log.error(ProblemKind::MalformedNumpy, Location::File, name, msg);
                Err(())
            }
            a => Ok(a.map(|a| numbers(&a))),
        };
        let cost = num("cost").ok()?;
        let reward = num("reward").ok()?;
        Some(OutcomeArrays {
            reward,
            cost,
            outcome,
        })
    }

    /// Row `i`'s fields (NaN and empty strings give none).
    fn row(&self, i: usize) -> RawOutcome<'_> {
        let num = |v: &Option<Vec<f64>>| v.as_ref().map(|v| v[i]).filter(|x| !x.is_nan());
        RawOutcome {
            reward: num(&self.reward),
            cost: num(&self.cost),
            outcome: self.outcome.as_ref().map(|v| v[i].as_str()),
        }
    }
}
