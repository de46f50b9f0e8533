//! CSV step files: a header row naming `episode`, `t`, every spec feature and action channel,
//! and optionally `frame`, `intervention`, `reward`, `cost` and `outcome` (an empty cell gives
//! none). Ensemble samples are not carried by CSV.

use std::io::Read;
use std::path::Path;

use super::jsonl::{MAX_LINE_BYTES, utf16_mark};

use super::accept::{RowMeta, accept};
use super::error::{Location, ProblemKind, ProblemLog};
use super::outcome::RawOutcome;
use super::spec::Spec;
use super::steps::StepTableBuilder;
use super::validate::{RawValue, RowChecker, raw_from_text, resolve_frame};
use crate::progress::Progress;

struct Columns {
    episode: usize,
    t: usize,
    features: Vec<usize>,
    actions: Vec<usize>,
    frame: Option<usize>,
    intervention: Option<usize>,
    reward: Option<usize>,
    cost: Option<usize>,
    outcome: Option<usize>,
    width: usize,
}

fn columns(header: &csv::StringRecord, spec: &Spec, log: &mut ProblemLog) -> Option<Columns> {
    let at = Location::Line(1);
    let find = |name: &str| header.iter().position(|h| h.trim() == name);
    let mut missing = Vec::new();
    let mut need = |name: &str| {
        let i = find(name);
        if i.is_none() {
            missing.push(name.to_string());
        }
        i.unwrap_or(usize::MAX)
    };
    let episode = need("episode");
    let t = need("t");
    let features: Vec<usize> = spec.features.iter().map(|f| need(&f.name)).collect();
    let actions: Vec<usize> = spec.actions.iter().map(|c| need(&c.name)).collect();
    for m in &missing {
        log.error(
            ProblemKind::MissingColumn,
            at,
            m.as_str(),
            format!("column `{m}` is missing from the header"),
        );
    }
    let known = |h: &str| {
        [
            "episode",
            "t",
            "frame",
            "intervention",
            "reward",
            "cost",
            "outcome",
        ]
        .contains(&h)
            || spec.feature_index(h).is_some()
            || spec.channel_index(h).is_some()
    };
    for h in header.iter().map(str::trim).filter(|h| !known(h)) {
        log.error(
            ProblemKind::UnknownColumn,
            at,
            h,
            format!("column `{h}` is not in the spec"),
        );
    }
    let doubled = duplicates(header, log);
    if !missing.is_empty() || doubled {
        return None;
    }
    Some(Columns {
        episode,
        t,
        features,
        actions,
        frame: find("frame"),
        intervention: find("intervention"),
        reward: find("reward"),
        cost: find("cost"),
        outcome: find("outcome"),
        width: header.len(),
    })
}

/// Reports every header name that appears more than once (which of the copies holds the
/// data cannot be known); true when there is one.
fn duplicates(header: &csv::StringRecord, log: &mut ProblemLog) -> bool {
    let names: Vec<&str> = header.iter().map(str::trim).collect();
    let mut found = false;
    for (i, h) in names.iter().enumerate() {
        if let Some(first) = names[..i].iter().position(|x| x == h) {
            found = true;
            log.error(
                ProblemKind::DuplicateColumn,
                Location::Line(1),
                *h,
                format!(
                    "column `{h}` appears twice (columns {} and {}); keep one",
                    first + 1,
                    i + 1
                ),
            );
        }
    }
    found
}

/// Reads one CSV step file into the builder, reporting every fault to `log`.
pub fn read_csv<R: Read>(
    input: R,
    data_dir: &Path,
    checker: &mut RowChecker<'_>,
    b: &mut StepTableBuilder,
    log: &mut ProblemLog,
    progress: &Progress,
) {
    let mut input = LineCap::new(input);
    match input.peek_start() {
        Ok(head) => {
            if let Some(msg) = utf16_mark(head) {
                log.error(ProblemKind::NotUtf8, Location::Line(1), "", msg);
                return;
            }
        }
        Err(e) => {
            let msg = format!("read failed: {e}");
            log.error(ProblemKind::Unreadable, Location::File, "", msg);
            return;
        }
    }
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .from_reader(input);
    let header = match rdr.headers() {
        Ok(h) if !(h.is_empty() || h.len() == 1 && h[0].trim().is_empty()) => h.clone(),
        Ok(_) => {
            log.error(
                ProblemKind::Empty,
                Location::File,
                "",
                "the file has no header row",
            );
            return;
        }
        Err(e) => {
            let (kind, at, msg) = csv_fault(&e, 1);
            log.error(kind, at, "", format!("header: {msg}"));
            return;
        }
    };
    let spec = checker.spec();
    let Some(cols) = columns(&header, spec, log) else {
        return;
    };
    let mut record = csv::StringRecord::new();
    let mut last_byte = 0u64;
    let mut raw_actions: Vec<RawValue> = Vec::with_capacity(cols.actions.len());
    loop {
        let line = rdr.position().line() + 1;
        match rdr.read_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                let (kind, at, msg) = csv_fault(&e, line);
                log.error(kind, at, "", msg);
                if matches!(e.kind(), csv::ErrorKind::Io(_)) {
                    break;
                }
                continue;
            }
        }
        let byte = record.position().map_or(last_byte, |p| p.byte());
        progress.advance(byte.saturating_sub(last_byte));
        last_byte = byte;
        if progress.is_cancelled() {
            return;
        }
        let at = Location::Line(record.position().map_or(line, |p| p.line()));
        if record.len() == 1 && record[0].trim().is_empty() {
            continue;
        }
        if record.len() != cols.width {
            let msg = format!(
                "expected {} fields as in the header, found {}",
                cols.width,
                record.len()
            );
            log.error(ProblemKind::WrongDimension, at, "", msg);
            continue;
        }
        let mut ok = true;
        let mut states = Vec::with_capacity(cols.features.len());
        for (f, &i) in spec.features.iter().zip(&cols.features) {
            match record[i].trim().parse::<f64>() {
                Ok(v) => states.push(v),
                Err(_) => {
                    let msg = format!("`{}` is not a number", &record[i]);
                    log.error(ProblemKind::MalformedCsv, at, f.name.as_str(), msg);
                    ok = false;
                }
            }
        }
        ok = ok && checker.state(states.into_iter(), log, at);
        raw_actions.clear();
        raw_actions.extend(cols.actions.iter().map(|&i| raw_from_text(&record[i])));
        ok &= checker.action(raw_actions.iter(), log, at, "action");
        checker.samples.clear();
        let t = match record[cols.t].trim().parse::<i64>() {
            Ok(t) => t,
            Err(_) => {
                log.error(
                    ProblemKind::MalformedCsv,
                    at,
                    "t",
                    format!("`{}` is not an integer", &record[cols.t]),
                );
                continue;
            }
        };
        let frame = match cols
            .frame
            .map(|i| record[i].trim())
            .filter(|s| !s.is_empty())
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
        let intervention = match cols.intervention.map(|i| parse_flag(&record[i])) {
            None => None,
            Some(Ok(v)) => v,
            Some(Err(s)) => {
                log.error(
                    ProblemKind::MalformedCsv,
                    at,
                    "intervention",
                    format!("`{s}` is not true/false/1/0"),
                );
                continue;
            }
        };
        ok &= outcome_cells(&record, &cols, checker, log, at);
        if ok {
            let meta = RowMeta {
                episode: record[cols.episode].trim().to_string(),
                t,
                frame,
                intervention,
            };
            if !accept(b, log, at, meta, checker) {
                return;
            }
        }
    }
}

/// Reads the optional `reward`, `cost` and `outcome` cells into the checker.
fn outcome_cells(
    record: &csv::StringRecord,
    cols: &Columns,
    checker: &mut RowChecker<'_>,
    log: &mut ProblemLog,
    at: Location,
) -> bool {
    let mut ok = true;
    let mut num = |col: Option<usize>, field: &str| -> Option<f64> {
        let text = record.get(col?)?.trim();
        if text.is_empty() {
            return None;
        }
        let v = text.parse::<f64>();
        if v.is_err() {
            let msg = format!("`{text}` is not a number");
            log.error(ProblemKind::MalformedCsv, at, field, msg);
            ok = false;
        }
        v.ok()
    };
    let raw = RawOutcome {
        reward: num(cols.reward, "reward"),
        cost: num(cols.cost, "cost"),
        outcome: cols.outcome.and_then(|i| record.get(i)),
    };
    checker.outcome(raw, log, at) && ok
}

fn parse_flag(s: &str) -> Result<Option<bool>, String> {
    match s.trim() {
        "" => Ok(None),
        "1" | "true" | "True" | "TRUE" => Ok(Some(true)),
        "0" | "false" | "False" | "FALSE" => Ok(Some(false)),
        other => Err(other.to_string()),
    }
}

/// Kind, line and wording of a CSV reader error.
fn csv_fault(e: &csv::Error, line: u64) -> (ProblemKind, Location, String) {
    let at = Location::Line(e.position().map_or(line, |p| p.line()));
    match e.kind() {
        csv::ErrorKind::Io(io) => {
            match io.get_ref().and_then(|x| x.downcast_ref::<LineTooLong>()) {
                Some(long) => (
                    ProblemKind::TooLong,
                    Location::Line(long.line),
                    long.to_string(),
                ),
                None => (ProblemKind::Unreadable, at, format!("read failed: {io}")),
            }
        }
        csv::ErrorKind::Utf8 { err, .. } => (
            ProblemKind::NotUtf8,
            at,
            format!(
                "not UTF-8 text in field {} (byte {} of the field)",
                err.field() + 1,
                err.valid_up_to() + 1
            ),
        ),
        _ => (ProblemKind::MalformedCsv, at, e.to_string()),
    }
}

/// The error a [`LineCap`] reader fails with.
#[derive(Debug)]
struct LineTooLong {
    line: u64,
}

impl std::fmt::Display for LineTooLong {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "line longer than {MAX_LINE_BYTES} bytes; reading stopped here"
        )
    }
}

impl std::error::Error for LineTooLong {}

/// Passes bytes through, failing once one line runs past [`MAX_LINE_BYTES`]: the CSV reader
/// would otherwise grow its record buffer without bound on a file with no line breaks.
/// Lines wholly inside one read are not measured: the CSV reader reads 8 KiB at a time.
struct LineCap<R> {
    inner: R,
    start: Vec<u8>,
    run: usize,
    line: u64,
}

impl<R: Read> LineCap<R> {
    fn new(inner: R) -> Self {
        LineCap {
            inner,
            start: Vec::new(),
            run: 0,
            line: 1,
        }
    }

    /// Reads (and keeps for later reads) the first bytes of the stream.
    fn peek_start(&mut self) -> std::io::Result<&[u8]> {
        let mut head = [0u8; 4];
        let n = self.inner.read(&mut head)?;
        self.start = head[..n].to_vec();
        Ok(&self.start)
    }

    fn count(&mut self, chunk: &[u8]) -> std::io::Result<()> {
        let first = chunk.iter().position(|&b| b == b'\n');
        let before = first.unwrap_or(chunk.len());
        if self.run + before > MAX_LINE_BYTES {
            return Err(std::io::Error::other(LineTooLong { line: self.line }));
        }
        match chunk.iter().rposition(|&b| b == b'\n') {
            Some(last) => {
                self.line += chunk.iter().filter(|&&b| b == b'\n').count() as u64;
                self.run = chunk.len() - last - 1;
            }
            None => self.run += chunk.len(),
        }
        Ok(())
    }
}

impl<R: Read> Read for LineCap<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = if self.start.is_empty() {
            self.inner.read(buf)?
        } else {
            let n = self.start.len().min(buf.len());
            buf[..n].copy_from_slice(&self.start[..n]);
            self.start.drain(..n);
            n
        };
        self.count(&buf[..n])?;
        Ok(n)
    }
}
