//! Reading a merged set back (for retraining, and to check exports).

use std::path::Path;

use serde::Deserialize;

use super::rows::{MergedSet, RowSource};
use super::write::csv_header;
use super::{ExportError, Format};
use crate::campaign::numpy::{ArraySource, NpzSource, Values};
use crate::campaign::{ChannelKind, Spec};
use crate::ledger::ActionValue;

type Bad = (Option<u64>, String, String);

fn bad(at: Option<u64>, field: &str, message: impl Into<String>) -> Bad {
    (at, field.to_string(), message.into())
}

/// Largest manifest read back: a manifest lists a campaign's files, a few kilobytes each.
const MAX_MANIFEST_BYTES: u64 = 64 << 20;

/// Reads a merged set written by [`super::export`], after checking that the manifest beside
/// it describes exactly this file (its size and SHA-256). An export publishes the data first
/// and its manifest last, so an export interrupted between the two leaves a pair that this
/// check refuses: a reader never takes rows from a file its manifest does not describe.
/// The format follows the file's extension; the spec names the columns and turns discrete
/// choice names back into indices.
pub fn read_merged(path: &Path, spec: &Spec) -> Result<MergedSet, ExportError> {
    check_manifest(path)?;
    read_rows(path, spec)
}

fn check_manifest(path: &Path) -> Result<(), ExportError> {
    use std::io::Read;
    let mpath = super::manifest_path(path);
    let invalid = |message: String| ExportError::Invalid {
        path: path.to_path_buf(),
        location: None,
        field: "manifest".into(),
        message,
    };
    let mut text = Vec::new();
    std::fs::File::open(&mpath)
        .and_then(|f| f.take(MAX_MANIFEST_BYTES).read_to_end(&mut text))
        .map_err(|e| {
            invalid(format!(
                "{} cannot be read ({e}); the export did not finish: export again",
                mpath.display()
            ))
        })?;
    let m: super::Manifest = serde_json::from_slice(&text)
        .map_err(|e| invalid(format!("{} is no manifest: {e}", mpath.display())))?;
    let d =
        super::manifest::digest_file(Path::new(""), path).map_err(|source| ExportError::Io {
            path: path.to_path_buf(),
            source,
        })?;
    let (bytes, sha) = (d.bytes, d.sha256);
    if bytes != m.output.bytes || sha != m.output.sha256 {
        return Err(invalid(format!(
            "{} describes another file ({} bytes, SHA-256 {}; this one has {bytes} bytes, \
             {sha}): an export was interrupted between the data and its manifest; export again",
            mpath.display(),
            m.output.bytes,
            m.output.sha256
        )));
    }
    Ok(())
}

/// Reads the rows of a merged-set file without looking for its manifest (a file written
/// with [`super::write`] directly).
pub fn read_rows(path: &Path, spec: &Spec) -> Result<MergedSet, ExportError> {
    let invalid = |(location, field, message): Bad| ExportError::Invalid {
        path: path.to_path_buf(),
        location,
        field,
        message,
    };
    let Some(format) = Format::from_path(path) else {
        return Err(invalid(bad(
            None,
            "",
            "extension is not .jsonl, .csv or .npz",
        )));
    };
    let mut m = MergedSet {
        state_names: spec.features.iter().map(|f| f.name.clone()).collect(),
        action_names: spec.actions.iter().map(|c| c.name.clone()).collect(),
        ..Default::default()
    };
    let io = |source| ExportError::Io {
        path: path.to_path_buf(),
        source,
    };
    match format {
        Format::JsonLines => read_jsonl(&std::fs::read(path).map_err(io)?, spec, &mut m),
        Format::Csv => read_csv(&std::fs::read(path).map_err(io)?, spec, &mut m),
        Format::Npz => read_npz(path, spec, &mut m),
    }
    .map_err(invalid)?;
    Ok(m)
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct JsonRow {
    source: String,
    round: Option<u32>,
    episode: String,
    t: i64,
    state: Vec<f32>,
    action: Vec<ActionValue>,
    weight: f32,
    annotators: u32,
    agreement: Option<f32>,
}

fn action_value(spec: &Spec, c: usize, v: &ActionValue) -> Result<f32, String> {
    match (&spec.actions[c].kind, v) {
        (ChannelKind::Continuous { .. }, ActionValue::Number(x)) => Ok(*x as f32),
        (ChannelKind::Discrete { choices }, ActionValue::Choice(s)) => choices
            .iter()
            .position(|n| n == s)
            .map(|i| i as f32)
            .ok_or_else(|| format!("`{s}` is not a choice")),
        _ => Err("value of the wrong kind for this channel".into()),
    }
}

fn source(s: &str) -> Result<RowSource, String> {
    RowSource::parse(s).ok_or_else(|| format!("`{s}` is neither demonstration nor correction"))
}

fn read_jsonl(bytes: &[u8], spec: &Spec, m: &mut MergedSet) -> Result<(), Bad> {
    for (i, line) in bytes.split(|&b| b == b'\n').enumerate() {
        let at = Some(i as u64 + 1);
        if line.is_empty() {
            continue;
        }
        let r: JsonRow = serde_json::from_slice(line).map_err(|e| bad(at, "", e.to_string()))?;
        if r.state.len() != spec.state_dim() || r.action.len() != spec.action_dim() {
            return Err(bad(at, "state/action", "length differs from the spec"));
        }
        m.source
            .push(source(&r.source).map_err(|e| bad(at, "source", e))?);
        for (c, v) in r.action.iter().enumerate() {
            let x = action_value(spec, c, v).map_err(|e| bad(at, &spec.actions[c].name, e))?;
            m.actions.push(x);
        }
        m.round.push(r.round);
        m.episode.push(r.episode);
        m.t.push(r.t);
        m.states.extend(r.state);
        m.weight.push(r.weight);
        m.annotators.push(r.annotators);
        m.agreement.push(r.agreement);
    }
    Ok(())
}

fn parse<T: std::str::FromStr>(s: &str, at: Option<u64>, field: &str) -> Result<T, Bad> {
    s.parse()
        .map_err(|_| bad(at, field, format!("`{s}` does not parse")))
}

fn optional<T: std::str::FromStr>(s: &str, at: Option<u64>, f: &str) -> Result<Option<T>, Bad> {
    if s.is_empty() {
        Ok(None)
    } else {
        parse(s, at, f).map(Some)
    }
}

fn read_csv(bytes: &[u8], spec: &Spec, m: &mut MergedSet) -> Result<(), Bad> {
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(bytes);
    let header = csv_header(spec);
    let (d, a) = (spec.state_dim(), spec.action_dim());
    for (i, rec) in r.records().enumerate() {
        let at = Some(i as u64 + 1);
        let rec = rec.map_err(|e| bad(at, "", e.to_string()))?;
        if i == 0 {
            if rec.iter().ne(header.iter().map(String::as_str)) {
                return Err(bad(at, "", format!("header is not {header:?}")));
            }
            continue;
        }
        if rec.len() != header.len() {
            return Err(bad(
                at,
                "",
                format!("{} fields, expected {}", rec.len(), header.len()),
            ));
        }
        m.source
            .push(source(&rec[0]).map_err(|e| bad(at, "source", e))?);
        m.round.push(optional(&rec[1], at, "round")?);
        m.episode.push(rec[2].to_string());
        m.t.push(parse(&rec[3], at, "t")?);
        for c in 0..d {
            m.states.push(parse(&rec[4 + c], at, &header[4 + c])?);
        }
        for c in 0..a {
            let cell = &rec[4 + d + c];
            let v = match &spec.actions[c].kind {
                ChannelKind::Continuous { .. } => {
                    ActionValue::Number(parse(cell, at, &header[4 + d + c])?)
                }
                ChannelKind::Discrete { .. } => ActionValue::Choice(cell.to_string()),
            };
            m.actions
                .push(action_value(spec, c, &v).map_err(|e| bad(at, &header[4 + d + c], e))?);
        }
        m.weight.push(parse(&rec[4 + d + a], at, "weight")?);
        m.annotators.push(parse(&rec[5 + d + a], at, "annotators")?);
        m.agreement
            .push(optional(&rec[6 + d + a], at, "agreement")?);
    }
    Ok(())
}

fn npz_array(src: &mut NpzSource, name: &str, shape: &[u64]) -> Result<Values, Bad> {
    let arr = src
        .array(name)
        .map_err(|e| bad(None, name, e))?
        .ok_or_else(|| bad(None, name, "array is missing"))?;
    if arr.shape != shape {
        return Err(bad(
            None,
            name,
            format!("shape {:?}, expected {shape:?}", arr.shape),
        ));
    }
    Ok(arr.values)
}

fn floats(v: Values, name: &str) -> Result<Vec<f32>, Bad> {
    match v {
        Values::Numbers(x) => Ok(x.into_iter().map(|x| x as f32).collect()),
        _ => Err(bad(None, name, "expected floats")),
    }
}

fn ints(v: Values, name: &str) -> Result<Vec<i64>, Bad> {
    match v {
        Values::Integers(x) => Ok(x),
        _ => Err(bad(None, name, "expected integers")),
    }
}

fn texts(v: Values, name: &str) -> Result<Vec<String>, Bad> {
    match v {
        Values::Text(x) => Ok(x),
        _ => Err(bad(None, name, "expected strings")),
    }
}

fn read_npz(path: &Path, spec: &Spec, m: &mut MergedSet) -> Result<(), Bad> {
    let mut src = NpzSource::open(path).map_err(|e| bad(None, "", e))?;
    let t = src
        .array("t")
        .map_err(|e| bad(None, "t", e))?
        .ok_or_else(|| bad(None, "t", "array is missing"))?;
    let &[n] = t.shape.as_slice() else {
        return Err(bad(
            None,
            "t",
            format!("shape {:?}, expected one axis", t.shape),
        ));
    };
    m.t = ints(t.values, "t")?;
    let (d, a) = (spec.state_dim() as u64, spec.action_dim() as u64);
    m.states = floats(npz_array(&mut src, "states", &[n, d])?, "states")?;
    m.actions = floats(npz_array(&mut src, "actions", &[n, a])?, "actions")?;
    m.episode = texts(npz_array(&mut src, "episode", &[n])?, "episode")?;
    let sources = texts(npz_array(&mut src, "source", &[n])?, "source")?;
    for (i, s) in sources.iter().enumerate() {
        m.source
            .push(source(s).map_err(|e| bad(Some(i as u64), "source", e))?);
    }
    let rounds = ints(npz_array(&mut src, "round", &[n])?, "round")?;
    m.round = rounds.iter().map(|&r| u32::try_from(r).ok()).collect();
    m.weight = floats(npz_array(&mut src, "weight", &[n])?, "weight")?;
    let counts = ints(npz_array(&mut src, "annotators", &[n])?, "annotators")?;
    m.annotators = counts
        .iter()
        .map(|&c| c.clamp(0, u32::MAX.into()) as u32)
        .collect();
    let agreement = floats(npz_array(&mut src, "agreement", &[n])?, "agreement")?;
    m.agreement = agreement
        .into_iter()
        .map(|x| (!x.is_nan()).then_some(x))
        .collect();
    Ok(())
}
