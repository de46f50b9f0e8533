//! `countersteer correct --from FILE`: a batch of verdicts from CSV or JSON Lines, checked
//! whole and appended with one fsync; compared with the same verdicts given one by one.

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

/// One verdict as single-call arguments and as a CSV row
/// (`round,episode,t,steer,speed,verdict,retract,note`).
struct Verdict {
    args: Vec<&'static str>,
    row: &'static str,
}

fn verdicts() -> Vec<Verdict> {
    let v = |args: &[&'static str], row| Verdict {
        args: args.to_vec(),
        row,
    };
    vec![
        v(
            &[
                "--round",
                "1",
                "--episode",
                "lane-00",
                "--t",
                "3",
                "--action",
                "-0.1,slow",
            ],
            "1,lane-00,3,-0.1,slow,,,",
        ),
        v(
            &[
                "--round",
                "1",
                "--episode",
                "lane-00",
                "--t",
                "4",
                "--action",
                "0.25,cruise",
                "--note",
                "wide, late",
            ],
            "1,lane-00,4,0.25,2,action,,\"wide, late\"",
        ),
        v(
            &[
                "--round",
                "1",
                "--episode",
                "lane-01",
                "--t",
                "2",
                "--unrecoverable",
            ],
            "1,lane-01,2,,,unrecoverable,,",
        ),
        v(
            &["--round", "1", "--episode", "lane-02", "--t", "9", "--skip"],
            "1,lane-02,9,,,skip,,",
        ),
        v(&["--retract", "1"], ",,,,,,1,"),
        v(
            &[
                "--round",
                "1",
                "--episode",
                "lane-00",
                "--t",
                "3",
                "--action",
                "0.05,stop",
            ],
            "1,lane-00,3,0.05,0,,,",
        ),
        v(
            &[
                "--round",
                "2",
                "--episode",
                "lane-00",
                "--t",
                "0",
                "--action",
                "0.5,slow",
            ],
            "2,lane-00,0,0.5,slow,,,",
        ),
        v(&["--retract", "4"], ",,,,,,4,"),
        v(
            &[
                "--round",
                "1",
                "--episode",
                "lane-02",
                "--t",
                "9",
                "--action",
                "-0.5,slow",
            ],
            "1,lane-02,9,-0.5,1,,,",
        ),
    ]
}

/// The same verdicts for a second annotator, as JSON Lines.
const BEN_JSONL: &str = "{\"round\":1,\"episode\":\"lane-00\",\"t\":3,\"steer\":-0.2,\"speed\":\"stop\"}\n\
{\"round\":1,\"episode\":\"lane-01\",\"t\":2,\"verdict\":\"skip\",\"note\":\"cannot tell\"}\n\
{\"round\":1,\"episode\":\"lane-02\",\"t\":9,\"steer\":-0.4,\"speed\":1}\n";

fn ben_one_by_one() -> Vec<Vec<&'static str>> {
    vec![
        vec![
            "--round",
            "1",
            "--episode",
            "lane-00",
            "--t",
            "3",
            "--action",
            "-0.2,stop",
        ],
        vec![
            "--round",
            "1",
            "--episode",
            "lane-01",
            "--t",
            "2",
            "--skip",
            "--note",
            "cannot tell",
        ],
        vec![
            "--round",
            "1",
            "--episode",
            "lane-02",
            "--t",
            "9",
            "--action",
            "-0.4,slow",
        ],
    ]
}

fn call(dir: &Path, who: &str, rest: &[&str]) -> String {
    let d = dir.to_str().unwrap();
    let mut args = vec!["correct", d, "--annotator", who];
    args.extend(rest);
    ok(&cs(&args))
}

fn tally_and_export(dir: &Path) -> (String, Vec<u8>) {
    let d = dir.to_str().unwrap();
    let tally = ok(&cs(&["tally", d, "--steps"]));
    let out = dir.join("exports/merged.csv");
    ok(&cs(&["export", d, "--out", out.to_str().unwrap()]));
    (tally, std::fs::read(out).unwrap())
}

#[test]
fn a_batch_gives_the_same_tally_and_export_as_the_verdicts_given_one_by_one() {
    let one = tempfile::tempdir().unwrap();
    let bulk = tempfile::tempdir().unwrap();
    common::write_campaign(one.path(), 5);
    common::write_campaign(bulk.path(), 5);
    for v in verdicts() {
        call(one.path(), "ana", &v.args);
    }
    for args in ben_one_by_one() {
        call(one.path(), "ben", &args);
    }
    let csv = bulk.path().join("ana.csv");
    let rows: Vec<&str> = verdicts().iter().map(|v| v.row).collect();
    let text = format!(
        "round,episode,t,steer,speed,verdict,retract,note\n{}\n",
        rows.join("\n")
    );
    std::fs::write(&csv, text).unwrap();
    let out = call(bulk.path(), "ana", &["--from", csv.to_str().unwrap()]);
    assert_eq!(
        out.trim(),
        "ana 9 records #1..#9: 5 action, 1 skip, 1 unrecoverable, 2 retraction(s) (saved)"
    );
    let jsonl = bulk.path().join("ben.jsonl");
    std::fs::write(&jsonl, BEN_JSONL).unwrap();
    call(bulk.path(), "ben", &["--from", jsonl.to_str().unwrap()]);

    let (tally_one, export_one) = tally_and_export(one.path());
    let (tally_bulk, export_bulk) = tally_and_export(bulk.path());
    assert_eq!(tally_one, tally_bulk);
    assert_eq!(export_one, export_bulk);
    // The tally itself, worked by hand: ana's standing verdicts are lane-00 t 3 (0.05, stop;
    // her first verdict there is retracted), lane-00 t 4, lane-01 t 2 (unrecoverable),
    // lane-02 t 9 (-0.5, slow; her skip is retracted) and round 2 lane-00 t 0.
    assert!(
        tally_bulk.contains("ana (9 records), ben (3 records)"),
        "{tally_bulk}"
    );
    assert!(
        tally_bulk.contains("ana=0.05,stop ben=-0.2,stop -> -0.075,stop"),
        "{tally_bulk}"
    );
    assert!(
        tally_bulk.contains("ana=unrecoverable ben=skip -> none"),
        "{tally_bulk}"
    );
}

#[test]
fn a_bad_batch_is_refused_whole_and_every_bad_line_is_named() {
    let dir = tempfile::tempdir().unwrap();
    common::write_campaign(dir.path(), 5);
    let csv = dir.path().join("b.csv");
    std::fs::write(
        &csv,
        "round,episode,t,steer,speed,verdict,retract,note\n\
         1,lane-00,3,-0.1,slow,,,\n\
         1,lane-00,4,0.7,slow,,,\n\
         1,lane-09,4,0.1,slow,,,\n\
         1,lane-00,40,,,skip,,\n\
         3,lane-00,1,,,skip,,\n\
         1,lane-00,5,0.1,,,,\n\
         1,lane-00,6,0.1,reverse,,,\n\
         ,,,,,,12,\n\
         1,lane-01,1,,,unrecoverable,,\n",
    )
    .unwrap();
    let o = cs(&[
        "correct",
        dir.path().to_str().unwrap(),
        "--annotator",
        "ana",
        "--from",
        csv.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    let at = |line: u32, field: &str| format!("b.csv:{line}: field `{field}`");
    for (line, field) in [
        (3, "steer"),
        (4, "episode"),
        (5, "t"),
        (6, "round"),
        (7, "speed"),
        (8, "speed"),
        (9, "retract"),
    ] {
        assert!(err.contains(&at(line, field)), "{line} {field}: {err}");
    }
    assert!(err.contains("`steer`: 0.7 is outside -0.5..0.5"), "{err}");
    assert!(
        err.contains("7 problem(s) in the batch; nothing was written"),
        "{err}"
    );
    assert!(
        !err.contains("b.csv:2:") && !err.contains("b.csv:10:"),
        "{err}"
    );
    let l = countersteer::ledger::read_ledger(&dir.path().join("ledgers/ana.jsonl")).unwrap();
    assert!(l.records.is_empty());
}
