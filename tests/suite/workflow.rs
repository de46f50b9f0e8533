//! The pipeline's driver shared by every front-end: the window reuses saved scores under the
//! same rule as `countersteer plan` (flags always at the campaign's alpha), the window shows
//! the list `countersteer plan` saved, the window and the command line share one budget
//! default, and a ledger that cannot be read is the same exit code in every command.
#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use crate::common;

use std::path::Path;
use std::process::Command;

use countersteer::campaign::{LoadOptions, load_campaign};
use countersteer::progress::Progress;
use serde_json::Value;

fn run(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .output()
        .unwrap()
}

fn set_alpha(root: &Path, alpha: f64) {
    let path = root.join("campaign.json");
    let mut v: Value = serde_json::from_slice(&std::fs::read(&path).unwrap()).unwrap();
    v["novelty"]["alpha"] = alpha.into();
    std::fs::write(&path, serde_json::to_vec_pretty(&v).unwrap()).unwrap();
}

/// (episode, t) of every line of the saved review list, in rank order.
fn saved_list(root: &Path) -> Vec<(String, i64)> {
    let text = std::fs::read_to_string(root.join("analysis/1/review-list.jsonl")).unwrap();
    text.lines()
        .map(|l| {
            let v: Value = serde_json::from_str(l).unwrap();
            (
                v["episode"].as_str().unwrap().to_string(),
                v["t"].as_i64().unwrap(),
            )
        })
        .collect()
}

#[cfg(feature = "gui")]
#[test]
fn the_window_scores_again_when_the_saved_scores_have_another_alpha() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    set_alpha(dir.path(), 0.2);
    let out = run(&["score", d, "--round", "1"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // 0.05: above the smallest alpha this campaign's calibration can resolve.
    set_alpha(dir.path(), 0.05);
    let c = load_campaign(dir.path(), &LoadOptions::default(), &Progress::new()).unwrap();
    let scored = countersteer::app::signals::compute(&c, None, 1, &Progress::new())
        .unwrap()
        .unwrap();
    let s = &scored.signals;
    assert_eq!(
        s.alpha, 0.05,
        "flags at the campaign's alpha ({})",
        scored.source
    );
    // The flag rule of the saved-scores format: flagged = p-value <= alpha.
    // (p is stored as f32: a p-value of exactly 1/20 reads back a hair above 0.05, so a
    // step at the tie is allowed either way.)
    for (p, f) in s.p_value.iter().zip(&s.flagged) {
        if (f64::from(*p) - 0.05).abs() > 1e-7 {
            assert_eq!(*f, f64::from(*p) <= 0.05, "p = {p}");
        }
    }
}

#[cfg(feature = "gui")]
#[test]
fn the_window_shows_the_list_plan_saved() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    let out = run(&["plan", d, "--round", "1", "--budget", "4", "--min-gap", "3"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let planned = saved_list(dir.path());
    assert_eq!(planned.len(), 4);
    let h = crate::window_kit::harness(dir.path(), "ana");
    let wb = h.state();
    let s = wb.desk.sitting.as_ref().unwrap();
    let steps = &load_campaign(dir.path(), &LoadOptions::default(), &Progress::new())
        .unwrap()
        .rounds[0]
        .steps;
    let shown: Vec<(String, i64)> = s
        .entries
        .iter()
        .map(|e| (steps.episodes[e.episode].name.clone(), e.t))
        .collect();
    assert_eq!(shown, planned);
    assert_eq!(s.budget, 4);
}

#[cfg(feature = "gui")]
#[test]
fn a_list_planned_before_the_round_was_scored_again_is_planned_afresh() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    let out = run(&["plan", d, "--round", "1", "--budget", "4"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // Scored again after planning: the saved list no longer fits the scores.
    std::thread::sleep(std::time::Duration::from_millis(20));
    let out = run(&["score", d, "--round", "1"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let h = crate::window_kit::harness(dir.path(), "ana");
    let s = h.state().desk.sitting.as_ref().unwrap();
    assert_eq!(s.origin, countersteer::workflow::ListOrigin::PlannedNow);
    assert_eq!(s.budget, countersteer::review::DEFAULT_BUDGET);
}

#[cfg(feature = "gui")]
#[test]
fn the_window_and_the_command_line_share_one_budget_default() {
    let window = countersteer::app::UiState::default().budget;
    let library = countersteer::review::PlanSettings::default().budget;
    assert_eq!(window, library);
    let help = String::from_utf8_lossy(&run(&["plan", "--help"]).stdout).into_owned();
    assert!(help.contains(&format!("[default: {library}]")), "{help}");
}

#[test]
fn a_ledger_that_cannot_be_read_exits_2_in_every_command() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    std::fs::create_dir_all(dir.path().join("ledgers")).unwrap();
    // Longer than the largest ledger read (1 GiB); sparse, so nothing is written.
    let f = std::fs::File::create(dir.path().join("ledgers/ana.jsonl")).unwrap();
    f.set_len(countersteer::ledger::MAX_LEDGER_BYTES + 1)
        .unwrap();
    let out_file = dir.path().join("exports/m.csv");
    let commands: [&[&str]; 3] = [
        &["plan", d, "--round", "1"],
        &["tally", d],
        &["export", d, "--out", out_file.to_str().unwrap()],
    ];
    for args in commands {
        let out = run(args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains("ana.jsonl"), "{args:?}: {err}");
    }
}

#[test]
fn a_ledger_refusing_a_retraction_exits_2_like_every_ledger_error() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    let out = run(&["correct", d, "--annotator", "ana", "--retract", "7"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains('7'), "{err}");
}
