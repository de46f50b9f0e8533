//! Ledgers edited by hand or crowded with strangers: sequence numbers that jump or would
//! wrap, a whole last line missing only its newline, retractions of the wrong step, and
//! entries of `ledgers/` that are not ledgers (each gets a word, none is ignored silently).

use std::os::unix::fs::symlink;
use std::path::Path;
use std::process::{Command, Output};

use crate::campaign_kit as kit;
use countersteer::ledger::{Ledger, ledger_path, read_ledger, skipped_entries};

fn cs(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .env_remove("COUNTERSTEER_ANNOTATOR")
        .output()
        .unwrap()
}

fn correct(root: &Path, t: &str, verdict: &[&str]) -> Output {
    let d = root.to_str().unwrap();
    let mut args = vec![
        "correct",
        d,
        "--annotator",
        "ana",
        "--round",
        "1",
        "--episode",
        "lane-00",
        "--t",
        t,
    ];
    args.extend(verdict);
    cs(&args)
}

fn out(o: &Output) -> String {
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    String::from_utf8_lossy(&o.stdout).trim().to_string()
}

#[test]
fn a_hand_edited_seq_at_the_largest_number_is_refused_and_the_next_record_follows() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    kit::write_campaign(root, 5);
    assert_eq!(
        out(&correct(root, "3", &["--skip"])),
        "ana #1: round 1 `lane-00` t 3: skip (saved)"
    );
    let path = ledger_path(root, "ana");
    let text = std::fs::read_to_string(&path).unwrap();
    let forged = text.replace("\"seq\":1,", &format!("\"seq\":{},", u64::MAX));
    std::fs::write(&path, format!("{text}{forged}")).unwrap();
    let l = read_ledger(&path).unwrap();
    assert_eq!(l.records.len(), 1);
    assert_eq!(
        (l.problems[0].line, l.problems[0].field.as_str()),
        (2, "seq")
    );
    assert!(
        l.problems[0].message.contains("does not follow 1"),
        "{}",
        l.problems[0]
    );
    let saved = out(&correct(root, "4", &["--skip"]));
    assert_eq!(saved, "ana #3: round 1 `lane-00` t 4: skip (saved)");
    let l = read_ledger(&path).unwrap();
    let seqs: Vec<u64> = l.records.iter().map(|r| r.seq).collect();
    assert_eq!(seqs, [1, 3]);
}

#[test]
fn a_seq_that_jumps_is_refused_on_read_with_its_line_and_field() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    kit::write_campaign(root, 5);
    out(&correct(root, "3", &["--skip"]));
    out(&correct(root, "4", &["--skip"]));
    let path = ledger_path(root, "ana");
    let text = std::fs::read_to_string(&path).unwrap();
    std::fs::write(&path, text.replace("\"seq\":2,", "\"seq\":7,")).unwrap();
    let l = read_ledger(&path).unwrap();
    assert_eq!(l.records.len(), 1);
    let p = &l.problems[0];
    assert_eq!((p.line, p.field.as_str()), (2, "seq"));
    assert!(p.message.contains("7 does not follow 1: expected 2"), "{p}");
}

#[test]
fn a_whole_last_line_missing_only_its_newline_is_kept_and_its_seq_not_reused() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    kit::write_campaign(root, 5);
    out(&correct(root, "3", &["--skip"]));
    out(&correct(root, "4", &["--unrecoverable"]));
    let path = ledger_path(root, "ana");
    let text = std::fs::read_to_string(&path).unwrap();
    std::fs::write(&path, text.trim_end()).unwrap();
    let l = read_ledger(&path).unwrap();
    assert_eq!((l.records.len(), l.incomplete_tail), (2, 0));
    let (ledger, report) = Ledger::open(root, "ana").unwrap();
    assert_eq!(report.set_aside, None);
    assert_eq!((report.records, ledger.next_seq()), (2, Some(3)));
    drop(ledger);
    assert_eq!(std::fs::read_to_string(&path).unwrap(), text);
    let saved = out(&correct(root, "5", &["--skip"]));
    assert_eq!(saved, "ana #3: round 1 `lane-00` t 5: skip (saved)");
    let torn: Vec<_> = std::fs::read_dir(root.join("ledgers"))
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .unwrap()
                .file_name()
                .to_string_lossy()
                .contains("torn")
        })
        .collect();
    assert!(torn.is_empty());
}

#[test]
fn a_retraction_naming_another_step_than_its_correction_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    kit::write_campaign(root, 5);
    out(&correct(root, "3", &["--skip"]));
    let before = std::fs::read(ledger_path(root, "ana")).unwrap();
    let o = correct(root, "4", &["--retract", "1"]);
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("record #1 is of t 3, not the step given"),
        "{err}"
    );
    assert_eq!(std::fs::read(ledger_path(root, "ana")).unwrap(), before);
    let saved = out(&correct(root, "3", &["--retract", "1"]));
    assert_eq!(saved, "ana #2: retracts #1 (saved)");
}

#[test]
fn every_entry_of_the_ledgers_folder_that_is_not_read_gets_a_warning() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    kit::write_campaign(root, 5);
    out(&correct(root, "3", &["--skip"]));
    let l = root.join("ledgers");
    let good = std::fs::read(ledger_path(root, "ana")).unwrap();
    std::fs::write(l.join("ben smith.jsonl"), &good).unwrap();
    std::fs::write(l.join(".carla.jsonl"), &good).unwrap();
    symlink(ledger_path(root, "ana"), l.join("dora.jsonl")).unwrap();
    std::fs::create_dir(l.join("emil.jsonl")).unwrap();
    let skipped: Vec<String> = skipped_entries(root)
        .iter()
        .map(|s| s.path.file_name().unwrap().to_string_lossy().into_owned())
        .collect();
    assert_eq!(
        skipped,
        [
            ".carla.jsonl",
            "ben smith.jsonl",
            "dora.jsonl",
            "emil.jsonl"
        ]
    );
    let o = cs(&["tally", root.to_str().unwrap()]);
    let err = String::from_utf8_lossy(&o.stderr);
    for name in &skipped {
        assert!(
            err.lines()
                .any(|line| line.starts_with("warning:") && line.contains(name.as_str())),
            "no warning for {name}: {err}"
        );
    }
    assert!(!err.contains("ana.lock"), "{err}");
}
