//! Every subcommand whose reader goes away early (`countersteer plan … | head -c 10`) ends
//! quietly with exit 0, and its files are written all the same.

use std::io::Read;
use std::process::{Command, Stdio};

use super::cli_score_plan::make_campaign;

/// Runs the program with its standard output a pipe whose reading end is closed at once
/// (before the program can print: so every write fails, whatever the timing); returns the
/// exit code and standard error.
fn run_cut(args: &[&str]) -> (Option<i32>, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let mut err = String::new();
    child
        .stderr
        .take()
        .unwrap()
        .read_to_string(&mut err)
        .unwrap();
    (child.wait().unwrap().code(), err)
}

#[test]
fn broken_pipes_end_every_command_quietly_after_its_files_are_written() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    let out = dir.path().join("merged.jsonl");
    let out = out.to_str().unwrap();
    for args in [
        vec!["check", d],
        vec!["score", d, "--round", "1"],
        vec!["plan", d, "--round", "1", "--rescore"],
        vec!["plan", d, "--round", "1"],
        vec!["tally", d],
        vec!["export", d, "--out", out],
    ] {
        let (code, err) = run_cut(&args);
        assert_eq!(code, Some(0), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
    assert!(dir.path().join("analysis/1/scores.npz").is_file());
    assert!(dir.path().join("analysis/1/review-list.jsonl").is_file());
    assert!(dir.path().join("merged.jsonl").is_file());
}
