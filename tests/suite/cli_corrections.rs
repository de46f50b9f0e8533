//! `countersteer correct`, `tally` and `export` end to end, as separate processes.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use crate::campaign_kit as common;

use std::path::Path;
use std::process::{Command, Output};

fn cs(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .env_remove("COUNTERSTEER_ANNOTATOR")
        .output()
        .unwrap()
}

fn ok(o: &Output) -> String {
    assert!(
        o.status.success(),
        "stdout: {}\nstderr: {}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn correct(dir: &Path, who: &str, step: (&str, &str, &str), verdict: &[&str]) -> Output {
    let d = dir.to_str().unwrap();
    let mut args = vec![
        "correct",
        d,
        "--annotator",
        who,
        "--round",
        step.0,
        "--episode",
        step.1,
        "--t",
        step.2,
    ];
    args.extend(verdict);
    cs(&args)
}

#[test]
fn two_annotators_correct_then_tally_and_export_agree_with_the_library() {
    let dir = tempfile::tempdir().unwrap();
    common::write_campaign(dir.path(), 5);
    let d = dir.path();
    let out = ok(&correct(
        d,
        "ana",
        ("1", "lane-00", "3"),
        &["--action", "-0.1,slow"],
    ));
    assert_eq!(
        out.trim(),
        "ana #1: round 1 `lane-00` t 3: action steer=-0.1 speed=slow (saved)"
    );
    ok(&correct(
        d,
        "ben",
        ("1", "lane-00", "3"),
        &["--action", "-0.2", "--action", "slow"],
    ));
    ok(&correct(
        d,
        "ana",
        ("1", "lane-01", "2"),
        &["--unrecoverable"],
    ));
    ok(&correct(
        d,
        "ben",
        ("1", "lane-01", "2"),
        &["--skip", "--note", "cannot tell"],
    ));
    ok(&correct(
        d,
        "ben",
        ("2", "lane-00", "0"),
        &["--action", "0.4,cruise"],
    ));
    let out = ok(&correct(
        d,
        "ben",
        ("2", "lane-00", "0"),
        &["--retract", "3"],
    ));
    assert_eq!(out.trim(), "ben #4: retracts #3 (saved)");

    let out = ok(&cs(&["tally", d.to_str().unwrap(), "--steps"]));
    assert!(
        out.contains("2 annotator(s): ana (2 records), ben (4 records)"),
        "{out}"
    );
    assert!(out.contains("round 1: 90 steps, 2 judged (2.2%), 1 with a consensus action, 2 by two or more annotators"), "{out}");
    assert!(
        out.contains("verdicts: 2 action, 1 skip, 1 unrecoverable"),
        "{out}"
    );
    assert!(out.contains("round 2: 10 steps, 0 judged"), "{out}");
    // Median of -0.1 and -0.2 as f32; spread 0.1 of the range 1.0.
    assert!(
        out.contains("ana=-0.1,slow ben=-0.2,slow -> -0.15,slow (agreement 0.90)"),
        "{out}"
    );
    assert!(out.contains("ana=unrecoverable ben=skip -> none"), "{out}");

    let merged = d.join("exports/merged.csv");
    let o = cs(&[
        "export",
        d.to_str().unwrap(),
        "--out",
        merged.to_str().unwrap(),
    ]);
    let out = ok(&o);
    assert!(
        out.contains("11 rows (10 demonstration, 1 correction)"),
        "{out}"
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("caution: Robots and vehicles can hurt people. Corrected data does not make a policy safe"),
        "{err}"
    );
    let text = std::fs::read_to_string(&merged).unwrap();
    let last = text.lines().last().unwrap();
    assert!(last.starts_with("correction,1,lane-00,3,"), "{last}");
    assert!(last.ends_with(",-0.15,slow,1,2,0.9"), "{last}");
    assert!(d.join("exports/merged.csv.manifest.json").is_file());
}

#[test]
fn correct_refuses_a_ledger_held_by_another_writer_and_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    let c = common::write_campaign(dir.path(), 5);
    let d = dir.path();
    let held = countersteer::ledger::Ledger::open(&c.root, "ana").unwrap();
    let o = correct(d, "ana", ("1", "lane-00", "3"), &["--skip"]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("is open for writing elsewhere"), "{err}");
    assert!(
        err.contains(&format!("pid {} on host", std::process::id())),
        "{err}"
    );
    drop(held);
    let o = correct(d, "ana", ("1", "lane-00", "3"), &["--action", "0.9,slow"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("`steer`: 0.9 is outside -0.5..0.5"), "{err}");
    let o = correct(
        d,
        "ana",
        ("1", "lane-00", "3"),
        &["--action", "0.1,reverse"],
    );
    assert!(String::from_utf8_lossy(&o.stderr).contains("`speed`: `reverse` is not one of"));
    let o = correct(d, "ana", ("1", "lane-09", "3"), &["--skip"]);
    assert!(String::from_utf8_lossy(&o.stderr).contains("round 1 has no step `lane-09` t 3"));
    let o = correct(d, "ana", ("1", "lane-00", "3"), &["--retract", "7"]);
    assert!(String::from_utf8_lossy(&o.stderr).contains("record #7 is not a correction"));
    let o = correct(d, "../x", ("1", "lane-00", "3"), &["--skip"]);
    assert!(String::from_utf8_lossy(&o.stderr).contains("annotator name `../x`"));
    // Nothing was written by the refused commands.
    let l = countersteer::ledger::read_ledger(&d.join("ledgers/ana.jsonl")).unwrap();
    assert!(l.records.is_empty());
}

#[test]
fn corrections_of_replaced_data_are_reported_by_tally_and_left_out_of_export() {
    let dir = tempfile::tempdir().unwrap();
    common::write_campaign(dir.path(), 5);
    let d = dir.path();
    ok(&correct(
        d,
        "ana",
        ("1", "lane-00", "3"),
        &["--action", "0.1,slow"],
    ));
    // The round's file is replaced by different data with the same episodes and times.
    let other = common::table(9.0, 3, 30, "lane-");
    let f = std::fs::File::create(d.join("rounds/1/steps.jsonl")).unwrap();
    countersteer::campaign::write::write_jsonl(&other, &common::spec(), "rounds/1", f).unwrap();
    let out = ok(&cs(&["tally", d.to_str().unwrap()]));
    assert!(
        out.contains("not applied: ana #1 (round 1 `lane-00` t 3): the step's data changed since"),
        "{out}"
    );
    assert!(out.contains("round 1: 90 steps, 0 judged"), "{out}");
    let merged = d.join("exports/m.jsonl");
    let out = ok(&cs(&[
        "export",
        d.to_str().unwrap(),
        "--out",
        merged.to_str().unwrap(),
    ]));
    assert!(out.contains("(10 demonstration, 0 correction)"), "{out}");
    assert!(
        out.contains("not applied: 1 correction(s) whose step data changed"),
        "{out}"
    );
}
