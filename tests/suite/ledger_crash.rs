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

use countersteer::ledger::{Correction, Ledger, Verdict, read_ledger};

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
    let mut c = Command::new(std::env::current_exe().unwrap());
    c.args([
        "--exact",
        &child_test_name(),
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
