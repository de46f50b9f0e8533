//! Tests of the ledger writer and readers on temporary campaign folders.

use std::io::Write;

use super::*;

fn correction(t: i64, verdict: Verdict) -> Correction {
    Correction {
        round: 1,
        episode: "lane-01".into(),
        t,
        fingerprint: "0011223344556677".into(),
        verdict,
        note: None,
    }
}

#[test]
fn appended_records_survive_reopen_and_sequence_continues() {
    let dir = tempfile::tempdir().unwrap();
    let (mut l, report) = Ledger::open(dir.path(), "ana").unwrap();
    assert!(report.created);
    let a = l.append(correction(1, Verdict::Skip)).unwrap();
    let b = l.append(correction(2, Verdict::Unrecoverable)).unwrap();
    assert_eq!((a.seq, b.seq), (1, 2));
    drop(l);
    let (l, report) = Ledger::open(dir.path(), "ana").unwrap();
    assert_eq!(report.records, 2);
    assert!(!report.created && report.set_aside.is_none() && report.problems.is_empty());
    assert_eq!(l.records(), &[a, b]);
    assert_eq!(l.next_seq(), Some(3));
}

#[test]
fn retraction_points_at_an_earlier_correction_once() {
    let dir = tempfile::tempdir().unwrap();
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    l.append(correction(1, Verdict::Skip)).unwrap();
    let r = l.retract(1).unwrap();
    assert_eq!(r.entry, Entry::Retraction(Retraction { retracts: 1 }));
    assert_eq!(r.seq, 2);
    assert!(l.is_retracted(1));
    assert!(l.standing(1, "lane-01", 1).is_none());
    assert!(matches!(
        l.retract(1),
        Err(LedgerError::AlreadyRetracted { seq: 1, .. })
    ));
    assert!(matches!(
        l.retract(2),
        Err(LedgerError::NoSuchCorrection { seq: 2, .. })
    ));
    assert!(matches!(
        l.retract(9),
        Err(LedgerError::NoSuchCorrection { seq: 9, .. })
    ));
    drop(l);
    let (l, _) = Ledger::open(dir.path(), "ana").unwrap();
    assert!(l.is_retracted(1));
}

#[test]
fn second_writer_is_refused_with_the_holder_named() {
    let dir = tempfile::tempdir().unwrap();
    let (_l, _) = Ledger::open(dir.path(), "ana").unwrap();
    let err = Ledger::open(dir.path(), "ana").unwrap_err();
    let msg = err.to_string();
    assert!(matches!(err, LedgerError::Locked { .. }), "{msg}");
    assert!(
        msg.contains(&format!("pid {}", std::process::id())),
        "{msg}"
    );
    assert!(
        msg.contains("on host ") && msg.contains(" since 20"),
        "{msg}"
    );
    assert!(msg.contains("ana.jsonl"), "{msg}");
    // Another annotator's ledger is free.
    assert!(Ledger::open(dir.path(), "ben").is_ok());
}

#[test]
fn lock_is_released_when_the_writer_is_dropped() {
    let dir = tempfile::tempdir().unwrap();
    let (l, _) = Ledger::open(dir.path(), "ana").unwrap();
    drop(l);
    assert!(Ledger::open(dir.path(), "ana").is_ok());
}

#[test]
fn torn_tail_is_set_aside_and_reported_without_touching_whole_records() {
    let dir = tempfile::tempdir().unwrap();
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    l.append(correction(1, Verdict::Skip)).unwrap();
    l.append(correction(2, Verdict::Skip)).unwrap();
    let path = l.path().to_path_buf();
    drop(l);
    let whole = std::fs::read(&path).unwrap();
    let torn = b"{\"seq\":3,\"kind\":\"correc";
    std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .unwrap()
        .write_all(torn)
        .unwrap();
    // A reader sees the tail but does not parse it.
    let read = read_ledger(&path).unwrap();
    assert_eq!(read.records.len(), 2);
    assert_eq!(read.incomplete_tail, torn.len() as u64);
    let (mut l, report) = Ledger::open(dir.path(), "ana").unwrap();
    let aside = report.set_aside.unwrap();
    assert_eq!((aside.line, aside.bytes), (3, torn.len() as u64));
    assert_eq!(std::fs::read(&aside.path).unwrap(), torn);
    assert!(aside.path.to_string_lossy().ends_with("ana.jsonl.torn-1"));
    assert_eq!(std::fs::read(&path).unwrap(), whole);
    assert_eq!(report.records, 2);
    let r = l.append(correction(3, Verdict::Skip)).unwrap();
    assert_eq!(r.seq, 3);
    drop(l);
    let read = read_ledger(&path).unwrap();
    assert_eq!(read.records.len(), 3);
    assert!(read.problems.is_empty() && read.incomplete_tail == 0);
    // The side file is no ledger.
    assert_eq!(read_ledgers(dir.path()).unwrap().len(), 1);
}

#[test]
fn malformed_and_foreign_lines_are_reported_by_line_and_left_in_place() {
    let dir = tempfile::tempdir().unwrap();
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    let first = l.append(correction(1, Verdict::Skip)).unwrap();
    let path = l.path().to_path_buf();
    drop(l);
    let mut foreign = first.clone();
    foreign.annotator = "ben".into();
    foreign.seq = 2;
    let mut f = std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .unwrap();
    f.write_all(b"not json\n").unwrap();
    f.write_all(&foreign.to_line()).unwrap();
    f.write_all(&first.to_line()).unwrap(); // seq 1 again
    drop(f);
    let before = std::fs::read(&path).unwrap();
    let (_l, report) = Ledger::open(dir.path(), "ana").unwrap();
    let lines: Vec<(u64, &str)> = report
        .problems
        .iter()
        .map(|p| (p.line, p.field.as_str()))
        .collect();
    assert_eq!(lines, vec![(2, ""), (3, "annotator"), (4, "seq")]);
    assert!(report.problems[0].to_string().contains("ana.jsonl:2"));
    assert_eq!(report.records, 1);
    assert_eq!(std::fs::read(&path).unwrap(), before);
}

#[test]
fn readers_list_ledgers_and_notice_changes() {
    let dir = tempfile::tempdir().unwrap();
    assert!(read_ledgers(dir.path()).unwrap().is_empty());
    let (mut a, _) = Ledger::open(dir.path(), "ana").unwrap();
    let (mut b, _) = Ledger::open(dir.path(), "ben").unwrap();
    a.append(correction(1, Verdict::Skip)).unwrap();
    b.append(correction(1, Verdict::Unrecoverable)).unwrap();
    let all = read_ledgers(dir.path()).unwrap();
    let names: Vec<_> = all.iter().map(|l| l.annotator.as_str()).collect();
    assert_eq!(names, ["ana", "ben"]);
    assert!(!all[0].changed_on_disk());
    a.append(correction(2, Verdict::Skip)).unwrap();
    assert!(all[0].changed_on_disk());
    assert!(!all[1].changed_on_disk());
    let mut ana = all[0].clone();
    assert!(ana.refresh().unwrap());
    assert_eq!(ana.records.len(), 2);
    assert!(!ana.refresh().unwrap());
    assert_eq!(
        a.standing(1, "lane-01", 2).map(|r| r.seq),
        Some(2),
        "the writer's own view"
    );
}

#[test]
fn bad_annotator_names_never_reach_the_file_system() {
    let dir = tempfile::tempdir().unwrap();
    let err = Ledger::open(dir.path(), "../escape").unwrap_err();
    assert!(matches!(err, LedgerError::BadAnnotator { .. }));
    assert!(!dir.path().join("ledgers").exists());
}

#[test]
fn append_all_acknowledges_several_records_with_consecutive_sequence_numbers() {
    let dir = tempfile::tempdir().unwrap();
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    l.append(correction(1, Verdict::Skip)).unwrap();
    let batch = l
        .append_all(vec![
            correction(2, Verdict::Skip),
            correction(3, Verdict::Unrecoverable),
        ])
        .unwrap();
    assert_eq!(batch.iter().map(|r| r.seq).collect::<Vec<_>>(), [2, 3]);
    assert_eq!(l.next_seq(), Some(4));
    drop(l);
    let (l, report) = Ledger::open(dir.path(), "ana").unwrap();
    assert_eq!(report.records, 3);
    assert_eq!(&l.records()[1..], batch.as_slice());
}
