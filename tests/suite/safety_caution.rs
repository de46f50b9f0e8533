//! The safety caution is one text (`countersteer::SAFETY_CAUTION`), shown word for word in
//! the README, demo-data/README.md, every export manifest, on standard error by the commands
//! that lead to running a learner (`plan`, `correct`, `export`, `demo`, `study`), in the help
//! overlay, and at the correction desk once per annotator and day.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use crate::common;
#[cfg(feature = "gui")]
use crate::window_kit;

use std::process::{Command, Output};

use countersteer::SAFETY_CAUTION;
#[cfg(feature = "gui")]
use egui_kittest::kittest::Queryable;

/// The text with line breaks, block-quote marks and runs of spaces folded away.
fn words(s: &str) -> String {
    s.lines()
        .map(|l| l.trim_start().trim_start_matches('>'))
        .collect::<Vec<_>>()
        .join(" ")
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
}

fn doc(rel: &str) -> String {
    std::fs::read_to_string(std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)).unwrap()
}

fn cs(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .env_remove("COUNTERSTEER_ANNOTATOR")
        .output()
        .unwrap()
}

/// The caution names every point it must make.
#[test]
fn the_caution_makes_each_point() {
    let c = SAFETY_CAUTION;
    for point in [
        "Robots and vehicles can hurt people.",
        "running an unproven learner on real hardware",
        "test it in simulation first",
        "a trained safety operator ready to take over at once",
        "a tested emergency stop",
        "reduced speed",
        "keep people out of the area",
        "not a safety monitor",
        "a step that was not flagged is not thereby safe",
        "Typed corrections were never executed and may not be physically feasible",
        "Local regulations and your site's safety procedures come first",
    ] {
        assert!(c.contains(point), "the caution lacks {point:?}");
    }
}

#[test]
fn readme_and_demo_readme_carry_the_shared_safety_caution() {
    let caution = words(SAFETY_CAUTION);
    for rel in ["README.md", "demo-data/README.md"] {
        assert!(
            words(&doc(rel)).contains(&caution),
            "{rel} lacks: {caution}"
        );
    }
}

/// `plan`, `correct` and `export` on a small campaign, `demo` and `study` refused at their
/// arguments: each prints the caution as one line on standard error, and the manifest holds
/// the same text.
#[test]
fn the_commands_toward_a_learner_print_the_caution_and_the_manifest_holds_it() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    let out = dir.path().join("exports/merged.jsonl");
    let runs: [&[&str]; 5] = [
        &["plan", d, "--round", "1", "--budget", "3"],
        &[
            "correct",
            d,
            "--annotator",
            "ana",
            "--round",
            "1",
            "--episode",
            "r1-b",
            "--t",
            "40",
            "--skip",
        ],
        &["export", d, "--out", out.to_str().unwrap()],
        &["demo", d, "--learner", "none-such"],
        &["study", d, "--learner", "none-such"],
    ];
    let line = format!("caution: {SAFETY_CAUTION}");
    for (i, args) in runs.iter().enumerate() {
        let o = cs(args);
        assert_eq!(o.status.success(), i < 3, "{args:?}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.lines().any(|l| l == line), "{args:?}: {err}");
        let stdout = String::from_utf8_lossy(&o.stdout);
        assert!(!stdout.contains("caution"), "{args:?}: {stdout}");
    }
    // Commands that only read or score do not print it.
    let o = cs(&["check", d]);
    assert!(!String::from_utf8_lossy(&o.stderr).contains("caution"));
    let manifest: serde_json::Value = serde_json::from_slice(
        &std::fs::read(dir.path().join("exports/merged.jsonl.manifest.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(manifest["safety"].as_str(), Some(SAFETY_CAUTION));
}

/// At the desk: shown to the annotator, put away with its button, remembered for them and
/// today; another annotator sees it again. The help overlay carries it too.
#[cfg(feature = "gui")]
#[test]
fn the_desk_shows_the_caution_once_per_annotator_and_day() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = window_kit::harness(dir.path(), "ana");
    assert!(h.query_by_label(SAFETY_CAUTION).is_some());
    h.get_by_label("Read: hide until tomorrow").click();
    h.run_steps(2);
    assert!(h.query_by_label(SAFETY_CAUTION).is_none());
    let today = countersteer::app::state::today();
    assert!(!h.state().ui.caution_due("ana", &today));
    assert!(h.state().ui.caution_due("ben", &today));
    // The help overlay (F1) still has it.
    h.key_press(egui::Key::F1);
    h.run_steps(2);
    assert!(h.query_by_label(SAFETY_CAUTION).is_some());
}
