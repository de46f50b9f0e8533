//! A campaign on a shared folder: one annotator appends while another re-reads the ledgers
//! in a loop; a ledger file replaced or changed under a running writer; the disk filling up
//! (a file size limit, `prlimit --fsize`) in the middle of an append; a ledger that is a link.
//! In each case the user gets a clear error and no acknowledged record is lost.

use std::io::{BufRead, BufReader, Write};
use std::path::Path;
use std::process::{Command, Stdio};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};

use countersteer::ledger::{
    Correction, Ledger, LedgerError, Verdict, ledger_path, read_ledger, read_ledgers,
};

fn correction(t: i64) -> Correction {
    Correction {
        round: 1,
        episode: "lane-00".into(),
        t,
        fingerprint: "0123456789abcdef".into(),
        verdict: Verdict::Skip,
        // A long note makes each record span several page-cache writes' worth of bytes.
        note: Some("n".repeat(300 + (t as usize % 7) * 500)),
    }
}

#[test]
fn a_reader_in_a_loop_never_sees_a_partial_record_nor_loses_an_acknowledged_one() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path().to_path_buf();
    let (mut ben, _) = Ledger::open(&root, "ben").unwrap();
    ben.append(correction(0)).unwrap();
    let acked = Arc::new(AtomicU64::new(0));
    let done = Arc::new(AtomicBool::new(false));
    let writer = {
        let (root, acked, done) = (root.clone(), acked.clone(), done.clone());
        std::thread::spawn(move || {
            let (mut ana, _) = Ledger::open(&root, "ana").unwrap();
            for t in 0..400 {
                let r = ana.append(correction(t)).unwrap();
                acked.store(r.seq, Ordering::SeqCst);
            }
            done.store(true, Ordering::SeqCst);
        })
    };
    let (mut reads, mut partial_seen) = (0, 0);
    while !done.load(Ordering::SeqCst) {
        let before = acked.load(Ordering::SeqCst);
        let ledgers = read_ledgers(&root).unwrap();
        reads += 1;
        for l in &ledgers {
            assert!(l.problems.is_empty(), "{:?}", l.problems);
        }
        if let Some(ana) = ledgers.iter().find(|l| l.annotator == "ana") {
            let last = ana.records.last().map_or(0, |r| r.seq);
            assert!(
                last >= before,
                "read {last} records, {before} were acknowledged"
            );
            partial_seen += usize::from(ana.incomplete_tail > 0);
        } else {
            assert_eq!(before, 0);
        }
        assert_eq!(
            ledgers
                .iter()
                .find(|l| l.annotator == "ben")
                .unwrap()
                .records
                .len(),
            1
        );
    }
    writer.join().unwrap();
    let ana = read_ledger(&ledger_path(&root, "ana")).unwrap();
    assert_eq!(ana.records.len(), 400);
    assert_eq!(ana.incomplete_tail, 0);
    println!("{reads} reads during 400 appends; {partial_seen} saw a record being written");
    assert!(reads > 1);
}

#[test]
fn a_ledger_replaced_under_a_running_writer_is_not_appended_to() {
    let dir = tempfile::tempdir().unwrap();
    let (mut ana, _) = Ledger::open(dir.path(), "ana").unwrap();
    ana.append(correction(1)).unwrap();
    let path = ana.path().to_path_buf();
    // A sync tool puts its own copy in place: a new file under the same name.
    let copy = path.with_extension("synced");
    std::fs::copy(&path, &copy).unwrap();
    std::fs::rename(&copy, &path).unwrap();
    let e = ana.append(correction(2)).unwrap_err();
    assert!(matches!(e, LedgerError::ChangedOnDisk { .. }), "{e}");
    assert!(
        e.to_string().contains("another file now has its name"),
        "{e}"
    );
    assert!(e.to_string().contains("nothing was written"), "{e}");
    assert_eq!(read_ledger(&path).unwrap().records.len(), 1);
    drop(ana);
    let (mut again, report) = Ledger::open(dir.path(), "ana").unwrap();
    assert_eq!(report.records, 1);
    assert_eq!(again.append(correction(2)).unwrap().seq, 2);
}

#[test]
fn a_ledger_written_or_removed_by_another_program_is_not_appended_to() {
    let dir = tempfile::tempdir().unwrap();
    let (mut ana, _) = Ledger::open(dir.path(), "ana").unwrap();
    ana.append(correction(1)).unwrap();
    let path = ana.path().to_path_buf();
    let mut f = std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .unwrap();
    f.write_all(b"{\"edited\": \"by hand\"}\n").unwrap();
    drop(f);
    let e = ana.append(correction(2)).unwrap_err();
    assert!(e.to_string().contains("this program wrote"), "{e}");
    std::fs::remove_file(&path).unwrap();
    let e = ana.append(correction(2)).unwrap_err();
    assert!(e.to_string().contains("the file is gone"), "{e}");
    assert!(
        !path.exists(),
        "a removed ledger must not be recreated by a stale writer"
    );
}

#[cfg(unix)]
#[test]
fn a_ledger_that_is_a_link_is_refused() {
    let outside = tempfile::tempdir().unwrap();
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir_all(dir.path().join("ledgers")).unwrap();
    let target = outside.path().join("elsewhere.jsonl");
    std::fs::write(&target, "").unwrap();
    std::os::unix::fs::symlink(&target, ledger_path(dir.path(), "ana")).unwrap();
    let e = Ledger::open(dir.path(), "ana").unwrap_err();
    assert!(matches!(e, LedgerError::IsLink { .. }), "{e}");
    assert_eq!(std::fs::read(&target).unwrap(), b"");
}

const DIR_VAR: &str = "COUNTERSTEER_TEST_FULL_DIR";

/// The child of the disk-full test: appends until an append fails, printing each
/// acknowledged sequence number and then the error.
#[test]
#[ignore = "run as a child process by the disk-full test"]
fn child_appends_until_refused() {
    let Ok(dir) = std::env::var(DIR_VAR) else {
        return;
    };
    let (mut ledger, report) = Ledger::open(Path::new(&dir), "ana").unwrap();
    let mut out = std::io::stdout().lock();
    writeln!(out).unwrap();
    writeln!(out, "opened {}", report.records).unwrap();
    for t in 0..10_000 {
        match ledger.append(correction(t)) {
            Ok(r) => writeln!(out, "ack {}", r.seq).unwrap(),
            Err(e) => {
                writeln!(out, "refused {e}").unwrap();
                break;
            }
        }
        out.flush().unwrap();
    }
}

fn child_test_name() -> String {
    let module = module_path!();
    let within = module.split_once("::").map_or(module, |(_, rest)| rest);
    format!("{within}::child_appends_until_refused")
}

/// Runs the child under a file size limit of `limit` bytes, with SIGXFSZ ignored so that a
/// write past the limit fails with EFBIG as on a full disk (an ignored signal stays ignored
/// across exec). Returns the child's output lines.
fn run_limited(dir: &Path, limit: u64) -> Vec<String> {
    let exe = std::env::current_exe().unwrap();
    let script = format!("trap '' XFSZ; exec prlimit --fsize={limit} \"$@\"");
    let out = Command::new("sh")
        .args(["-c", &script, "sh"])
        .arg(exe)
        .args([
            "--exact",
            &child_test_name(),
            "--include-ignored",
            "--nocapture",
        ])
        .args(["--test-threads=1"])
        .env(DIR_VAR, dir)
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .output()
        .unwrap();
    BufReader::new(&out.stdout[..])
        .lines()
        .map_while(Result::ok)
        .collect()
}

#[test]
fn a_full_disk_mid_append_is_reported_and_loses_nothing_acknowledged() {
    if Command::new("prlimit").arg("--version").output().is_err() {
        println!("prlimit (util-linux) is not installed: the disk-full test cannot run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let mut total_acked = 0;
    // The limit falls inside some record each time; the ledger grows between runs.
    for (run, limit) in [20_000u64, 45_000, 45_000, 90_000].into_iter().enumerate() {
        let lines = run_limited(dir.path(), limit);
        let acked: Vec<u64> = lines
            .iter()
            .filter_map(|l| l.strip_prefix("ack ")?.parse().ok())
            .collect();
        let refused = lines.iter().find_map(|l| l.strip_prefix("refused "));
        let refused = refused.unwrap_or_else(|| panic!("run {run}: no refusal in {lines:?}"));
        assert!(refused.contains("NOT saved"), "{refused}");
        assert!(
            refused.contains("every record acknowledged before it is safe"),
            "{refused}"
        );
        total_acked += acked.len();
        let path = ledger_path(dir.path(), "ana");
        let on_disk = read_ledger(&path).unwrap();
        assert_eq!(on_disk.records.len(), total_acked, "run {run}");
        assert_eq!(
            on_disk.incomplete_tail, 0,
            "run {run}: the partial record was cut back"
        );
        assert!(std::fs::metadata(&path).unwrap().len() <= limit);
    }
    let (l, report) = Ledger::open(dir.path(), "ana").unwrap();
    assert!(report.problems.is_empty() && report.set_aside.is_none());
    assert_eq!(l.records().len(), total_acked);
    assert!(total_acked > 10);
}

#[test]
fn a_ledger_larger_than_any_ledger_is_refused_before_it_is_read() {
    let dir = tempfile::tempdir().unwrap();
    let path = ledger_path(dir.path(), "ana");
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    let f = std::fs::File::create(&path).unwrap();
    // A sparse file: its length is declared, no disk or memory is used for it.
    f.set_len(countersteer::ledger::MAX_LEDGER_BYTES + 1)
        .unwrap();
    let e = read_ledger(&path).unwrap_err();
    assert!(matches!(e, LedgerError::TooLarge { .. }), "{e}");
    assert!(read_ledgers(dir.path()).is_err());
    let e = Ledger::open(dir.path(), "ana").unwrap_err();
    assert!(e.to_string().contains("is this file a ledger?"), "{e}");
}
