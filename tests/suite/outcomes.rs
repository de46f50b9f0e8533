//! Outcome fields (per-step `reward` and `cost`, per-episode `outcome`) read the same from
//! JSON Lines, CSV and NumPy, and the window before a failure enters the review list.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use std::path::Path;

use countersteer::campaign::npz::NpzWriter;
use countersteer::campaign::{Outcome, StepTable};

use crate::campaign_kit::{load, write_campaign};

/// Two episodes: `a` (3 steps, rewards 1, 0.5 and none, outcome `landed` on its last step)
/// and `b` (2 steps, rewards 0.25 and 0.75, cost 0.2 on both, outcome `tipped`).
const JSONL: &str = r#"{"episode": "a", "t": 0, "state": [0, 0, 0], "action": [0, "slow"], "reward": 1}
{"episode": "a", "t": 1, "state": [0.5, 0, 0], "action": [0, "slow"], "reward": 0.5}
{"episode": "b", "t": 0, "state": [0, 1, 0], "action": [0.1, "slow"], "reward": 0.25, "cost": 0.2}
{"episode": "a", "t": 2, "state": [1, 0, 0], "action": [0, "slow"], "outcome": "landed"}
{"episode": "b", "t": 1, "state": [0.5, 1, 0], "action": [0.1, "slow"], "reward": 0.75, "cost": 0.2, "outcome": "tipped"}
"#;

const CSV: &str = "episode,t,x,y,heading,steer,speed,reward,cost,outcome
a,0,0,0,0,0,slow,1,,
a,1,0.5,0,0,0,slow,0.5,,
b,0,0,1,0,0.1,slow,0.25,0.2,
a,2,1,0,0,0,slow,,,landed
b,1,0.5,1,0,0.1,slow,0.75,0.2,tipped
";

fn write_npz(path: &Path) {
    let f = std::fs::File::create(path).unwrap();
    let mut z = NpzWriter::new(std::io::BufWriter::new(f));
    let states = [
        0.0f32, 0., 0., 0.5, 0., 0., 0., 1., 0., 1., 0., 0., 0.5, 1., 0.,
    ];
    let actions = [0.0f32, 1., 0., 1., 0.1, 1., 0., 1., 0.1, 1.];
    z.numbers("states", &[5, 3], states).unwrap();
    z.numbers("actions", &[5, 2], actions).unwrap();
    z.strings("episode", ["a", "a", "b", "a", "b"].into_iter())
        .unwrap();
    z.numbers("t", &[5], [0i64, 1, 0, 2, 1]).unwrap();
    let nan = f64::NAN;
    z.numbers("reward", &[5], [1.0, 0.5, 0.25, nan, 0.75])
        .unwrap();
    z.numbers("cost", &[5], [nan, nan, 0.2, nan, 0.2]).unwrap();
    z.strings("outcome", ["", "", "", "landed", "tipped"].into_iter())
        .unwrap();
    z.finish().unwrap();
}

fn declare_outcomes(root: &Path) {
    let path = root.join("campaign.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    v["spec"]["outcomes"] =
        serde_json::json!([{"name": "landed"}, {"name": "tipped", "failure": true}]);
    std::fs::write(&path, v.to_string()).unwrap();
}

fn check(t: &StepTable, format: &str) {
    // Episodes regroup in order of first appearance: a (rows 0..3), b (rows 3..5).
    let names: Vec<&str> = t.episodes.iter().map(|e| e.name.as_str()).collect();
    assert_eq!(names, ["a", "b"], "{format}");
    let rewards: Vec<Option<f32>> = (0..5).map(|r| t.reward(r)).collect();
    assert_eq!(
        rewards,
        [Some(1.0), Some(0.5), None, Some(0.25), Some(0.75)],
        "{format}"
    );
    let costs: Vec<Option<f32>> = (0..5).map(|r| t.cost(r)).collect();
    assert_eq!(costs, [None, None, None, Some(0.2), Some(0.2)], "{format}");
    assert_eq!((t.outcome(0), t.outcome(1)), (Some(0), Some(1)), "{format}");
}

#[test]
fn outcome_fields_read_the_same_from_json_lines_csv_and_numpy() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    write_campaign(root, 40);
    declare_outcomes(root);
    for (round, file) in [(3, "r.jsonl"), (4, "r.csv"), (5, "r.npz")] {
        let d = root.join(format!("rounds/{round}"));
        std::fs::create_dir_all(&d).unwrap();
        match round {
            3 => std::fs::write(d.join(file), JSONL).unwrap(),
            4 => std::fs::write(d.join(file), CSV).unwrap(),
            _ => write_npz(&d.join(file)),
        }
    }
    let c = load(root);
    assert_eq!(c.spec().outcome_list()[1].name, "tipped");
    assert!(c.spec().is_failure(1) && !c.spec().is_failure(0));
    for (round, format) in [(3, "JSON Lines"), (4, "CSV"), (5, "NumPy")] {
        check(&c.round(round).unwrap().steps, format);
    }
    // Rounds without outcome fields carry none.
    let r1 = &c.round(1).unwrap().steps;
    assert!(r1.rewards.is_empty() && r1.costs.is_empty() && r1.outcomes.is_empty());
}

#[test]
fn a_spec_without_outcomes_knows_success_and_failure() {
    assert_eq!(
        Outcome::defaults()
            .iter()
            .map(|o| (o.name.as_str(), o.failure))
            .collect::<Vec<_>>(),
        [("success", false), ("failure", true)]
    );
}

#[test]
fn the_window_before_a_failure_enters_the_review_list_within_its_share() {
    use countersteer::novelty::{build_model, score_round};
    use countersteer::progress::Progress;
    use countersteer::review::{PlanSettings, Reason, plan};
    let dir = tempfile::tempdir().unwrap();
    let c = write_campaign(dir.path(), 40);
    let mut steps = c.round(1).unwrap().steps.clone();
    // Episode 1 of 3 (rows 30..60) ended in a failure (outcome 1 of the default list).
    steps.outcomes = vec![Some(0), Some(1), None];
    let p = Progress::new();
    let scores = score_round(&build_model(&c, &p).unwrap(), &c, &steps, &p).unwrap();
    let settings = PlanSettings {
        budget: 8,
        min_gap: 1,
        failures: vec![1],
        before_failure: 10,
        ..Default::default()
    };
    let list = plan(&steps, &scores, &[], &settings);
    let failed: Vec<usize> = list
        .entries
        .iter()
        .filter(|e| e.reasons.contains(&Reason::BeforeFailure))
        .map(|e| e.row)
        .collect();
    // At most ceil(0.25 * 8) = 2 candidates, from rows 50..60 (the window of episode 1).
    assert!(!failed.is_empty() && failed.len() <= 2, "{failed:?}");
    assert!(failed.iter().all(|r| (50..60).contains(r)), "{failed:?}");
    let none = plan(
        &steps,
        &scores,
        &[],
        &PlanSettings {
            failures: Vec::new(),
            ..settings
        },
    );
    assert!(
        none.entries
            .iter()
            .all(|e| !e.reasons.contains(&Reason::BeforeFailure))
    );
}

#[test]
fn written_outcome_fields_read_back_in_every_format() {
    use countersteer::campaign::write::{write_csv, write_jsonl, write_npz_with_outcomes};
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    write_campaign(root, 40);
    declare_outcomes(root);
    std::fs::create_dir_all(root.join("rounds/3")).unwrap();
    std::fs::write(root.join("rounds/3/r.jsonl"), JSONL).unwrap();
    let c = load(root);
    let t = c.round(3).unwrap().steps.clone();
    let spec = c.spec().clone();
    for (round, file) in [(6, "w.jsonl"), (7, "w.csv"), (8, "w.npz")] {
        let d = root.join(format!("rounds/{round}"));
        std::fs::create_dir_all(&d).unwrap();
        let f = std::io::BufWriter::new(std::fs::File::create(d.join(file)).unwrap());
        let rel = format!("rounds/{round}");
        match round {
            6 => write_jsonl(&t, &spec, &rel, f).unwrap(),
            7 => write_csv(&t, &spec, &rel, f).unwrap(),
            _ => write_npz_with_outcomes(&t, Some(&spec), f).unwrap(),
        }
    }
    let c = load(root);
    for (round, format) in [(6, "JSON Lines"), (7, "CSV"), (8, "NumPy")] {
        check(&c.round(round).unwrap().steps, format);
    }
}
