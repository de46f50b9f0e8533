//! The writer's side of a ledger under fuzzing: appends and retractions on top of arbitrary
//! existing ledger bytes, with the invariants every acknowledged record must keep.

use std::path::PathBuf;

use crate::ledger::{Correction, Entry, Ledger, Verdict, ledger_path, read_ledger};

/// Most operations one input runs (each is an fsync'd append).
const MAX_OPS: usize = 8;

/// A fresh folder for this process's campaign (removed before and after each input).
fn scratch() -> PathBuf {
    std::env::temp_dir().join(format!("countersteer-fuzz-ledger-{}", std::process::id()))
}

fn correction(t: u8) -> Correction {
    Correction {
        round: 1,
        episode: "e".into(),
        t: i64::from(t),
        fingerprint: "0000000000000000".into(),
        verdict: Verdict::Skip,
        note: None,
    }
}

/// Runs the input: its first byte says how many operations follow (at most [`MAX_OPS`]),
/// the next bytes are the operations (even: append a correction, odd: retract the
/// correction that many records from the end of this ledger), and the rest is the ledger
/// file as found on disk. Checks that opening never rewrites a whole line, that a torn tail
/// is set aside byte for byte, that every acknowledged record follows the previous one by
/// one and is read back, and that refused operations write nothing.
pub fn ledger_append(data: &[u8]) {
    let n = usize::from(data.first().copied().unwrap_or(0)) % (MAX_OPS + 1);
    let ops = data.get(1..1 + n).unwrap_or(&[]);
    let existing = data.get(1 + n..).unwrap_or(&[]);
    let root = scratch();
    let _ = std::fs::remove_dir_all(&root);
    let path = ledger_path(&root, "fuzz");
    if let Err(e) =
        std::fs::create_dir_all(root.join("ledgers")).and_then(|()| std::fs::write(&path, existing))
    {
        panic!("scratch folder: {e}");
    }
    run(&root, &path, ops, existing);
    let _ = std::fs::remove_dir_all(&root);
}

fn run(root: &std::path::Path, path: &std::path::Path, ops: &[u8], existing: &[u8]) {
    let (mut ledger, report) = match Ledger::open(root, "fuzz") {
        Ok(x) => x,
        Err(e) => panic!("a ledger of {} bytes does not open: {e}", existing.len()),
    };
    let on_disk = std::fs::read(path).unwrap_or_default();
    let kept = match &report.set_aside {
        Some(a) => {
            let side = std::fs::read(&a.path).unwrap_or_default();
            assert_eq!(side.as_slice(), &existing[existing.len() - side.len()..]);
            existing.len() - side.len()
        }
        None => existing.len(),
    };
    assert_eq!(
        &on_disk[..kept],
        &existing[..kept],
        "opening rewrote the ledger"
    );
    let mut acked = Vec::new();
    for &op in ops {
        let before = std::fs::read(path).unwrap_or_default();
        let result = if op % 2 == 0 {
            ledger.append(correction(op))
        } else {
            let back = usize::from(op / 2);
            let seq = ledger.records().iter().rev().nth(back).map_or(0, |r| r.seq);
            ledger.retract(seq)
        };
        match result {
            Ok(r) => {
                if let Some(prev) = acked.last().map(|p: &crate::ledger::Record| p.seq) {
                    assert_eq!(Some(r.seq), prev.checked_add(1), "seq does not follow");
                }
                acked.push(r);
            }
            Err(_) => assert_eq!(std::fs::read(path).unwrap_or_default(), before),
        }
    }
    drop(ledger);
    let read = match read_ledger(path) {
        Ok(l) => l,
        Err(e) => panic!("the ledger does not read back: {e}"),
    };
    assert_eq!(read.incomplete_tail, 0);
    let first = read.records.len().checked_sub(acked.len());
    let Some(tail) = first.map(|i| &read.records[i..]) else {
        panic!(
            "{} records read back, {} acknowledged",
            read.records.len(),
            acked.len()
        );
    };
    assert_eq!(
        tail,
        acked.as_slice(),
        "an acknowledged record is not read back"
    );
    for r in &acked {
        if let Entry::Retraction(x) = &r.entry {
            assert!(read.records.iter().any(|c| c.seq == x.retracts));
        }
    }
}
