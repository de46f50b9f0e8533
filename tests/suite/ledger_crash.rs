//! Crash safety of the ledger: a child process appends corrections in a loop and is killed
//! with SIGKILL at random moments, many times. Every correction the child reported as
//! acknowledged must be in the ledger, and the ledger must still open.
//!
//! A SIGKILL cannot split one `write` call, so the parent also leaves a torn half-record at
//! the end of the ledger between some runs, as a power cut mid-write would: the next child's
//! open must set it aside (to a side file holding exactly those bytes) and report it.
//!
//! The child is this test binary itself, re-run with `--exact ledger_crash::child_appender`.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::{Arc, Mutex};

use std::time::Duration;

use countersteer::ledger::{
    Batch, BatchItem, BatchLine, Correction, Ledger, Verdict, batch, read_ledger,
};

const DIR_VAR: &str = "COUNTERSTEER_TEST_CHILD_DIR";
const WHO_VAR: &str = "COUNTERSTEER_TEST_CHILD_ANNOTATOR";
const COUNT_VAR: &str = "COUNTERSTEER_TEST_CHILD_COUNT";

fn correction(t: i64) -> Correction {
    Correction {
        round: 1,
        episode: "lane-00".into(),
        t,
        fingerprint: "0123456789abcdef".into(),
        verdict: if t % 3 == 0 {
            Verdict::Skip
        } else {
            Verdict::Unrecoverable
        },
        note: Some(format!("appended by pid {}", std::process::id())),
    }
}

/// The child: opens the ledger, reports any set-aside tail, then appends and reports each
/// acknowledged sequence number on stdout (until killed, or `COUNT` records).
#[test]
#[ignore = "run as a child process by the crash and two-process tests"]
fn child_appender() {
    let (Ok(dir), Ok(who)) = (std::env::var(DIR_VAR), std::env::var(WHO_VAR)) else {
        return;
    };
    let count: u64 = std::env::var(COUNT_VAR)
        .ok()
        .and_then(|c| c.parse().ok())
        .unwrap_or(u64::MAX);
    let (mut ledger, report) =
        Ledger::open(Path::new(&dir), &who).unwrap_or_else(|e| panic!("{e}"));
    let mut out = std::io::stdout().lock();
    // libtest has written `test child_appender ... ` without a newline: start a fresh line.
    writeln!(out).unwrap();
    if let Some(a) = &report.set_aside {
        writeln!(out, "set-aside {} {} {}", a.line, a.bytes, a.path.display()).unwrap();
    }
    writeln!(out, "opened {}", report.records).unwrap();
    out.flush().unwrap();
    for i in 0..count {
        let r = ledger.append(correction(i as i64)).unwrap();
        writeln!(out, "ack {}", r.seq).unwrap();
        out.flush().unwrap();
    }
}

/// The child's full test name inside the suite binary, e.g. `ledger_crash::child_appender`.
fn child_test_name() -> String {
    let module = module_path!();
    let within = module.split_once("::").map_or(module, |(_, rest)| rest);
    format!("{within}::child_appender")
}

fn child(dir: &Path, who: &str, count: Option<u64>) -> Command {
    child_named(&child_test_name(), dir, who, count)
}

fn child_named(name: &str, dir: &Path, who: &str, count: Option<u64>) -> Command {
    let mut c = Command::new(std::env::current_exe().unwrap());
    c.args([
        "--exact",
        name,
        "--include-ignored",
        "--nocapture",
        "--test-threads=1",
    ])
    .env(DIR_VAR, dir)
    .env(WHO_VAR, who)
    .stdout(Stdio::piped())
    .stderr(Stdio::null());
    if let Some(n) = count {
        c.env(COUNT_VAR, n.to_string());
    }
    c
}

/// A tiny deterministic generator (xorshift64*), seeded per run and printed.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
}

#[test]
fn acknowledged_corrections_survive_sigkill_at_random_moments() {
    let dir = tempfile::tempdir().unwrap();
    let seed = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap()
        .as_nanos() as u64
        | 1;
    println!("seed {seed}");
    let mut rng = Rng(seed);
    let acked = Arc::new(Mutex::new(Vec::<u64>::new()));
    let mut torn_written: Vec<Vec<u8>> = Vec::new();
    let mut set_aside: Vec<(PathBuf, u64)> = Vec::new();
    let ledger = dir.path().join("ledgers/ana.jsonl");
    for run in 0..30 {
        let mut proc = child(dir.path(), "ana", None).spawn().unwrap();
        let stdout = proc.stdout.take().unwrap();
        let acks = acked.clone();
        let (tx, rx) = std::sync::mpsc::channel::<String>();
        let reader = std::thread::spawn(move || {
            for line in BufReader::new(stdout).lines().map_while(Result::ok) {
                match line.strip_prefix("ack ") {
                    Some(seq) => acks.lock().unwrap().push(seq.parse().unwrap()),
                    None => tx.send(line).unwrap(),
                }
            }
        });
        // Wait until the child has opened the ledger, then kill it while it appends.
        loop {
            let line = rx.recv_timeout(Duration::from_secs(20)).unwrap();
            if let Some(rest) = line.strip_prefix("set-aside ") {
                let parts: Vec<&str> = rest.splitn(3, ' ').collect();
                set_aside.push((parts[2].into(), parts[1].parse().unwrap()));
            }
            if line.starts_with("opened ") {
                break;
            }
        }
        std::thread::sleep(Duration::from_millis(rng.next() % 60));
        proc.kill().unwrap(); // SIGKILL on Unix
        proc.wait().unwrap();
        reader.join().unwrap();
        if run % 5 == 4 && ledger.exists() {
            // A power cut mid-write: half a record, no newline.
            let half = format!("{{\"seq\":999{run},\"kind\":\"correction\",\"rou");
            let mut f = std::fs::OpenOptions::new()
                .append(true)
                .open(&ledger)
                .unwrap();
            f.write_all(half.as_bytes()).unwrap();
            torn_written.push(half.into_bytes());
        }
    }
    // One more open (in this process) sets aside a tail left by the last run, if any.
    let (l, report) = Ledger::open(dir.path(), "ana").unwrap();
    if let Some(a) = &report.set_aside {
        set_aside.push((a.path.clone(), a.bytes));
    }
    assert!(report.problems.is_empty(), "{:?}", report.problems);
    let acked = acked.lock().unwrap().clone();
    println!(
        "{} acknowledged, {} in the ledger, {} torn tails set aside",
        acked.len(),
        l.records().len(),
        set_aside.len()
    );
    assert!(
        acked.len() > 30,
        "children acknowledged only {} records",
        acked.len()
    );
    let present: std::collections::HashSet<u64> = l.records().iter().map(|r| r.seq).collect();
    let lost: Vec<_> = acked.iter().filter(|s| !present.contains(s)).collect();
    assert!(lost.is_empty(), "acknowledged but lost: {lost:?}");
    // Sequence numbers are unique and increasing: no acknowledged record was overwritten.
    let seqs: Vec<u64> = l.records().iter().map(|r| r.seq).collect();
    assert!(seqs.windows(2).all(|w| w[0] < w[1]));
    // Every torn tail was set aside whole and reported, and nothing else was.
    assert_eq!(set_aside.len(), torn_written.len());
    for ((path, bytes), torn) in set_aside.iter().zip(&torn_written) {
        assert_eq!(*bytes, torn.len() as u64);
        assert_eq!(&std::fs::read(path).unwrap(), torn);
    }
    let read = read_ledger(&ledger).unwrap();
    assert_eq!(
        (read.records.len(), read.incomplete_tail),
        (l.records().len(), 0)
    );
}

#[test]
fn two_processes_on_two_ledgers_lose_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let mut kids: Vec<_> = ["ana", "ben"]
        .iter()
        .map(|who| child(dir.path(), who, Some(150)).spawn().unwrap())
        .collect();
    for k in &mut kids {
        let out = BufReader::new(k.stdout.take().unwrap());
        let acks = out
            .lines()
            .map_while(Result::ok)
            .filter(|l| l.starts_with("ack "))
            .count();
        assert_eq!(acks, 150);
        assert!(k.wait().unwrap().success());
    }
    for who in ["ana", "ben"] {
        let l = read_ledger(&dir.path().join(format!("ledgers/{who}.jsonl"))).unwrap();
        let seqs: Vec<u64> = l.records.iter().map(|r| r.seq).collect();
        assert_eq!(seqs, (1..=150).collect::<Vec<_>>(), "{who}");
        assert!(l.problems.is_empty() && l.incomplete_tail == 0);
        assert!(l.records.iter().all(|r| r.annotator == who));
    }
}

#[test]
fn a_second_process_on_the_same_ledger_is_refused_naming_the_holder() {
    let dir = tempfile::tempdir().unwrap();
    let (_held, _) = Ledger::open(dir.path(), "ana").unwrap();
    let o = child(dir.path(), "ana", Some(1))
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    assert!(!o.status.success());
    let text = String::from_utf8_lossy(&o.stdout).to_string() + &String::from_utf8_lossy(&o.stderr);
    assert!(text.contains("is open for writing elsewhere"), "{text}");
    assert!(
        text.contains(&format!("pid {} on host", std::process::id())),
        "{text}"
    );
    assert!(!o.stdout.starts_with(b"ack "), "{text}");
}

const BATCH_VAR: &str = "COUNTERSTEER_TEST_CHILD_BATCH";

/// The batch the batch child applies again and again: `n` corrections of round 1 of the
/// kit campaign (its 90 steps in turn), every third a `skip`.
fn batch_of(n: usize) -> Batch {
    let lines = (0..n)
        .map(|i| BatchLine {
            line: i as u64 + 2,
            item: BatchItem::Correction {
                round: 1,
                episode: format!("lane-{:02}", (i / 30) % 3),
                t: (i % 30) as i64,
                verdict: if i % 3 == 0 {
                    Verdict::Skip
                } else {
                    crate::campaign_kit::action(0.001 * (i % 400) as f64, "slow")
                },
                note: Some(format!("batch line {}", i + 2)),
            },
        })
        .collect();
    Batch {
        source: "bulk.csv".into(),
        lines,
        problems: Vec::new(),
    }
}

/// The batch child: opens the ledger through the batch path, reports an unfinished batch,
/// then applies batches and reports each acknowledged range (until killed).
#[test]
#[ignore = "run as a child process by the batch crash test"]
fn child_batcher() {
    let (Ok(dir), Ok(who), Ok(n)) = (
        std::env::var(DIR_VAR),
        std::env::var(WHO_VAR),
        std::env::var(BATCH_VAR),
    ) else {
        return;
    };
    let c = crate::campaign_kit::load(Path::new(&dir));
    let b = batch_of(n.parse().unwrap());
    let (mut ledger, report, unfinished) =
        batch::open(Path::new(&dir), &who).unwrap_or_else(|e| panic!("{e}"));
    let mut out = std::io::stdout().lock();
    writeln!(out).unwrap();
    if let Some(u) = unfinished {
        let seqs: Vec<String> = u.missing.iter().map(|m| m.seq.to_string()).collect();
        let lines: Vec<String> = u.missing.iter().map(|m| m.line.to_string()).collect();
        writeln!(out, "unfinished {} {} {}", u.saved, u.total, seqs.join(",")).unwrap();
        writeln!(out, "unfinished-lines {}", lines.join(",")).unwrap();
    }
    writeln!(out, "opened {}", report.records).unwrap();
    out.flush().unwrap();
    loop {
        let done = batch::apply(&c, &mut ledger, &b).unwrap();
        let (first, last) = (done.records[0].seq, done.records.last().unwrap().seq);
        writeln!(out, "acked {first} {last}").unwrap();
        out.flush().unwrap();
    }
}

#[test]
fn a_batch_killed_midway_loses_nothing_acknowledged_and_says_what_is_missing() {
    let dir = tempfile::tempdir().unwrap();
    crate::campaign_kit::write_campaign(dir.path(), 5);
    let n = 1000u64;
    let seed = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap()
        .as_nanos() as u64
        | 1;
    println!("seed {seed}");
    let mut rng = Rng(seed);
    let mut acked = Vec::<(u64, u64)>::new();
    let mut unfinished_seen = 0;
    let mut partial_seen = 0;
    let mut power_cuts = 0;
    for _ in 0..16 {
        let name = child_test_name().replace("child_appender", "child_batcher");
        let mut proc = child_named(&name, dir.path(), "ana", None)
            .env(BATCH_VAR, n.to_string())
            .spawn()
            .unwrap();
        let mut lines = BufReader::new(proc.stdout.take().unwrap()).lines();
        let mut opened = None;
        let mut unfinished: Option<(u64, u64, Vec<u64>)> = None;
        while opened.is_none() {
            let line = lines.next().unwrap().unwrap();
            if let Some(rest) = line.strip_prefix("unfinished ") {
                let p: Vec<&str> = rest.split(' ').collect();
                let seqs = p[2].split(',').map(|s| s.parse().unwrap()).collect();
                unfinished = Some((p[0].parse().unwrap(), p[1].parse().unwrap(), seqs));
            }
            if let Some(rest) = line.strip_prefix("unfinished-lines ") {
                let first: u64 = rest.split(',').next().unwrap().parse().unwrap();
                let (saved, _, _) = unfinished.as_ref().unwrap();
                // The missing records are the batch's lines after the saved ones.
                assert_eq!(first, saved + 2, "{rest}");
            }
            opened = line
                .strip_prefix("opened ")
                .map(|r| r.parse::<u64>().unwrap());
        }
        let records = opened.unwrap();
        if let Some((saved, total, missing)) = unfinished {
            unfinished_seen += 1;
            partial_seen += usize::from(saved > 0);
            // Everything after the ledger's last record, up to the batch's end, is missing.
            assert_eq!(total, n);
            assert_eq!(saved + missing.len() as u64, total);
            let want: Vec<u64> = (records + 1..records + 1 + missing.len() as u64).collect();
            assert_eq!(missing, want);
        }
        let reader = std::thread::spawn(move || {
            lines
                .map_while(Result::ok)
                .filter_map(|l| {
                    let r = l.strip_prefix("acked ")?;
                    let (a, b) = r.split_once(' ')?;
                    Some((a.parse::<u64>().ok()?, b.parse::<u64>().ok()?))
                })
                .collect::<Vec<_>>()
        });
        std::thread::sleep(Duration::from_millis(rng.next() % 600));
        proc.kill().unwrap();
        proc.wait().unwrap();
        acked.extend(reader.join().unwrap());
        let acked_to = acked.iter().map(|a| a.1).max().unwrap_or(0);
        if power_cut(dir.path(), acked_to, &mut rng) {
            power_cuts += 1;
        }
    }
    let (l, report, last) = batch::open(dir.path(), "ana").unwrap();
    assert!(report.problems.is_empty(), "{:?}", report.problems);
    unfinished_seen += usize::from(last.is_some());
    println!(
        "{} batches acknowledged, {} records in the ledger, {power_cuts} power cuts, \
         {unfinished_seen} unfinished batches reported ({partial_seen} with part of the batch saved)",
        acked.len(),
        l.records().len()
    );
    assert!(!acked.is_empty(), "no batch was ever acknowledged");
    let present: std::collections::HashSet<u64> = l.records().iter().map(|r| r.seq).collect();
    for (a, b) in &acked {
        assert_eq!(b - a + 1, n);
        let lost: Vec<u64> = (*a..=*b).filter(|s| !present.contains(s)).collect();
        assert!(
            lost.is_empty(),
            "acknowledged but lost: {} records",
            lost.len()
        );
    }
    let seqs: Vec<u64> = l.records().iter().map(|r| r.seq).collect();
    assert!(seqs.windows(2).all(|w| w[1] == w[0] + 1));
}

/// When a batch was in flight at the kill (its journal is there), cuts the ledger at a random
/// byte inside that batch's records, as a power cut that lost part of the unsynced write
/// would (records before the batch were fsync'd, acknowledged or not). Returns whether it cut.
fn power_cut(dir: &Path, acked_to: u64, rng: &mut Rng) -> bool {
    let Ok(journal) = std::fs::read(dir.join("ledgers/ana.batch.json")) else {
        return false;
    };
    let journal: serde_json::Value = serde_json::from_slice(&journal).unwrap();
    let first = journal["entries"][0]["seq"].as_u64().unwrap();
    assert!(first > acked_to, "a journal for acknowledged records");
    let path = dir.join("ledgers/ana.jsonl");
    let bytes = std::fs::read(&path).unwrap();
    // The ledger's records are numbered 1, 2, ...: keep the lines before the batch whole.
    let kept = bytes
        .iter()
        .enumerate()
        .filter(|(_, b)| **b == b'\n')
        .map(|(i, _)| i + 1)
        .take(first as usize - 1)
        .last()
        .unwrap_or(0);
    if kept >= bytes.len() {
        return false;
    }
    let cut = kept + (rng.next() as usize) % (bytes.len() - kept);
    let f = std::fs::OpenOptions::new().write(true).open(&path).unwrap();
    f.set_len(cut as u64).unwrap();
    true
}
