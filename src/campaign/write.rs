//! Writers for step tables in the campaign's own formats (used by the demo generator and
//! by anyone converting data). Floats are written in their shortest exact form, so reading
//! a written file back gives the same f32 bits.

use std::io::{self, Write};

use serde_json::{Map, Value, json};

use super::npz::NpzWriter;
use super::spec::{ChannelKind, Spec};
use super::steps::StepTable;

fn action_json(spec: &Spec, a: &[f32]) -> Value {
    Value::Array(
        spec.actions
            .iter()
            .zip(a)
            .map(|(c, &v)| match &c.kind {
                ChannelKind::Discrete { choices } => {
                    json!(choices.get(v as usize).cloned().unwrap_or_default())
                }
                ChannelKind::Continuous { .. } => json!(v),
            })
            .collect(),
    )
}

/// Relative path of a frame as written from a data file in `data_dir` (relative to the
/// campaign folder): the stored path with `data_dir`'s prefix removed when it has it.
fn frame_from(data_dir: &str, stored: &str) -> String {
    let prefix = format!("{}/", data_dir.trim_end_matches('/'));
    match stored.strip_prefix(&prefix) {
        Some(rest) if !data_dir.is_empty() => rest.to_string(),
        _ => {
            let ups = data_dir.split('/').filter(|s| !s.is_empty()).count();
            format!("{}{stored}", "../".repeat(ups))
        }
    }
}

/// Writes a table as JSON Lines; frame paths are made relative to `data_dir` (the folder,
/// relative to the campaign, the file will live in).
pub fn write_jsonl<W: Write>(
    t: &StepTable,
    spec: &Spec,
    data_dir: &str,
    mut w: W,
) -> io::Result<()> {
    for e in &t.episodes {
        for row in e.rows() {
            let mut m = Map::new();
            m.insert("episode".into(), json!(e.name));
            m.insert("t".into(), json!(t.t[row]));
            m.insert("state".into(), json!(t.state(row)));
            m.insert("action".into(), action_json(spec, t.action(row)));
            if let Some(f) = t.frame(row) {
                m.insert("frame".into(), json!(frame_from(data_dir, f)));
            }
            if !t.interventions.is_empty() {
                m.insert("intervention".into(), json!(t.intervention(row)));
            }
            if let Some(s) = t.samples(row) {
                m.insert(
                    "samples".into(),
                    Value::Array(s.map(|a| action_json(spec, a)).collect()),
                );
            }
            outcome_json(t, spec, row, &mut m);
            serde_json::to_writer(&mut w, &Value::Object(m))?;
            w.write_all(b"\n")?;
        }
    }
    w.flush()
}

/// The outcome name of the episode holding `row`, on the episode's last row only.
fn outcome_at(t: &StepTable, spec: &Spec, row: usize) -> Option<String> {
    let e = t.episode_of(row);
    let ep = t.episodes.get(e)?;
    if row + 1 != ep.start + ep.len {
        return None;
    }
    let o = t.outcome(e)?;
    spec.outcome_list().get(o as usize).map(|o| o.name.clone())
}

fn outcome_json(t: &StepTable, spec: &Spec, row: usize, m: &mut Map<String, Value>) {
    if let Some(r) = t.reward(row) {
        m.insert("reward".into(), json!(r));
    }
    if let Some(c) = t.cost(row) {
        m.insert("cost".into(), json!(c));
    }
    if let Some(o) = outcome_at(t, spec, row) {
        m.insert("outcome".into(), json!(o));
    }
}

/// Writes a table as CSV (no ensemble samples: CSV does not carry them).
pub fn write_csv<W: Write>(t: &StepTable, spec: &Spec, data_dir: &str, w: W) -> io::Result<()> {
    let mut out = csv::Writer::from_writer(w);
    let mut header: Vec<String> = vec!["episode".into(), "t".into()];
    header.extend(spec.features.iter().map(|f| f.name.clone()));
    header.extend(spec.actions.iter().map(|c| c.name.clone()));
    let frames = !t.frames.is_empty();
    let flags = !t.interventions.is_empty();
    if frames {
        header.push("frame".into());
    }
    if flags {
        header.push("intervention".into());
    }
    let extras = [
        !t.rewards.is_empty(),
        !t.costs.is_empty(),
        !t.outcomes.is_empty(),
    ];
    for (name, on) in ["reward", "cost", "outcome"].iter().zip(extras) {
        if on {
            header.push((*name).into());
        }
    }
    out.write_record(&header)?;
    for e in &t.episodes {
        for row in e.rows() {
            let mut rec: Vec<String> = vec![e.name.clone(), t.t[row].to_string()];
            rec.extend(t.state(row).iter().map(|v| v.to_string()));
            rec.extend(
                spec.actions
                    .iter()
                    .zip(t.action(row))
                    .map(|(c, &v)| c.format_value(v)),
            );
            if frames {
                rec.push(
                    t.frame(row)
                        .map(|f| frame_from(data_dir, f))
                        .unwrap_or_default(),
                );
            }
            if flags {
                rec.push(t.intervention(row).to_string());
            }
            let num = |v: Option<f32>| v.map(|x| x.to_string()).unwrap_or_default();
            let cells = [
                num(t.reward(row)),
                num(t.cost(row)),
                outcome_at(t, spec, row).unwrap_or_default(),
            ];
            rec.extend(cells.into_iter().zip(extras).filter(|c| c.1).map(|c| c.0));
            out.write_record(&rec)?;
        }
    }
    out.flush()
}

/// Writes a table as `.npz` (states/actions float32, episode as strings, t int64,
/// intervention bool, reward and cost float32 (NaN for none) when present). Frames, samples
/// and outcomes (see [`write_npz_with_outcomes`]) are left out.
pub fn write_npz<W: Write + io::Seek>(t: &StepTable, w: W) -> io::Result<()> {
    write_npz_with_outcomes(t, None, w)
}

/// Like [`write_npz`], plus the `outcome` array (names from `spec`, empty for none; on each
/// episode's last row) when `spec` is given and the table has outcomes.
pub fn write_npz_with_outcomes<W: Write + io::Seek>(
    t: &StepTable,
    spec: Option<&Spec>,
    w: W,
) -> io::Result<()> {
    let mut npz = NpzWriter::new(w);
    let n = t.len() as u64;
    npz.numbers("states", &[n, t.state_dim as u64], t.states.iter().copied())?;
    npz.numbers(
        "actions",
        &[n, t.action_dim as u64],
        t.actions.iter().copied(),
    )?;
    write_episode_names(&mut npz, t)?;
    npz.numbers("t", &[n], t.t.iter().copied())?;
    if !t.interventions.is_empty() {
        npz.numbers("intervention", &[n], t.interventions.iter().copied())?;
    }
    if !t.rewards.is_empty() {
        npz.numbers("reward", &[n], t.rewards.iter().copied())?;
    }
    if !t.costs.is_empty() {
        npz.numbers("cost", &[n], t.costs.iter().copied())?;
    }
    if let Some(spec) = spec.filter(|_| !t.outcomes.is_empty()) {
        let names: Vec<String> = (0..t.len())
            .map(|r| outcome_at(t, spec, r).unwrap_or_default())
            .collect();
        npz.strings("outcome", names.iter().map(String::as_str))?;
    }
    npz.finish().map(drop)
}

/// Writes the `episode` array of an `.npz`: each row's episode name, as a numpy unicode
/// array (`<U{longest}`), which `numpy.load` reads without pickle.
pub fn write_episode_names<W: Write + io::Seek>(
    npz: &mut NpzWriter<W>,
    t: &StepTable,
) -> io::Result<()> {
    let names = t
        .episodes
        .iter()
        .flat_map(|e| std::iter::repeat_n(e.name.as_str(), e.len));
    npz.strings("episode", names)
}
