//! `--json` on `check`, `score`, `plan` and `tally`: one object on standard output, parsed
//! here, with its values checked against the files the commands write and the fixtures'
//! known counts.

use std::path::Path;
use std::process::Command;

use serde_json::Value;

use crate::cli_score_plan::make_campaign;
use crate::common::rover;

/// Runs the program; returns the exit code, the one JSON object on stdout, and stderr.
fn run_json(args: &[&str]) -> (i32, Value, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout).into_owned();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert_eq!(
        stdout.lines().count(),
        1,
        "one line on stdout: {stdout}\n{stderr}"
    );
    let v: Value = serde_json::from_str(&stdout).unwrap();
    (out.status.code().unwrap(), v, stderr)
}

fn path(p: &Path) -> &str {
    p.to_str().unwrap()
}

#[test]
fn check_json_counts_the_fixture_tables() {
    let dir = tempfile::tempdir().unwrap();
    rover::write_campaign(dir.path());
    let (code, v, err) = run_json(&["check", path(dir.path()), "--json"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(v["ok"], true);
    assert_eq!(v["exit_code"], 0);
    assert_eq!(v["campaign"], "orchard lane fixture");
    assert_eq!(v["state_features"], 4);
    assert_eq!(v["action_channels"], 2);
    let tables = v["tables"].as_array().unwrap();
    assert_eq!(tables.len(), 2);
    // The fixture: 3 demonstration episodes and 3 round episodes of 60 steps each.
    assert_eq!(tables[0]["label"], "demonstrations");
    assert_eq!(tables[0]["episodes"], 3);
    assert_eq!(tables[0]["steps"], 180);
    assert_eq!(tables[1]["episodes"], 3);
    assert_eq!(tables[1]["steps"], 180);
    // `r1-b` hands over to the expert at step 50 of 60: 10 intervention steps.
    assert_eq!(tables[1]["interventions"], 10);
    let names: Vec<&str> = tables[0]["features"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["x", "y", "heading", "speed"]);
    assert_eq!(v["problems"].as_array().unwrap().len(), 0);
}

#[test]
fn check_json_lists_each_problem_with_file_line_and_exit_1() {
    let dir = tempfile::tempdir().unwrap();
    rover::write_bad_campaign(dir.path());
    let (code, v, _) = run_json(&["check", path(dir.path()), "--json"]);
    assert_eq!(code, 1);
    assert_eq!(v["ok"], false);
    assert_eq!(v["exit_code"], 1);
    assert_eq!(v["errors"], 1);
    let p = &v["problems"][0];
    assert_eq!(p["severity"], "error");
    assert_eq!(p["line"], 3);
    assert!(p["record"].is_null());
    assert!(
        p["file"].as_str().unwrap().ends_with("learner.jsonl"),
        "{p}"
    );
}

#[test]
fn score_and_plan_json_agree_with_the_files_they_write() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let d = path(dir.path());
    let (code, s, err) = run_json(&["score", d, "--round", "1", "--json"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(s["ok"], true);
    assert_eq!(s["round"], 1);
    // 6 learner episodes of 100 steps; k and alpha as the campaign file sets them.
    assert_eq!(s["steps"], 600);
    assert_eq!(s["episodes"], 6);
    assert_eq!(s["k"], 5);
    assert!((s["alpha"].as_f64().unwrap() - 0.05).abs() < 1e-6, "{s}");
    let flagged = s["flagged"].as_u64().unwrap();
    assert!(flagged > 0 && flagged < 600, "{s}");
    assert!(Path::new(s["scores_file"].as_str().unwrap()).is_file());
    let worst = s["worst_episodes"].as_array().unwrap();
    assert!(!worst.is_empty() && worst.len() <= 5);
    let mut last = u64::MAX;
    for w in worst {
        let f = w["flagged"].as_u64().unwrap();
        assert!(f <= last, "sorted by flagged steps: {s}");
        last = f;
    }

    let (code, p, err) = run_json(&["plan", d, "--round", "1", "--budget", "7", "--json"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(p["ok"], true);
    let entries = p["entries"].as_array().unwrap();
    assert!(!entries.is_empty() && entries.len() <= 7, "{p}");
    let file = std::fs::read_to_string(p["review_list_file"].as_str().unwrap()).unwrap();
    let saved: Vec<Value> = file
        .lines()
        .filter_map(|l| serde_json::from_str(l).ok())
        .filter(|l: &Value| l.get("t").is_some())
        .collect();
    assert_eq!(saved.len(), entries.len(), "{file}");
    for (e, f) in entries.iter().zip(&saved) {
        assert_eq!(e["t"], f["t"]);
        assert_eq!(e["episode"], f["episode"]);
    }
}

#[test]
fn a_failed_json_run_prints_its_error_and_exit_code() {
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let (code, v, _) = run_json(&["plan", path(dir.path()), "--round", "9", "--json"]);
    assert_eq!(code, 2);
    assert_eq!(v["ok"], false);
    assert_eq!(v["exit_code"], 2);
    assert!(v["error"].as_str().unwrap().contains("round 9"), "{v}");
}

#[test]
fn tally_json_counts_verdicts_per_round_and_annotator() {
    let dir = tempfile::tempdir().unwrap();
    rover::write_campaign(dir.path());
    let d = path(dir.path());
    for (who, verdict) in [
        ("ann", ["--action", "0.2,slow"]),
        ("bo", ["--action", "0.2,slow"]),
    ] {
        let o = Command::new(env!("CARGO_BIN_EXE_countersteer"))
            .args(["correct", d, "--annotator", who, "--round", "1"])
            .args(["--episode", "r1-b", "--t", "40"])
            .args(verdict)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let o = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(["correct", d, "--annotator", "ann", "--round", "1"])
        .args(["--episode", "r1-c", "--t", "5", "--skip"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let (code, v, err) = run_json(&["tally", d, "--steps", "--json"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(v["ok"], true);
    let ledgers = v["ledgers"].as_array().unwrap();
    assert_eq!(ledgers.len(), 2);
    let r = &v["rounds"][0];
    assert_eq!(r["round"], 1);
    assert_eq!(r["steps"], 180);
    assert_eq!(r["judged"], 2);
    assert_eq!(r["with_action"], 1);
    assert_eq!(r["multi"], 1);
    assert_eq!(r["action_votes"], 2);
    assert_eq!(r["skip_votes"], 1);
    let steps = v["steps"].as_array().unwrap();
    let b = steps.iter().find(|s| s["episode"] == "r1-b").unwrap();
    assert_eq!(b["t"], 40);
    assert_eq!(b["votes"].as_array().unwrap().len(), 2);
    assert!(b["consensus"].as_str().unwrap().ends_with("slow"), "{b}");
    assert_eq!(v["agreement"].as_array().unwrap().len(), 2);
    assert_eq!(v["agreement"][0]["channel"], "steer");
}
