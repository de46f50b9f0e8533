//! The bad-input corpus: every file under tests/bad_inputs/ (one fault each, listed with its
//! expected problem in expected.tsv) is dropped into round 1 of an otherwise good campaign;
//! `check` must report exactly the expected problems with file, line and field, and the
//! `countersteer check` command must exit non-zero on errors and print the location.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

use countersteer::campaign::{LoadOptions, Location, Severity, check_campaign};
use countersteer::progress::Progress;

fn corpus() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_inputs")
}

fn campaign_with(bad: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    std::fs::create_dir_all(root.join("demonstrations")).unwrap();
    std::fs::create_dir_all(root.join("rounds/1")).unwrap();
    std::fs::copy(corpus().join("campaign.json"), root.join("campaign.json")).unwrap();
    std::fs::copy(
        corpus().join("good_demonstrations.jsonl"),
        root.join("demonstrations/d.jsonl"),
    )
    .unwrap();
    std::fs::copy(corpus().join(bad), root.join("rounds/1").join(bad)).unwrap();
    dir
}

fn expected() -> BTreeMap<String, Vec<Vec<String>>> {
    let text = std::fs::read_to_string(corpus().join("expected.tsv")).unwrap();
    let mut out: BTreeMap<String, Vec<Vec<String>>> = BTreeMap::new();
    for line in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.is_empty())
    {
        let cols: Vec<String> = line.split('\t').map(str::to_string).collect();
        assert_eq!(cols.len(), 6, "expected.tsv: {line}");
        out.entry(cols[0].clone()).or_default().push(cols);
    }
    out
}

#[test]
fn every_corpus_file_is_listed() {
    let listed = expected();
    for entry in std::fs::read_dir(corpus()).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        let data = name.ends_with(".jsonl") || name.ends_with(".csv") || name.ends_with(".npz");
        if data && name != "good_demonstrations.jsonl" {
            assert!(
                listed.contains_key(&name),
                "{name} has no line in expected.tsv"
            );
        }
    }
}

#[test]
fn each_fault_is_reported_with_file_line_and_field() {
    for (file, rows) in expected() {
        let dir = campaign_with(&file);
        let report = check_campaign(dir.path(), &LoadOptions::default(), &Progress::new());
        let got = &report.problems;
        assert_eq!(got.len(), rows.len(), "{file}: {got:#?}");
        for (p, want) in got.iter().zip(&rows) {
            assert_eq!(p.file, Path::new("rounds/1").join(&file), "{file}");
            assert_eq!(format!("{:?}", p.severity), want[1], "{file}: {p}");
            assert_eq!(format!("{:?}", p.kind), want[2], "{file}: {p}");
            let loc = match p.location {
                Location::File => "0".to_string(),
                Location::Line(n) => n.to_string(),
                Location::Record(n) => format!("r{n}"),
            };
            assert_eq!(loc, want[3], "{file}: {p}");
            assert_eq!(p.field, want[4], "{file}: {p}");
            assert!(
                p.message.contains(&want[5]),
                "{file}: `{}` lacks `{}`",
                p.message,
                want[5]
            );
        }
        let has_error = got.iter().any(|p| p.severity == Severity::Error);
        assert_eq!(report.campaign.is_none(), has_error, "{file}");
    }
}

#[test]
fn strict_turns_clipping_into_an_error() {
    let dir = campaign_with("out_of_bounds.jsonl");
    let opts = LoadOptions {
        strict: true,
        ..LoadOptions::default()
    };
    let report = check_campaign(dir.path(), &opts, &Progress::new());
    assert!(report.campaign.is_none());
}

#[test]
fn clipped_actions_are_loaded_at_the_bound() {
    let dir = campaign_with("out_of_bounds.jsonl");
    let report = check_campaign(dir.path(), &LoadOptions::default(), &Progress::new());
    let c = report.campaign.unwrap();
    assert_eq!(c.rounds[0].steps.action(1), &[0.5, 0.0]);
}

#[test]
fn check_command_exits_nonzero_and_prints_the_location() {
    let dir = campaign_with("time_order.jsonl");
    let out = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .arg("check")
        .arg(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("rounds/1/time_order.jsonl:3: field `t`"),
        "{err}"
    );
}

#[test]
fn problem_cap_keeps_the_first_and_counts_the_rest() {
    let dir = campaign_with("wrong_dimension.jsonl");
    let bad = r#"{"episode": "z", "t": 0, "state": [1.0], "action": [0.0, "cruise"]}"#;
    let text: String = (0..120)
        .map(|i| bad.replace("\"t\": 0", &format!("\"t\": {i}")) + "\n")
        .collect();
    std::fs::write(dir.path().join("rounds/1/many.jsonl"), text).unwrap();
    let opts = LoadOptions {
        problem_cap: 10,
        ..LoadOptions::default()
    };
    let report = check_campaign(dir.path(), &opts, &Progress::new());
    let many: Vec<_> = report
        .problems
        .iter()
        .filter(|p| p.file.ends_with("many.jsonl"))
        .collect();
    assert_eq!(many.len(), 10);
    assert_eq!(report.more, 110);
    assert_eq!(many[9].location, Location::Line(10));
}

#[test]
fn bad_spec_names_its_field() {
    let dir = campaign_with("empty.jsonl");
    let spec = std::fs::read_to_string(dir.path().join("campaign.json")).unwrap();
    std::fs::write(
        dir.path().join("campaign.json"),
        spec.replace("\"angle\"", "\"offset\""),
    )
    .unwrap();
    let report = check_campaign(dir.path(), &LoadOptions::default(), &Progress::new());
    assert_eq!(report.problems.len(), 1);
    assert_eq!(report.problems[0].field, "spec.features[1].name");
    assert!(report.problems[0].message.contains("used twice"));
}
