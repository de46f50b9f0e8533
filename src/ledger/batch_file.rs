//! Reading a batch of verdicts from CSV or JSON Lines (`countersteer correct --from FILE`).
//!
//! One line (CSV row or JSON object) per verdict, with these fields:
//! - `round`, `episode`, `t`: the step;
//! - one field per action channel, named as in the spec: a number for a continuous channel; a
//!   choice name or a 0-based choice index for a discrete one;
//! - `verdict` (optional): `action` (the default when channel values are given), `skip` or
//!   `unrecoverable` (then the channel fields stay empty);
//! - `retract`: the sequence number of a correction to withdraw; such a line holds nothing
//!   else;
//! - `note` (optional): free text stored with the correction.
//!
//! Empty CSV cells and JSON `null` count as absent. The format follows the file's extension:
//! `.csv`, or `.jsonl` / `.ndjson` / `.json` for JSON Lines. Every fault is a
//! [`LedgerProblem`] naming the line (CSV: the header is line 1) and the field; reading goes
//! on to the end so that every bad line is reported at once.

use std::path::Path;

use super::batch::{Batch, BatchItem, BatchLine};
use super::error::{LedgerError, LedgerProblem};
use super::record::{ActionValue, Verdict};
use crate::campaign::{ChannelKind, Spec};

/// Largest batch file read: far more than any review produces.
pub const MAX_BATCH_BYTES: u64 = 1 << 30;

/// The fixed field names of a batch line (the action channels add their own).
pub const BATCH_FIELDS: [&str; 6] = ["round", "episode", "t", "verdict", "retract", "note"];

/// A value as read: absent, text (every CSV cell) or a JSON number.
#[derive(Debug, Clone, PartialEq)]
enum Cell {
    Empty,
    Text(String),
    Number(f64),
}

impl Cell {
    fn is_empty(&self) -> bool {
        *self == Cell::Empty
    }
}

/// The fields of one line: the fixed ones in [`BATCH_FIELDS`] order, then one per channel.
struct Fields {
    cells: Vec<Cell>,
}

const ROUND: usize = 0;
const EPISODE: usize = 1;
const T: usize = 2;
const VERDICT: usize = 3;
const RETRACT: usize = 4;
const NOTE: usize = 5;

impl Fields {
    fn new(spec: &Spec) -> Self {
        Fields {
            cells: vec![Cell::Empty; BATCH_FIELDS.len() + spec.action_dim()],
        }
    }
}

/// Index of a field name among [`BATCH_FIELDS`] and the spec's channels.
fn field_index(spec: &Spec, name: &str) -> Option<usize> {
    BATCH_FIELDS
        .iter()
        .position(|f| *f == name)
        .or_else(|| spec.channel_index(name).map(|c| BATCH_FIELDS.len() + c))
}

fn field_name(spec: &Spec, i: usize) -> &str {
    BATCH_FIELDS
        .get(i)
        .copied()
        .unwrap_or_else(|| &spec.actions[i - BATCH_FIELDS.len()].name)
}

/// Reads a batch file. Only a file that cannot be read at all is an error; faults in its
/// lines are kept in [`Batch::problems`] (and the good lines in [`Batch::lines`]).
pub fn read_batch(path: &Path, spec: &Spec) -> Result<Batch, LedgerError> {
    let len = std::fs::metadata(path)
        .map_err(LedgerError::io(path))?
        .len();
    if len > MAX_BATCH_BYTES {
        return Err(LedgerError::TooLarge {
            path: path.to_path_buf(),
            len,
            max: MAX_BATCH_BYTES,
        });
    }
    let bytes = std::fs::read(path).map_err(LedgerError::io(path))?;
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or_default()
        .to_ascii_lowercase();
    let mut reader = Reader {
        spec,
        batch: Batch {
            source: path.to_path_buf(),
            ..Batch::default()
        },
    };
    match ext.as_str() {
        "csv" => reader.csv(&bytes),
        "jsonl" | "ndjson" | "json" => reader.jsonl(&bytes),
        _ => reader.problem(
            0,
            "",
            "unknown format: name the file .csv, or .jsonl for JSON Lines".into(),
        ),
    }
    Ok(reader.batch)
}

struct Reader<'a> {
    spec: &'a Spec,
    batch: Batch,
}

impl Reader<'_> {
    fn problem(&mut self, line: u64, field: &str, message: String) {
        self.batch.problems.push(LedgerProblem {
            file: self.batch.source.clone(),
            line,
            field: field.to_string(),
            message,
        });
    }

    fn csv(&mut self, bytes: &[u8]) {
        let mut r = csv::ReaderBuilder::new()
            .flexible(true)
            .has_headers(false)
            .from_reader(bytes);
        let mut records = r.records();
        let header = match records.next() {
            Some(Ok(h)) => h,
            Some(Err(e)) => return self.problem(1, "", format!("not a CSV header: {e}")),
            None => return self.problem(1, "", "the file is empty".into()),
        };
        let columns = self.csv_columns(&header);
        for record in records {
            match record {
                Ok(rec) => {
                    let line = rec.position().map_or(0, |p| p.line());
                    self.csv_row(&columns, &rec, line);
                }
                Err(e) => {
                    let line = e.position().map_or(0, |p| p.line());
                    self.problem(line, "", format!("not a CSV row: {e}"));
                }
            }
        }
    }

    /// The field index of each header column; unknown and repeated columns are problems.
    fn csv_columns(&mut self, header: &csv::StringRecord) -> Vec<Option<usize>> {
        let mut seen = std::collections::HashSet::new();
        let mut columns = Vec::new();
        for name in header.iter().map(str::trim) {
            let i = field_index(self.spec, name);
            match i {
                None => self.problem(1, name, unknown_field(self.spec, name)),
                Some(i) if !seen.insert(i) => {
                    self.problem(1, name, format!("column `{name}` appears twice"))
                }
                Some(_) => {}
            }
            columns.push(i);
        }
        columns
    }

    fn csv_row(&mut self, columns: &[Option<usize>], rec: &csv::StringRecord, line: u64) {
        if rec.iter().all(|c| c.trim().is_empty()) {
            return;
        }
        if rec.len() != columns.len() {
            let m = format!("{} fields, the header has {}", rec.len(), columns.len());
            return self.problem(line, "", m);
        }
        let mut fields = Fields::new(self.spec);
        for (col, cell) in columns.iter().zip(rec.iter()) {
            let text = cell.trim();
            if let Some(i) = *col
                && !text.is_empty()
            {
                fields.cells[i] = Cell::Text(text.to_string());
            }
        }
        self.item(fields, line);
    }

    fn jsonl(&mut self, bytes: &[u8]) {
        for (i, line) in bytes.split(|&b| b == b'\n').enumerate() {
            let n = i as u64 + 1;
            if line.iter().all(u8::is_ascii_whitespace) {
                continue;
            }
            match serde_json::from_slice::<serde_json::Map<String, serde_json::Value>>(line) {
                Ok(obj) => self.json_object(obj, n),
                Err(e) => self.problem(n, "", format!("not a JSON object: {e}")),
            }
        }
    }

    fn json_object(&mut self, obj: serde_json::Map<String, serde_json::Value>, line: u64) {
        use serde_json::Value;
        let mut fields = Fields::new(self.spec);
        let mut bad = false;
        for (key, value) in obj {
            let Some(i) = field_index(self.spec, &key) else {
                let m = unknown_field(self.spec, &key);
                self.problem(line, &key, m);
                bad = true;
                continue;
            };
            fields.cells[i] = match value {
                Value::Null => Cell::Empty,
                Value::String(s) => Cell::Text(s),
                Value::Number(x) => Cell::Number(x.as_f64().unwrap_or(f64::NAN)),
                other => {
                    let m = format!("expected a string or a number, got {other}");
                    self.problem(line, &key, m);
                    bad = true;
                    continue;
                }
            };
        }
        if !bad {
            self.item(fields, line);
        }
    }

    /// Turns a line's fields into an item, or records every fault found in them.
    fn item(&mut self, f: Fields, line: u64) {
        let before = self.batch.problems.len();
        let item = if f.cells[RETRACT].is_empty() {
            self.correction(&f, line)
        } else {
            self.retraction(&f, line)
        };
        if let Some(item) = item
            && self.batch.problems.len() == before
        {
            self.batch.lines.push(BatchLine { line, item });
        }
    }

    fn retraction(&mut self, f: &Fields, line: u64) -> Option<BatchItem> {
        for (i, c) in f.cells.iter().enumerate() {
            if i != RETRACT && !c.is_empty() {
                let name = field_name(self.spec, i).to_string();
                let m = "a `retract` line holds nothing else (the retraction is a line of its own)";
                self.problem(line, &name, m.into());
            }
        }
        let seq = self.whole(&f.cells[RETRACT], line, "retract", 1, u64::MAX as f64)?;
        Some(BatchItem::Retraction {
            retracts: seq as u64,
        })
    }

    fn correction(&mut self, f: &Fields, line: u64) -> Option<BatchItem> {
        let round = self.whole(&f.cells[ROUND], line, "round", 0, f64::from(u32::MAX));
        let t = self.whole(&f.cells[T], line, "t", -(1i64 << 53), (1i64 << 53) as f64);
        let episode = match &f.cells[EPISODE] {
            Cell::Text(s) => Some(s.clone()),
            Cell::Empty => self.absent(line, "episode"),
            Cell::Number(_) => self.absent_text(line, "episode"),
        };
        let note = match &f.cells[NOTE] {
            Cell::Text(s) => Some(s.clone()),
            Cell::Empty => None,
            Cell::Number(_) => self.absent_text(line, "note"),
        };
        let verdict = self.verdict(f, line)?;
        Some(BatchItem::Correction {
            round: round? as u32,
            episode: episode?,
            t: t? as i64,
            verdict,
            note,
        })
    }

    fn verdict(&mut self, f: &Fields, line: u64) -> Option<Verdict> {
        let channels = &f.cells[BATCH_FIELDS.len()..];
        let kind = match &f.cells[VERDICT] {
            Cell::Empty => "action".to_string(),
            Cell::Text(s) => s.to_ascii_lowercase(),
            Cell::Number(x) => x.to_string(),
        };
        match kind.as_str() {
            "action" => self.action(channels, line),
            "skip" | "unrecoverable" => {
                for (c, cell) in self.spec.actions.iter().zip(channels) {
                    if !cell.is_empty() {
                        let m = format!("a `{kind}` verdict takes no channel values");
                        self.problem(line, &c.name, m);
                    }
                }
                Some(if kind == "skip" {
                    Verdict::Skip
                } else {
                    Verdict::Unrecoverable
                })
            }
            other => {
                let m = format!("`{other}` is not a verdict (action, skip or unrecoverable)");
                self.problem(line, "verdict", m);
                None
            }
        }
    }

    fn action(&mut self, channels: &[Cell], line: u64) -> Option<Verdict> {
        let given = channels.iter().filter(|c| !c.is_empty()).count();
        if given == 0 {
            let m = "no verdict: give a value for every action channel, or `verdict` skip or \
                     unrecoverable, or `retract`";
            self.problem(line, "", m.into());
            return None;
        }
        let spec = self.spec;
        let mut values = Vec::with_capacity(channels.len());
        for (c, cell) in spec.actions.iter().zip(channels) {
            let v = match (&c.kind, cell) {
                (_, Cell::Empty) => {
                    let m = format!(
                        "no value for channel `{}`: {given} of {} channels given",
                        c.name,
                        channels.len()
                    );
                    self.problem(line, &c.name, m);
                    continue;
                }
                (ChannelKind::Continuous { .. }, Cell::Number(x)) => ActionValue::Number(*x),
                (ChannelKind::Continuous { .. }, Cell::Text(s)) => match s.parse::<f64>() {
                    Ok(x) => ActionValue::Number(x),
                    Err(_) => {
                        let m = format!("`{}`: needs a number, got `{s}`", c.name);
                        self.problem(line, &c.name, m);
                        continue;
                    }
                },
                (ChannelKind::Discrete { choices }, cell) => discrete(choices, cell),
            };
            values.push(v);
        }
        (values.len() == channels.len()).then_some(Verdict::Action(values))
    }

    /// A whole number in `lo..=hi` from a cell, or a problem.
    fn whole(&mut self, cell: &Cell, line: u64, field: &str, lo: i64, hi: f64) -> Option<f64> {
        let x = match cell {
            Cell::Empty => return self.absent(line, field),
            Cell::Number(x) => *x,
            Cell::Text(s) => s.parse::<f64>().unwrap_or(f64::NAN),
        };
        if x.fract() == 0.0 && x >= lo as f64 && x <= hi {
            return Some(x);
        }
        let shown = match cell {
            Cell::Text(s) => s.clone(),
            _ => x.to_string(),
        };
        let m = format!("needs a whole number from {lo}, got `{shown}`");
        self.problem(line, field, m);
        None
    }

    fn absent<T>(&mut self, line: u64, field: &str) -> Option<T> {
        self.problem(line, field, format!("no `{field}`"));
        None
    }

    fn absent_text<T>(&mut self, line: u64, field: &str) -> Option<T> {
        self.problem(line, field, format!("`{field}` must be text"));
        None
    }
}

/// A discrete channel's value: a choice name, or a 0-based choice index (as a number or as
/// digits). Anything else is kept as given so that the campaign check names the fault.
fn discrete(choices: &[String], cell: &Cell) -> ActionValue {
    let by_index = |x: f64| {
        (x.fract() == 0.0 && x >= 0.0)
            .then(|| choices.get(x as usize))
            .flatten()
    };
    match cell {
        Cell::Text(s) if choices.contains(s) => ActionValue::Choice(s.clone()),
        Cell::Text(s) => match s.parse::<u64>().ok().and_then(|i| by_index(i as f64)) {
            Some(name) => ActionValue::Choice(name.clone()),
            None => ActionValue::Choice(s.clone()),
        },
        Cell::Number(x) => match by_index(*x) {
            Some(name) => ActionValue::Choice(name.clone()),
            None => ActionValue::Number(*x),
        },
        Cell::Empty => ActionValue::Choice(String::new()),
    }
}

fn unknown_field(spec: &Spec, name: &str) -> String {
    let channels: Vec<&str> = spec.actions.iter().map(|c| c.name.as_str()).collect();
    format!(
        "`{name}` is no field of a batch (fields: {}, and the action channels {})",
        BATCH_FIELDS.join(", "),
        channels.join(", ")
    )
}
