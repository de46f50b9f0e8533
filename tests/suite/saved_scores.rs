//! Saved scores are reused only when the campaign's novelty model and the round's data are
//! what they were made from and the file is intact; alpha below what the calibration can
//! resolve is refused; demonstrations without spread are warned about.

use std::path::Path;
use std::process::Command;

use countersteer::campaign::{Campaign, LoadOptions, load_campaign};
use countersteer::novelty::store::{
    NotReusable, ScoresKey, load_scores, reusable_scores, save_scores, scores_path,
};
use countersteer::novelty::{NoveltyError, build_model, score_round};
use countersteer::progress::Progress;

use super::cli_score_plan::make_campaign;

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

fn load(root: &Path) -> Campaign {
    load_campaign(root, &LoadOptions::default(), &Progress::new()).unwrap()
}

/// Rewrites every JSON line of a data file through `edit`.
fn edit_lines(path: &Path, edit: impl Fn(usize, &mut serde_json::Value)) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut out = String::new();
    for (i, line) in text.lines().enumerate() {
        let mut v: serde_json::Value = serde_json::from_str(line).unwrap();
        edit(i, &mut v);
        out.push_str(&v.to_string());
        out.push('\n');
    }
    std::fs::write(path, out).unwrap();
}

fn set_alpha(root: &Path, alpha: f64) {
    let path = root.join("campaign.json");
    let mut v: serde_json::Value = serde_json::from_slice(&std::fs::read(&path).unwrap()).unwrap();
    v["novelty"]["alpha"] = alpha.into();
    std::fs::write(&path, v.to_string()).unwrap();
}

#[test]
fn plan_scores_again_when_the_round_data_changed() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    assert!(run(&["score", d, "--round", "1"]).0);
    edit_lines(&dir.path().join("rounds/1/learner.jsonl"), |i, v| {
        if i == 3 {
            v["state"][0] = (v["state"][0].as_f64().unwrap() + 4.0).into();
        }
    });
    let (ok, _, err) = run(&["plan", d, "--round", "1", "--budget", "5"]);
    assert!(ok, "{err}");
    assert!(!err.contains("using saved scores"), "{err}");
    assert!(
        err.contains("the round's data changed since it was scored; scoring again"),
        "{err}"
    );
    // Scored again and saved: the next plan reuses the new file.
    let (ok, _, err) = run(&["plan", d, "--round", "1", "--budget", "5"]);
    assert!(ok && err.contains("using saved scores"), "{err}");
}

/// Overwrites the first `n` data bytes of the named array's member (stored, uncompressed).
fn damage_member(npz: &Path, array: &str, n: usize) {
    let mut bytes = std::fs::read(npz).unwrap();
    let name = format!("{array}.npy");
    let at = bytes
        .windows(name.len())
        .position(|w| w == name.as_bytes())
        .unwrap();
    let magic = at
        + bytes[at..]
            .windows(6)
            .position(|w| w == b"\x93NUMPY")
            .unwrap();
    let header_len = u16::from_le_bytes([bytes[magic + 8], bytes[magic + 9]]) as usize;
    let data = magic + 10 + header_len;
    bytes[data..data + n].iter_mut().for_each(|b| *b = 0);
    std::fs::write(npz, bytes).unwrap();
}

#[test]
fn a_damaged_scores_file_is_scored_again_never_read_as_zeros() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    assert!(run(&["score", d, "--round", "1"]).0);
    let path = scores_path(dir.path(), 1);
    damage_member(&path, "novelty", 64);
    let c = load(dir.path());
    let steps = &c.round(1).unwrap().steps;
    let err = load_scores(dir.path(), 1, steps).unwrap_err().to_string();
    assert!(
        err.contains("novelty.npy") && err.contains("damaged"),
        "{err}"
    );
    assert!(matches!(
        reusable_scores(&c, 1, steps),
        Err(NotReusable::Unreadable(_))
    ));
    let (ok, out, err) = run(&["plan", d, "--round", "1", "--budget", "5"]);
    assert!(ok, "{err}");
    assert!(
        err.contains("saved scores not used") && err.contains("scoring again"),
        "{err}"
    );
    assert!(!out.contains(" 0.000 "), "{out}");
}

#[test]
fn the_reuse_rule_compares_both_fingerprints() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let mut c = load(dir.path());
    let steps = c.round(1).unwrap().steps.clone();
    let model = build_model(&c, &Progress::new()).unwrap();
    let scores = score_round(&model, &c, &steps, &Progress::new()).unwrap();
    save_scores(dir.path(), 1, &steps, &scores, &ScoresKey::of(&c, &steps)).unwrap();
    assert_eq!(
        reusable_scores(&c, 1, &steps).unwrap().novelty,
        scores.novelty
    );
    // Another alpha (a settings change) and other demonstrations: the model changed.
    c.file.novelty.alpha = 0.1;
    assert!(matches!(
        reusable_scores(&c, 1, &steps),
        Err(NotReusable::ModelChanged)
    ));
    c.file.novelty.alpha = scores.alpha;
    let first = c.demonstrations.states[0];
    c.demonstrations.states[0] += 1.0;
    assert!(matches!(
        reusable_scores(&c, 1, &steps),
        Err(NotReusable::ModelChanged)
    ));
    c.demonstrations.states[0] = first;
    // The same step count, one value changed: the data changed.
    let mut changed = steps.clone();
    changed.actions[0] += 0.5;
    assert!(matches!(
        reusable_scores(&c, 1, &changed),
        Err(NotReusable::DataChanged)
    ));
    assert!(reusable_scores(&c, 1, &steps).is_ok());
}

#[test]
fn alpha_below_the_p_value_floor_is_refused_naming_the_smallest_alpha() {
    // 30 demonstration episodes of 100 steps, every one calibrating (cross-conformal folds):
    // 3,000 calibration states, so the smallest p-value is 1/3001 = 0.00033322 (by hand),
    // shown rounded up as 0.0003333.
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    set_alpha(dir.path(), 0.0002);
    let d = dir.path().to_str().unwrap();
    for args in [
        vec!["check", d],
        vec!["score", d, "--round", "1"],
        vec!["plan", d, "--round", "1"],
    ] {
        let (ok, _, err) = run(&args);
        assert!(!ok, "{args:?}");
        assert!(
            err.contains("alpha = 0.0002 is below what 3000 calibration state(s) can resolve")
                && err.contains("the smallest reachable alpha is 0.0003333"),
            "{args:?}: {err}"
        );
    }
    let c = load(dir.path());
    match build_model(&c, &Progress::new()) {
        Err(NoveltyError::AlphaBelowFloor { n, smallest, .. }) => {
            assert_eq!((n, smallest.as_str()), (3000, "0.0003333"));
        }
        other => panic!("{other:?}"),
    }
    set_alpha(dir.path(), 0.001664);
    assert!(run(&["check", d]).0);
}

#[test]
fn demonstrations_without_spread_are_warned_about() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    edit_lines(&dir.path().join("demonstrations/expert.jsonl"), |_, v| {
        let n = v["state"].as_array().unwrap().len();
        v["state"] = serde_json::Value::from(vec![0.5; n]);
    });
    let d = dir.path().to_str().unwrap();
    let (ok, _, err) = run(&["check", d]);
    assert!(ok, "{err}");
    assert!(
        err.contains("every demonstration state is the same"),
        "{err}"
    );
    let (ok, out, err) = run(&["score", d, "--round", "1"]);
    assert!(ok, "{err}");
    assert!(err.contains("the demonstrations show no spread"), "{err}");
    assert!(out.contains("steps: 600, flagged: 600 (100.0%)"), "{out}");
}

#[test]
fn a_full_disk_during_score_is_a_clear_message() {
    if Command::new("prlimit").arg("--version").output().is_err() {
        println!("prlimit (util-linux) is not installed: the disk-full test cannot run");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    // A file size limit of 20 kB (SIGXFSZ ignored, so the write fails with EFBIG) cuts the
    // scores file in the middle, as a full disk would.
    let out = Command::new("sh")
        .args([
            "-c",
            "trap '' XFSZ; exec prlimit --fsize=20000 \"$@\"",
            "sh",
        ])
        .arg(env!("CARGO_BIN_EXE_countersteer"))
        .args(["score", dir.path().to_str().unwrap(), "--round", "1"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{err}");
    assert!(!err.contains("ZipWriter"), "{err}");
    assert!(
        err.contains("scores.npz: not saved: the disk is full (or a file size limit was reached)"),
        "{err}"
    );
    assert!(!scores_path(dir.path(), 1).exists());
}
