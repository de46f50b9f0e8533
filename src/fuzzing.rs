//! One entry point per reader of untrusted bytes, for the fuzz targets (`fuzz/`) and for the
//! test that replays their corpus (`src/fuzzing/corpus_tests.rs`). Compiled only under `--cfg fuzzing`
//! (`fuzz/instrument.sh` passes it) and in the library's own tests: these functions panic by
//! design, so they are no part of the library a program links.
//!
//! Each function feeds the bytes to the reader exactly as a campaign load would, then checks
//! what any result must satisfy (a table's arrays agree with its row count, episodes tile
//! the rows, every problem is located inside the input, a ledger's sequence increases). It
//! panics when a check fails: to a fuzzer, that panic is the finding.

use std::io::Cursor;
use std::path::Path;

use crate::campaign::Episode;
use crate::campaign::csv::read_csv;
use crate::campaign::error::{Location, ProblemLog};
use crate::campaign::folder::parse_campaign_file;
use crate::campaign::frame::{MAX_DECODE_SIDE, decode_frame_bytes};
use crate::campaign::jsonl::read_jsonl;
use crate::campaign::numpy::{NpzSource, Values, read_array, read_numpy};
use crate::campaign::steps::StepTableBuilder;
use crate::campaign::validate::RowChecker;
use crate::campaign::{Problem, Spec, StepTable};
use crate::ledger::{Entry, parse_ledger};
use crate::novelty::RoundScores;
use crate::novelty::store::{ScoresKey, load_scores_from, write_npz};

mod ledger_append;

#[cfg(test)]
#[allow(clippy::unwrap_used)] // test code: a panic is a failure report
mod corpus_tests;
use crate::progress::Progress;
pub use ledger_append::ledger_append;

/// The spec every step reader is fuzzed against: three features, one continuous and one
/// discrete action channel (the bad-input corpus's spec).
pub const SPEC_JSON: &str = r#"{"name": "fuzz", "spec": {
  "features": [{"name": "offset", "unit": "m"}, {"name": "angle", "unit": "rad"},
               {"name": "speed", "unit": "m/s"}],
  "actions": [{"name": "steer", "unit": "rad", "low": -0.5, "high": 0.5},
              {"name": "mode", "choices": ["cruise", "creep", "halt"]}]}}"#;

/// The spec of [`SPEC_JSON`].
pub fn spec() -> Spec {
    match parse_campaign_file(SPEC_JSON.as_bytes()) {
        Ok(f) => f.spec,
        Err(p) => panic!("the fuzzing spec does not parse: {p}"),
    }
}

/// `campaign.json` bytes.
pub fn campaign_file(data: &[u8]) {
    if let Ok(file) = parse_campaign_file(data) {
        assert!(file.spec.problems().is_empty());
        assert!(file.novelty.k >= 1);
    }
}

/// Which step reader [`steps`] runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StepFormat {
    /// JSON Lines.
    JsonLines,
    /// CSV.
    Csv,
    /// An `.npz` archive.
    Npz,
}

/// Step-file bytes through one reader; returns the table and the kept problems.
pub fn steps(format: StepFormat, data: &[u8]) -> (StepTable, Vec<Problem>) {
    let spec = spec();
    let mut checker = RowChecker::new(&spec);
    let mut b = StepTableBuilder::new(spec.state_dim(), spec.action_dim());
    b.set_record_cap(10_000);
    b.begin_source("rounds/1/fuzz".into());
    let mut log = ProblemLog::new(Path::new("rounds/1/fuzz"), 50);
    let (dir, progress) = (Path::new("rounds/1"), Progress::new());
    match format {
        StepFormat::JsonLines => read_jsonl(data, dir, &mut checker, &mut b, &mut log, &progress),
        StepFormat::Csv => read_csv(data, dir, &mut checker, &mut b, &mut log, &progress),
        StepFormat::Npz => match NpzSource::new(Cursor::new(data)) {
            Ok(mut src) => read_numpy(&mut src, dir, &mut checker, &mut b, &mut log, &progress),
            Err(_) => return (StepTable::new(3, 2), Vec::new()),
        },
    }
    let table = b.finish();
    let (problems, _) = log.finish();
    check_table(&table, &spec);
    let lines = data.iter().filter(|&&c| c == b'\n').count() as u64 + 1;
    for p in &problems {
        if let Location::Line(n) = p.location {
            assert!(
                n >= 1 && n <= lines,
                "{p} is past the input's {lines} lines"
            );
        }
    }
    (table, problems)
}

fn check_table(t: &StepTable, spec: &Spec) {
    let n = t.len();
    assert!(n <= 10_000, "the record cap let {n} rows through");
    assert_eq!(t.states.len(), n * spec.state_dim());
    assert_eq!(t.actions.len(), n * spec.action_dim());
    assert_eq!(t.origins.len(), n);
    assert!(t.states.iter().all(|v| v.is_finite()));
    let mut next = 0;
    for e in &t.episodes {
        assert_eq!(e.start, next, "episodes do not tile the rows");
        assert!(e.len > 0);
        assert!(
            t.t[e.rows()].windows(2).all(|w| w[0] < w[1]),
            "t not increasing"
        );
        next += e.len;
    }
    assert_eq!(next, n);
    assert!(
        t.frames
            .iter()
            .all(|(r, f)| (*r as usize) < n && !f.starts_with('/'))
    );
    assert!(
        t.frames
            .iter()
            .all(|(_, f)| !f.split('/').any(|c| c == ".."))
    );
}

/// One `.npy` array's bytes.
pub fn npy(data: &[u8]) {
    if let Ok(a) = read_array(data, data.len() as u64) {
        let count: u64 = a.shape.iter().product();
        let got = match &a.values {
            Values::Numbers(v) => v.len(),
            Values::Integers(v) => v.len(),
            Values::Text(v) => v.len(),
        };
        assert_eq!(got as u64, count);
    }
}

/// Ledger bytes, as read by every reader of a shared campaign folder.
pub fn ledger(data: &[u8]) {
    let l = parse_ledger(Path::new("ledgers/fuzz.jsonl"), "fuzz", data);
    assert!(l.incomplete_tail as usize <= data.len());
    assert!(l.records.windows(2).all(|w| w[0].seq < w[1].seq));
    for (i, r) in l.records.iter().enumerate() {
        assert_eq!(r.annotator, "fuzz");
        if let Entry::Retraction(x) = &r.entry {
            let earlier = &l.records[..i];
            assert!(
                earlier
                    .iter()
                    .any(|c| c.seq == x.retracts && c.correction().is_some())
            );
        }
    }
    assert!(
        l.records
            .windows(2)
            .all(|w| w[1].seq.checked_sub(w[0].seq).is_some_and(|d| d >= 1)),
        "a record's seq does not follow the previous one"
    );
    // A whole last record without its newline is a line too.
    let lines = data.iter().filter(|&&c| c == b'\n').count() as u64 + 1;
    assert!(l.problems.iter().all(|p| p.line >= 1 && p.line <= lines));
}

/// Frame image bytes.
pub fn frame(data: &[u8]) {
    if let Ok(img) = decode_frame_bytes(data) {
        assert!(img.width() <= MAX_DECODE_SIDE && img.height() <= MAX_DECODE_SIDE);
    }
}

/// The round every scores archive is fuzzed against: three steps of one episode, three
/// features and two action channels.
fn scores_steps() -> StepTable {
    StepTable {
        states: (0..9).map(|i| i as f32 * 0.5).collect(),
        actions: vec![0.0; 6],
        t: vec![0, 1, 2],
        episodes: vec![Episode {
            name: "e".into(),
            start: 0,
            len: 3,
            source: 0,
        }],
        origins: vec![1, 2, 3],
        ..StepTable::new(3, 2)
    }
}

/// A valid scores archive of the fuzzing round (k = 2): the `scores` target's seed.
pub fn scores_example() -> Vec<u8> {
    let s = RoundScores {
        state_dim: 3,
        action_dim: 2,
        k: 2,
        novelty: vec![0.1, 0.2, 0.3],
        p_value: vec![0.5, 0.2, 0.05],
        flagged: vec![false, false, true],
        contributions: vec![0.2, 0.3, 0.5, 0.1, 0.1, 0.8, 1.0, 0.0, 0.0],
        action_gap: vec![0.0, 0.1, 0.4],
        neighbour_action: vec![0.0, 1.0, 0.1, 1.0, 0.2, 2.0],
        neighbour_spread: vec![0.0; 3],
        ensemble_spread: vec![f32::NAN; 3],
        neighbours: vec![0, 1, 1, 2, 2, 1],
        threshold: 0.25,
        alpha: 0.05,
        scale: vec![1.0; 3],
    };
    let key = ScoresKey {
        model: "0123456789abcdef".into(),
        data: "fedcba9876543210".into(),
    };
    let mut out = Cursor::new(Vec::new());
    match write_npz(&scores_steps(), &s, &key, &mut out) {
        Ok(()) => out.into_inner(),
        Err(e) => panic!("writing to memory failed: {e}"),
    }
}

/// `scores.npz` bytes, as `plan` and the window read them: whatever they hold, scores read
/// back fit the round (one value or block per step) and never come from a damaged file.
pub fn scores(data: &[u8]) {
    let steps = scores_steps();
    if let Ok((s, _)) = load_scores_from(Cursor::new(data), &steps) {
        let n = steps.len();
        for v in [&s.novelty, &s.p_value, &s.action_gap, &s.neighbour_spread] {
            assert_eq!(v.len(), n);
        }
        assert_eq!((s.flagged.len(), s.ensemble_spread.len()), (n, n));
        assert_eq!(s.contributions.len(), n * 3);
        assert_eq!(s.neighbour_action.len(), n * 2);
        assert_eq!(s.neighbours.len(), n * s.k);
        assert_eq!(s.scale.len(), 3);
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn the_scores_seed_reads_back_and_a_damaged_copy_does_not() {
        let good = super::scores_example();
        let (s, key) = super::load_scores_from(std::io::Cursor::new(&good), &super::scores_steps())
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((s.k, key.model.as_str()), (2, "0123456789abcdef"));
        // The last byte of the novelty values, changed: the member's CRC-32 fails.
        let at = good
            .windows(11)
            .position(|w| w == b"novelty.npy")
            .unwrap_or(0);
        let magic = at
            + good[at..]
                .windows(6)
                .position(|w| w == b"\x93NUMPY")
                .unwrap_or(0);
        let data = magic + 10 + usize::from(u16::from_le_bytes([good[magic + 8], good[magic + 9]]));
        let mut bad = good.clone();
        bad[data + 11] ^= 0x40;
        let e = super::load_scores_from(std::io::Cursor::new(&bad), &super::scores_steps());
        assert!(e.is_err());
    }
}
