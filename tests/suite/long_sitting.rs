//! A long review sitting, library side: 5,000 corrections and 1,000 retractions through one
//! `Ledger` in a child process (so that its memory is its own). Resident memory may grow by
//! the records kept in memory and nothing more, and the ledger replays to what a model of
//! the sitting says. (The same sitting through the desktop program is not covered here.)

use std::io::Write;
use std::path::Path;
use std::process::{Command, Stdio};

use countersteer::ledger::{Correction, Ledger, Verdict, ledger_path, read_ledger};

const DIR_VAR: &str = "COUNTERSTEER_TEST_SITTING_DIR";
const CORRECTIONS: i64 = 5_000;

fn correction(t: i64) -> Correction {
    let verdict = match t % 3 {
        0 => Verdict::Skip,
        1 => Verdict::Unrecoverable,
        _ => Verdict::Action(vec![
            countersteer::ledger::ActionValue::Number((t % 11) as f64 / 40.0),
            countersteer::ledger::ActionValue::Choice("slow".into()),
        ]),
    };
    Correction {
        round: 1,
        // 500 distinct steps, each corrected ten times over the sitting.
        episode: format!("lane-{:02}", (t / 50) % 10),
        t: t % 50,
        fingerprint: "0123456789abcdef".into(),
        verdict,
        note: None,
    }
}

/// Resident set size of this process in bytes (Linux `/proc/self/statm`).
fn rss() -> u64 {
    let statm = std::fs::read_to_string("/proc/self/statm").unwrap_or_default();
    let pages: u64 = statm
        .split_whitespace()
        .nth(1)
        .and_then(|p| p.parse().ok())
        .unwrap_or(0);
    pages * 4096
}

/// The child: the sitting itself; prints `rss <n> <bytes>` after warm-up and at the end.
#[test]
#[ignore = "run as a child process by the long-sitting test"]
fn child_sitting() {
    let Ok(dir) = std::env::var(DIR_VAR) else {
        return;
    };
    let (mut ledger, _) = Ledger::open(Path::new(&dir), "ana").unwrap();
    let mut out = std::io::stdout().lock();
    writeln!(out).unwrap();
    for t in 0..CORRECTIONS {
        let r = ledger.append(correction(t)).unwrap();
        if t % 5 == 4 {
            ledger.retract(r.seq).unwrap();
        }
        if t == 499 || t == CORRECTIONS - 1 {
            let n = ledger.records().len();
            writeln!(out, "rss {n} {}", rss()).unwrap();
        }
    }
}

#[test]
fn five_thousand_corrections_keep_memory_flat_and_replay_exactly() {
    if !Path::new("/proc/self/statm").exists() {
        println!("no /proc/self/statm: the long-sitting memory check runs on Linux only");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let module = module_path!();
    let within = module.split_once("::").map_or(module, |(_, rest)| rest);
    let out = Command::new(std::env::current_exe().unwrap())
        .args(["--exact", &format!("{within}::child_sitting")])
        .args(["--include-ignored", "--nocapture", "--test-threads=1"])
        .env(DIR_VAR, dir.path())
        .stderr(Stdio::null())
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    let marks: Vec<(u64, u64)> = text
        .lines()
        .filter_map(|l| {
            let mut p = l.strip_prefix("rss ")?.split(' ');
            Some((p.next()?.parse().ok()?, p.next()?.parse().ok()?))
        })
        .collect();
    assert_eq!(marks.len(), 2, "{text}");
    let (records, grown) = (
        marks[1].0 - marks[0].0,
        marks[1].1.saturating_sub(marks[0].1),
    );
    let per_record = grown / records;
    println!("{records} records: resident memory grew {grown} bytes, {per_record} per record");
    // A record in memory is a few hundred bytes (strings, verdict); a leak of the line
    // buffers, reread ledgers or texture-like caches per append would show far more.
    assert!(per_record < 2048, "{per_record} bytes per record");

    // Replay: the standing verdict of every step is the latest correction not retracted.
    let (ledger, report) = Ledger::open(dir.path(), "ana").unwrap();
    assert!(report.problems.is_empty() && report.set_aside.is_none());
    assert_eq!(report.records, 6_000);
    for t in 0..500 {
        let c = correction(t);
        let want = (0..CORRECTIONS)
            .rev()
            .find(|&u| u % 500 == t % 500 && u % 5 != 4)
            .map(|u| correction(u).verdict);
        let got = ledger
            .standing(1, &c.episode, c.t)
            .map(|r| r.correction().unwrap().verdict.clone());
        assert_eq!(got, want, "{} t {}", c.episode, c.t);
    }
    let read = read_ledger(&ledger_path(dir.path(), "ana")).unwrap();
    assert_eq!(read.records, ledger.records());
}
