//! JSON Lines step files, read line by line (never as one string).

use std::io::{BufRead, BufReader, Read};
use std::path::Path;

use serde::Deserialize;

use super::accept::{RowMeta, accept};
use super::error::{Location, ProblemKind, ProblemLog};
use super::outcome::RawOutcome;
use super::steps::StepTableBuilder;
use super::validate::{RawValue, RowChecker, resolve_frame};
use crate::progress::Progress;

/// Longest accepted line, in bytes. A longer line is reported and skipped.
pub const MAX_LINE_BYTES: usize = 16 << 20;

/// An episode id: written as a string or an integer.
#[derive(Debug, Deserialize)]
#[serde(untagged)]
enum EpisodeId {
    Name(String),
    Number(i64),
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct JsonStep {
    episode: EpisodeId,
    t: i64,
    state: Vec<f64>,
    action: Vec<RawValue>,
    #[serde(default)]
    frame: Option<String>,
    #[serde(default)]
    intervention: Option<bool>,
    #[serde(default)]
    samples: Option<Vec<Vec<RawValue>>>,
    #[serde(default)]
    reward: Option<f64>,
    #[serde(default)]
    cost: Option<f64>,
    #[serde(default)]
    outcome: Option<String>,
}

/// Reads one JSON Lines step file into the builder, reporting every fault to `log`.
/// `data_dir` is the file's folder relative to the campaign folder (for frame paths).
pub fn read_jsonl<R: Read>(
    input: R,
    data_dir: &Path,
    checker: &mut RowChecker<'_>,
    b: &mut StepTableBuilder,
    log: &mut ProblemLog,
    progress: &Progress,
) {
    let mut reader = BufReader::with_capacity(1 << 16, input);
    let mut buf = Vec::with_capacity(1024);
    let mut line_no = 0u64;
    loop {
        buf.clear();
        line_no += 1;
        let n = match reader
            .by_ref()
            .take(MAX_LINE_BYTES as u64 + 1)
            .read_until(b'\n', &mut buf)
        {
            Ok(0) => break,
            Ok(n) => n,
            Err(e) => {
                log.error(
                    ProblemKind::Unreadable,
                    Location::Line(line_no),
                    "",
                    format!("read failed: {e}"),
                );
                break;
            }
        };
        progress.advance(n as u64);
        let at = Location::Line(line_no);
        if buf.len() > MAX_LINE_BYTES {
            log.error(
                ProblemKind::TooLong,
                at,
                "",
                format!("line longer than {MAX_LINE_BYTES} bytes"),
            );
            skip_rest_of_line(&mut reader, progress);
            continue;
        }
        let mut text = buf.as_slice();
        if line_no == 1 {
            if let Some(msg) = utf16_mark(text) {
                log.error(ProblemKind::NotUtf8, at, "", msg);
                return;
            }
            text = text.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(text);
        }
        if let Err(e) = std::str::from_utf8(text) {
            log.error(ProblemKind::NotUtf8, at, "", not_utf8(text, &e));
            continue;
        }
        if text.iter().all(u8::is_ascii_whitespace) {
            continue;
        }
        if progress.is_cancelled() {
            return;
        }
        let step: JsonStep = match serde_json::from_slice(text) {
            Ok(s) => s,
            Err(e) => {
                let (field, msg) = json_fault(&e, text);
                log.error(ProblemKind::MalformedJson, at, field, msg);
                continue;
            }
        };
        if !row(step, at, data_dir, checker, b, log) {
            return;
        }
    }
}

fn row(
    step: JsonStep,
    at: Location,
    data_dir: &Path,
    c: &mut RowChecker<'_>,
    b: &mut StepTableBuilder,
    log: &mut ProblemLog,
) -> bool {
    let mut ok = c.state(step.state.iter().copied(), log, at);
    ok &= c.action(step.action.iter(), log, at, "action");
    c.samples.clear();
    for (i, s) in step.samples.iter().flatten().enumerate() {
        ok &= c.sample(s.iter(), log, at, &format!("samples[{i}]"));
    }
    let raw = RawOutcome {
        reward: step.reward,
        cost: step.cost,
        outcome: step.outcome.as_deref(),
    };
    ok &= c.outcome(raw, log, at);
    let frame = match step.frame.as_deref().map(|f| resolve_frame(data_dir, f)) {
        Some(Err(msg)) => {
            log.error(ProblemKind::BadFramePath, at, "frame", msg);
            return true;
        }
        Some(Ok(p)) => Some(p),
        None => None,
    };
    if !ok {
        return true;
    }
    let episode = match step.episode {
        EpisodeId::Name(s) => s,
        EpisodeId::Number(n) => n.to_string(),
    };
    let meta = RowMeta {
        episode,
        t: step.t,
        frame,
        intervention: step.intervention,
    };
    accept(b, log, at, meta, c)
}

/// Says so when text starts with a UTF-16 byte-order mark.
pub(crate) fn utf16_mark(text: &[u8]) -> Option<String> {
    let which = match text {
        [0xFF, 0xFE, ..] => "little-endian",
        [0xFE, 0xFF, ..] => "big-endian",
        _ => return None,
    };
    Some(format!(
        "the file is UTF-16 ({which} byte-order mark); save it as UTF-8"
    ))
}

/// Words a UTF-8 fault with the 1-based column of the first bad byte.
pub(crate) fn not_utf8(text: &[u8], e: &std::str::Utf8Error) -> String {
    let at = e.valid_up_to();
    format!(
        "not UTF-8 text: byte 0x{:02x} at column {}",
        text.get(at).copied().unwrap_or(0),
        at + 1
    )
}

fn skip_rest_of_line<R: BufRead>(reader: &mut R, progress: &Progress) {
    loop {
        let (done, used) = match reader.fill_buf() {
            Ok([]) | Err(_) => return,
            Ok(chunk) => match chunk.iter().position(|&c| c == b'\n') {
                Some(i) => (true, i + 1),
                None => (false, chunk.len()),
            },
        };
        reader.consume(used);
        progress.advance(used as u64);
        if done {
            return;
        }
    }
}

/// Names the field of a serde_json error where serde says it, and words the rest.
fn json_fault(e: &serde_json::Error, text: &[u8]) -> (String, String) {
    let msg = e.to_string();
    let field = ["missing field `", "unknown field `", "duplicate field `"]
        .iter()
        .find_map(|p| {
            msg.split_once(p)
                .and_then(|(_, rest)| rest.split_once('`'))
                .map(|(f, _)| f.to_string())
        })
        .or_else(|| field_at_column(text, e.column()))
        .unwrap_or_default();
    // serde counts lines within the one-line text; the caller reports the file's line.
    let msg = match msg.rsplit_once(" at line ") {
        Some((head, _)) => format!("{head} (column {})", e.column()),
        None => msg,
    };
    (field, msg)
}

/// The last `"key":` before the error column: the field a type error is about.
fn field_at_column(text: &[u8], column: usize) -> Option<String> {
    let upto = std::str::from_utf8(&text[..column.min(text.len())]).ok()?;
    let colon = upto.rfind("\":")?;
    let start = upto[..colon].rfind('"')?;
    Some(upto[start + 1..colon].to_string())
}
