//! `countersteer score` and `countersteer plan` on a small campaign folder.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use std::path::Path;
use std::process::Command;

use countersteer::campaign::write::write_jsonl;
use countersteer::novelty::synth::{SynthSpec, campaign, trajectories};

pub fn make_campaign(root: &Path) {
    let mut expert = SynthSpec::expert(30, 100, 5, 41);
    expert.latent = 3;
    let demos = trajectories(&expert);
    let mut learner = SynthSpec {
        seed: 42,
        episodes: 6,
        drift: 0.1,
        ..expert
    };
    learner.prefix = "learner".into();
    let c = campaign(demos, trajectories(&learner), 5, 0.05);
    std::fs::create_dir_all(root.join("demonstrations")).unwrap();
    std::fs::create_dir_all(root.join("rounds/1")).unwrap();
    std::fs::write(
        root.join("campaign.json"),
        serde_json::to_vec_pretty(&c.file).unwrap(),
    )
    .unwrap();
    let f = std::fs::File::create(root.join("demonstrations/expert.jsonl")).unwrap();
    write_jsonl(&c.demonstrations, c.spec(), "demonstrations", f).unwrap();
    let f = std::fs::File::create(root.join("rounds/1/learner.jsonl")).unwrap();
    write_jsonl(&c.rounds[0].steps, c.spec(), "rounds/1", f).unwrap();
}

fn run(args: &[&str]) -> (bool, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn score_then_plan_write_their_files_and_readable_summaries() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    let (ok, out, err) = run(&["score", d, "--round", "1"]);
    assert!(ok, "{err}");
    assert!(out.contains("steps: 600, flagged:"), "{out}");
    assert!(
        out.contains("excursions:") && out.contains("learner-0000"),
        "{out}"
    );
    assert!(dir.path().join("analysis/1/scores.npz").is_file());
    let (ok, out, err) = run(&["plan", d, "--round", "1", "--budget", "7"]);
    assert!(ok, "{err}");
    assert!(err.contains("using saved scores"), "{err}");
    assert!(out.contains("review list: 7 step(s)"), "{out}");
    let text = std::fs::read_to_string(dir.path().join("analysis/1/review-list.jsonl")).unwrap();
    let lines: Vec<serde_json::Value> = text
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), 7);
    assert_eq!(lines[0]["rank"], 1);
    assert!(
        lines
            .iter()
            .all(|l| l["episode"].as_str().unwrap().starts_with("learner-"))
    );

    // A verdict in a ledger seeds the next plan: that step is covered ground, not asked again.
    let (episode, t) = (
        lines[0]["episode"].as_str().unwrap(),
        lines[0]["t"].to_string(),
    );
    let (ok, _, err) = run(&[
        "correct",
        d,
        "--annotator",
        "ana",
        "--round",
        "1",
        "--episode",
        episode,
        "--t",
        &t,
        "--skip",
    ]);
    assert!(ok, "{err}");
    let (ok, out, err) = run(&["plan", d, "--round", "1", "--budget", "7"]);
    assert!(ok, "{err}");
    assert!(
        out.contains("1 step(s) of round 1 already judged in the ledgers"),
        "{out}"
    );
    let text = std::fs::read_to_string(dir.path().join("analysis/1/review-list.jsonl")).unwrap();
    let again: Vec<serde_json::Value> = text
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(again.len(), 7);
    assert!(
        again
            .iter()
            .all(|l| !(l["episode"] == lines[0]["episode"] && l["t"] == lines[0]["t"])),
        "the judged step was asked again"
    );
}

#[test]
fn unknown_round_is_a_usage_error_naming_the_rounds_found() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let (ok, _, err) = run(&["score", dir.path().to_str().unwrap(), "--round", "9"]);
    assert!(!ok);
    assert!(
        err.contains("no round 9") && err.contains("found: 1"),
        "{err}"
    );
}
