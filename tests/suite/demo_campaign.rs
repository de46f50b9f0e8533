//! `write_demo_campaign` / `countersteer demo`: the written folder loads without a problem,
//! carries every part of the format, is byte-identical for a seed, and a non-empty folder
//! is refused.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use std::collections::BTreeMap;
use std::path::Path;
use std::process::Command;

use countersteer::campaign::{LoadOptions, check_campaign, load_campaign};
use countersteer::progress::Progress;
use countersteer::sim::{DemoConfig, DemoError, write_demo_campaign};

/// Short episodes and small frames keep the debug-build tests quick.
fn small(seed: u64) -> DemoConfig {
    let mut cfg = DemoConfig {
        seed,
        episodes: 3,
        demo_episodes: 3,
        frame_width: 24,
        ..DemoConfig::default()
    };
    cfg.rollout.max_steps = 60;
    cfg
}

fn files(root: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for e in std::fs::read_dir(&dir).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                let rel = p.strip_prefix(root).unwrap().display().to_string();
                out.insert(rel, std::fs::read(&p).unwrap());
            }
        }
    }
    out
}

#[test]
fn written_demo_loads_cleanly_with_every_part_of_the_format() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("demo");
    let mut cfg = small(4);
    cfg.episodes = 6;
    cfg.demo_episodes = 5;
    cfg.rollout.max_steps = 300; // long enough for the learner to need the expert
    let summary = write_demo_campaign(&dir, &cfg, &Progress::new()).unwrap();
    let strict = LoadOptions {
        strict: true,
        ..LoadOptions::default()
    };
    let report = check_campaign(&dir, &strict, &Progress::new());
    assert!(report.problems.is_empty(), "{:?}", report.problems);
    let c = load_campaign(&dir, &strict, &Progress::new()).unwrap();
    assert_eq!(c.spec().state_dim(), 7);
    assert_eq!(c.file.step_seconds, Some(0.1));
    assert_eq!(c.demonstrations.episodes.len(), 5);
    assert_eq!(c.round(1).unwrap().steps.episodes.len(), 6);
    assert_eq!(c.rounds.len(), 2);
    let r1 = &c.round(1).unwrap().steps;
    assert_eq!(r1.samples(0).map(|s| s.count()), Some(5));
    assert!(r1.frame(0).unwrap().starts_with("rounds/1/frames/"));
    let r2 = &c.round(2).unwrap().steps;
    assert_eq!(r2.sources.len(), 2, "round 2 is split over CSV and .npz");
    assert!(r2.interventions.iter().any(|&f| f));
    let steps: usize = summary.sets.iter().map(|s| s.steps).sum();
    assert_eq!(
        steps,
        c.demonstrations.len() + r1.len() + r2.len(),
        "every simulated step is in the files"
    );
    assert_eq!(summary.frames, r1.frames.len() + r2.frames.len());
}

#[test]
fn same_seed_gives_byte_identical_files_and_another_seed_does_not() {
    let tmp = tempfile::tempdir().unwrap();
    let (a, b, c) = (
        tmp.path().join("a"),
        tmp.path().join("b"),
        tmp.path().join("c"),
    );
    write_demo_campaign(&a, &small(9), &Progress::new()).unwrap();
    write_demo_campaign(&b, &small(9), &Progress::new()).unwrap();
    write_demo_campaign(&c, &small(10), &Progress::new()).unwrap();
    let (fa, fb, fc) = (files(&a), files(&b), files(&c));
    assert!(fa.len() > 10);
    assert_eq!(fa, fb);
    assert_ne!(
        fa["demonstrations/expert.jsonl"],
        fc["demonstrations/expert.jsonl"]
    );
}

#[test]
fn a_non_empty_folder_is_refused_and_left_alone() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(tmp.path().join("notes.txt"), "keep me").unwrap();
    let err = write_demo_campaign(tmp.path(), &small(1), &Progress::new()).unwrap_err();
    assert!(matches!(err, DemoError::NotEmpty(_)));
    assert!(err.to_string().contains("is not empty"), "{err}");
    assert_eq!(files(tmp.path()).len(), 1);
}

#[test]
fn demo_subcommand_writes_a_campaign_and_refuses_to_overwrite() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("cli");
    let run = |args: &[&str]| {
        Command::new(env!("CARGO_BIN_EXE_countersteer"))
            .args(args)
            .output()
            .unwrap()
    };
    let d = dir.to_str().unwrap();
    let out = run(&[
        "demo",
        d,
        "--seed",
        "3",
        "--episodes",
        "2",
        "--frame-episodes",
        "0",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(String::from_utf8_lossy(&out.stdout).contains("left the lane"));
    assert!(run(&["check", d]).status.success());
    let again = run(&["demo", d]);
    assert_eq!(again.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&again.stderr).contains("is not empty"));
}
