//! Writers of the merged set: JSON Lines, CSV and NumPy `.npz`.
//!
//! Columns in every format: `source`, `round`, `episode`, `t`, the state features, the action
//! channels, `weight`, `annotators`, `agreement`.
//! - JSON Lines: `state` and `action` arrays as in the campaign's step records (choice names
//!   for discrete channels); `round` and `agreement` are `null` when absent.
//! - CSV: one column per feature and channel, named as in the spec; absent values are empty.
//! - `.npz`: `states` (n, D) float32, `actions` (n, A) float32 (choice indices), `source`,
//!   `episode` unicode strings, `round` int64 (-1 for demonstrations), `t` int64, `weight`
//!   float32, `annotators` int64, `agreement` float32 (NaN when absent), plus `state_names`
//!   and `action_names`. It loads with `numpy.load` and no glue code (no pickled objects).

use std::io::{self, Seek, Write};

use serde::Serialize;

use super::rows::MergedSet;
use crate::campaign::npz::NpzWriter;
use crate::campaign::{ChannelKind, Spec};
use crate::progress::Progress;

const CHUNK: usize = 4096;

/// Counts `amount` rows done and stops when the export was cancelled.
fn checkpoint(progress: &Progress, amount: u64) -> io::Result<()> {
    progress.advance(amount);
    if progress.is_cancelled() {
        return Err(io::Error::new(io::ErrorKind::Interrupted, "cancelled"));
    }
    Ok(())
}

fn step(progress: &Progress, row: usize) -> io::Result<()> {
    if row % CHUNK == CHUNK - 1 {
        checkpoint(progress, CHUNK as u64)?;
    }
    Ok(())
}

#[derive(Serialize)]
#[serde(untagged)]
enum Cell<'a> {
    Number(f32),
    Choice(&'a str),
}

fn action_cells<'a>(spec: &'a Spec, a: &[f32]) -> Vec<Cell<'a>> {
    spec.actions
        .iter()
        .zip(a)
        .map(|(c, &v)| match &c.kind {
            ChannelKind::Continuous { .. } => Cell::Number(v),
            ChannelKind::Discrete { choices } => {
                Cell::Choice(choices.get(v as usize).map_or("", String::as_str))
            }
        })
        .collect()
}

#[derive(Serialize)]
struct JsonRow<'a> {
    source: &'a str,
    round: Option<u32>,
    episode: &'a str,
    t: i64,
    state: &'a [f32],
    action: Vec<Cell<'a>>,
    weight: f32,
    annotators: u32,
    agreement: Option<f32>,
}

/// Writes the set as JSON Lines.
pub fn write_jsonl<W: Write>(m: &MergedSet, spec: &Spec, mut w: W, p: &Progress) -> io::Result<()> {
    for i in 0..m.len() {
        let row = JsonRow {
            source: m.source[i].name(),
            round: m.round[i],
            episode: &m.episode[i],
            t: m.t[i],
            state: m.state(i),
            action: action_cells(spec, m.action(i)),
            weight: m.weight[i],
            annotators: m.annotators[i],
            agreement: m.agreement[i],
        };
        serde_json::to_writer(&mut w, &row)?;
        w.write_all(b"\n")?;
        step(p, i)?;
    }
    w.flush()
}

/// The CSV header: fixed columns around the spec's feature and channel names.
pub fn csv_header(spec: &Spec) -> Vec<String> {
    let mut h: Vec<String> = ["source", "round", "episode", "t"].map(String::from).into();
    h.extend(spec.features.iter().map(|f| f.name.clone()));
    h.extend(spec.actions.iter().map(|c| c.name.clone()));
    h.extend(["weight", "annotators", "agreement"].map(String::from));
    h
}

/// Writes the set as CSV.
pub fn write_csv<W: Write>(m: &MergedSet, spec: &Spec, w: W, p: &Progress) -> io::Result<()> {
    let mut out = csv::Writer::from_writer(w);
    out.write_record(csv_header(spec))?;
    let opt = |v: Option<String>| v.unwrap_or_default();
    for i in 0..m.len() {
        let mut rec = vec![
            m.source[i].name().to_string(),
            opt(m.round[i].map(|r| r.to_string())),
            m.episode[i].clone(),
            m.t[i].to_string(),
        ];
        rec.extend(m.state(i).iter().map(f32::to_string));
        rec.extend(
            spec.actions
                .iter()
                .zip(m.action(i))
                .map(|(c, &v)| c.format_value(v)),
        );
        rec.push(m.weight[i].to_string());
        rec.push(m.annotators[i].to_string());
        rec.push(opt(m.agreement[i].map(|a| a.to_string())));
        out.write_record(&rec)?;
        step(p, i)?;
    }
    out.flush()
}

type Npz<W> = NpzWriter<W>;

fn numbers<W: Write + Seek, T: npyz::AutoSerialize + Copy>(
    npz: &mut Npz<W>,
    name: &str,
    shape: &[u64],
    values: impl Iterator<Item = T>,
) -> io::Result<()> {
    npz.numbers(name, shape, values)
}

fn strings<W: Write + Seek>(npz: &mut Npz<W>, name: &str, values: &[String]) -> io::Result<()> {
    npz.strings(name, values.iter().map(String::as_str))
}

/// Writes the set as an uncompressed `.npz` archive.
pub fn write_npz<W: Write + Seek>(m: &MergedSet, w: W, p: &Progress) -> io::Result<()> {
    let n = m.len() as u64;
    let (d, a) = (m.state_names.len() as u64, m.action_names.len() as u64);
    let mut npz = NpzWriter::new(w);
    numbers(&mut npz, "states", &[n, d], m.states.iter().copied())?;
    checkpoint(p, n / 3)?;
    numbers(&mut npz, "actions", &[n, a], m.actions.iter().copied())?;
    let sources: Vec<String> = m.source.iter().map(|s| s.name().to_string()).collect();
    strings(&mut npz, "source", &sources)?;
    let rounds = m.round.iter().map(|r| r.map_or(-1, i64::from));
    numbers(&mut npz, "round", &[n], rounds)?;
    checkpoint(p, n / 3)?;
    strings(&mut npz, "episode", &m.episode)?;
    numbers(&mut npz, "t", &[n], m.t.iter().copied())?;
    numbers(&mut npz, "weight", &[n], m.weight.iter().copied())?;
    numbers(
        &mut npz,
        "annotators",
        &[n],
        m.annotators.iter().map(|&x| i64::from(x)),
    )?;
    let agreement = m.agreement.iter().map(|x| x.unwrap_or(f32::NAN));
    numbers(&mut npz, "agreement", &[n], agreement)?;
    strings(&mut npz, "state_names", &m.state_names)?;
    strings(&mut npz, "action_names", &m.action_names)?;
    checkpoint(p, n / 3)?;
    npz.finish().map(drop)
}
