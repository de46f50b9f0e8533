//! The campaign folder's rules: one name per round folder, a warning for every entry of
//! `demonstrations/` and `rounds/` that is not read, and frames decoded by `check`.

use std::path::Path;
use std::process::Command;

use countersteer::campaign::{LoadOptions, ProblemKind, Severity, check_campaign};
use countersteer::progress::Progress;

use super::cli_score_plan::make_campaign;

fn check(root: &Path) -> (bool, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(["check", root.to_str().unwrap()])
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn a_round_number_written_with_a_leading_zero_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let root = dir.path();
    std::fs::create_dir(root.join("rounds/01")).unwrap();
    std::fs::copy(
        root.join("rounds/1/learner.jsonl"),
        root.join("rounds/01/other.jsonl"),
    )
    .unwrap();
    let report = check_campaign(root, &LoadOptions::default(), &Progress::new());
    assert!(report.campaign.is_none());
    let p = report
        .problems
        .iter()
        .find(|p| p.file == Path::new("rounds/01"))
        .unwrap();
    assert_eq!(
        (p.severity, p.kind),
        (Severity::Error, ProblemKind::Skipped)
    );
    assert!(p.message.contains("rename `01` to `1`"), "{}", p.message);
    // The same rule alone: `rounds/007` is refused even with no `rounds/7` beside it.
    std::fs::remove_dir_all(root.join("rounds/01")).unwrap();
    std::fs::rename(root.join("rounds/1"), root.join("rounds/007")).unwrap();
    let (ok, err) = check(root);
    assert!(
        !ok && err.contains("rounds/007") && err.contains("rename `007` to `7`"),
        "{err}"
    );
}

#[test]
fn every_skipped_file_and_folder_is_warned_about() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let root = dir.path();
    std::fs::write(root.join("rounds/notes.txt"), "x").unwrap();
    std::fs::create_dir(root.join("rounds/old")).unwrap();
    std::fs::write(root.join("rounds/1/readme.md"), "x").unwrap();
    std::fs::write(root.join("rounds/1/.hidden.jsonl"), "x").unwrap();
    std::fs::create_dir(root.join("rounds/1/x.jsonl")).unwrap();
    std::fs::write(root.join("demonstrations/part.actions.npy"), "x").unwrap();
    std::fs::create_dir(root.join("demonstrations/frames")).unwrap();
    let report = check_campaign(root, &LoadOptions::default(), &Progress::new());
    assert!(report.campaign.is_some(), "{:?}", report.problems);
    let mut skipped: Vec<String> = report
        .problems
        .iter()
        .filter(|p| p.kind == ProblemKind::Skipped && p.severity == Severity::Warning)
        .map(|p| p.file.display().to_string())
        .collect();
    skipped.sort();
    assert_eq!(
        skipped,
        [
            "demonstrations/part.actions.npy",
            "rounds/1/.hidden.jsonl",
            "rounds/1/readme.md",
            "rounds/1/x.jsonl",
            "rounds/notes.txt",
            "rounds/old",
        ]
    );
    let (ok, err) = check(root);
    assert!(ok, "{err}");
    assert!(
        err.contains("warning: rounds/1/x.jsonl: skipped: a folder"),
        "{err}"
    );
}

#[test]
fn check_decodes_frames_and_reports_one_that_does_not_decode() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let root = dir.path();
    std::fs::create_dir(root.join("rounds/1/frames")).unwrap();
    std::fs::write(
        root.join("rounds/1/frames/f.png"),
        b"\x89PNG\r\n\x1a\nnot really",
    )
    .unwrap();
    let path = root.join("rounds/1/learner.jsonl");
    let text = std::fs::read_to_string(&path).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut v: serde_json::Value = serde_json::from_str(&lines[2]).unwrap();
    v["frame"] = "frames/f.png".into();
    lines[2] = v.to_string();
    std::fs::write(&path, lines.join("\n") + "\n").unwrap();
    let (ok, err) = check(root);
    assert!(ok, "{err}");
    assert!(
        err.contains(
            "warning: rounds/1/learner.jsonl:3: field `frame`: frame `rounds/1/frames/f.png` does not decode"
        ),
        "{err}"
    );
    // Loads that only read the data (score, the window) do not decode every frame.
    let report = check_campaign(root, &LoadOptions::default(), &Progress::new());
    assert!(
        report
            .problems
            .iter()
            .all(|p| p.kind != ProblemKind::BadFrame)
    );
}
