//! A long review sitting through the desktop program (headless, egui_kittest): verdicts given
//! by keyboard one after another (save, skip, unrecoverable, and an undo every fifth), with the
//! playhead moving on after each, in a child process so that its memory is its own.
//!
//! Checked: resident memory grows by no more than the ledger records kept in memory, and the
//! ledger on disk replays to exactly the verdicts given. Frame times at the start and the end
//! are printed, not asserted (timing belongs to the benchmarks); run the full 5,000-verdict
//! sitting by hand with
//! `COUNTERSTEER_SITTING=5000 cargo test --release --test suite ui_sitting -- --nocapture`.

use std::io::Write;
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use countersteer::app::{UiState, Workbench};
use countersteer::ledger::{Ledger, Verdict};
use egui::Key;
use egui_kittest::Harness;

use crate::common;

const DIR_VAR: &str = "COUNTERSTEER_TEST_UI_SITTING_DIR";
const COUNT_VAR: &str = "COUNTERSTEER_SITTING";
/// Verdicts in the CI run: enough to see growth, short enough for a debug build.
const CI_VERDICTS: usize = 300;

fn verdicts() -> usize {
    std::env::var(COUNT_VAR)
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(CI_VERDICTS)
}

/// Resident set size of this process in bytes (Linux `/proc/self/statm`).
fn rss() -> u64 {
    let statm = std::fs::read_to_string("/proc/self/statm").unwrap_or_default();
    statm
        .split_whitespace()
        .nth(1)
        .and_then(|p| p.parse::<u64>().ok())
        .unwrap_or(0)
        * 4096
}

fn press(h: &mut Harness<'static, Workbench>, key: Key) {
    h.key_press(key);
    h.step();
}

/// Mean time of `n` idle frames.
fn frame_time(h: &mut Harness<'static, Workbench>, n: u32) -> Duration {
    let t = Instant::now();
    for _ in 0..n {
        h.step();
    }
    t.elapsed() / n
}

/// The key for verdict `i`: save the suggestion, skip, or unrecoverable, in turn.
fn key_of(i: usize) -> Key {
    match i % 3 {
        0 => Key::Enter,
        1 => Key::S,
        _ => Key::U,
    }
}

/// The child: the sitting itself. Prints `mark <records> <rss> <frame us>` after a warm-up
/// tenth of the verdicts and at the end.
#[test]
#[ignore = "run as a child process by the long-sitting test"]
fn child_ui_sitting() {
    let Ok(dir) = std::env::var(DIR_VAR) else {
        return;
    };
    let n = verdicts();
    let ui = UiState {
        annotator: "ana".into(),
        ..UiState::default()
    };
    let mut wb = Workbench::new(ui);
    wb.open(Path::new(&dir));
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .with_step_dt(0.05)
        .build_ui_state(|ui, wb: &mut Workbench| wb.show(ui), wb);
    let until = Instant::now() + Duration::from_secs(30);
    while h.state().busy() && Instant::now() < until {
        h.step();
        std::thread::sleep(Duration::from_millis(5));
    }
    press(&mut h, Key::N);
    let mut out = std::io::stdout().lock();
    writeln!(out).unwrap();
    let mark = |h: &mut Harness<'static, Workbench>, out: &mut std::io::StdoutLock| {
        let frame = frame_time(h, 20);
        let records = std::fs::read_to_string(Path::new(&dir).join("ledgers/ana.jsonl"))
            .map(|t| t.lines().count())
            .unwrap_or(0);
        writeln!(out, "mark {records} {} {}", rss(), frame.as_micros()).unwrap();
    };
    for i in 0..n {
        if i == n / 10 {
            mark(&mut h, &mut out);
        }
        press(&mut h, key_of(i));
        if i % 5 == 4 {
            h.key_press_modifiers(egui::Modifiers::COMMAND, Key::Z);
            h.step();
        }
        // Move on whatever the list says, so that verdicts spread over many steps.
        press(&mut h, Key::ArrowRight);
    }
    mark(&mut h, &mut out);
}

#[test]
fn a_long_sitting_by_keyboard_keeps_memory_flat_and_the_ledger_exact() {
    if !Path::new("/proc/self/statm").exists() {
        println!("no /proc/self/statm: the long-sitting check runs on Linux only");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let module = module_path!();
    let within = module.split_once("::").map_or(module, |(_, rest)| rest);
    let out = Command::new(std::env::current_exe().unwrap())
        .args(["--exact", &format!("{within}::child_ui_sitting")])
        .args(["--include-ignored", "--nocapture", "--test-threads=1"])
        .env(DIR_VAR, dir.path())
        .stderr(Stdio::inherit())
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "{text}");
    let marks: Vec<[u64; 3]> = text
        .lines()
        .filter_map(|l| {
            let p: Vec<u64> = l
                .strip_prefix("mark ")?
                .split(' ')
                .filter_map(|x| x.parse().ok())
                .collect();
            Some([*p.first()?, *p.get(1)?, *p.get(2)?])
        })
        .collect();
    assert_eq!(marks.len(), 2, "{text}");
    let (a, b) = (marks[0], marks[1]);
    let records = b[0] - a[0];
    let grown = b[1].saturating_sub(a[1]);
    println!(
        "{} verdicts: {records} records after warm-up, resident memory +{grown} bytes ({} per record); \
         frame {} us at the start, {} us at the end",
        verdicts(),
        grown / records.max(1),
        a[2],
        b[2]
    );
    // A record kept in memory is a few hundred bytes; re-read ledgers, re-made plans or
    // textures kept per verdict would show far more (pages are 4 KiB, so allow slack).
    assert!(grown / records.max(1) < 4096, "{grown} bytes for {records}");

    // The ledger replays to the verdicts given: every fifth verdict was retracted again.
    let (ledger, report) = Ledger::open(dir.path(), "ana").unwrap();
    assert!(report.problems.is_empty() && report.set_aside.is_none());
    let n = verdicts();
    let retractions = n / 5;
    assert_eq!(
        report.records,
        n + retractions,
        "one record per verdict and undo"
    );
    let records = ledger.records();
    let corrections: Vec<_> = records.iter().filter_map(|r| r.correction()).collect();
    assert_eq!(corrections.len(), n);
    for (i, c) in corrections.iter().enumerate() {
        let want = match key_of(i) {
            Key::S => matches!(c.verdict, Verdict::Skip),
            Key::U => matches!(c.verdict, Verdict::Unrecoverable),
            _ => matches!(c.verdict, Verdict::Action(_)),
        };
        assert!(want, "verdict {i}: {:?}", c.verdict);
    }
    let retracted = records
        .iter()
        .filter(|r| ledger.is_retracted(r.seq))
        .count();
    assert_eq!(retracted, retractions);
}
