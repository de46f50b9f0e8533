//! The `.npz` merged set loads in NumPy itself (`numpy.load`, no pickle) with the expected
//! shapes, dtypes and values. NumPy is the outside reference here; the test skips, saying
//! why, when python3 or numpy is not installed (CI machines have neither).

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use crate::campaign_kit as common;

use std::process::Command;

use countersteer::export::{ExportOptions, Format, export, merge};
use countersteer::progress::Progress;

const SCRIPT: &str = r#"
import json, math, sys
import numpy as np
d = np.load(sys.argv[1], allow_pickle=False)
out = {k: {"dtype": d[k].dtype.str, "shape": list(d[k].shape)} for k in d.files}
for k in d.files:
    v = d[k].tolist()
    if d[k].dtype.kind == "f":
        v = np.where(np.isnan(d[k]), None, d[k].astype(float)).tolist()
    out[k]["values"] = v
print(json.dumps(out))
"#;

fn numpy_available() -> Result<(), String> {
    match Command::new("python3")
        .args(["-c", "import numpy"])
        .output()
    {
        Err(e) => Err(format!("python3 cannot be started ({e})")),
        Ok(o) if !o.status.success() => Err("python3 has no numpy".into()),
        Ok(_) => Ok(()),
    }
}

#[test]
fn npz_export_loads_in_numpy_with_expected_shapes_dtypes_and_values() {
    if let Err(why) = numpy_available() {
        println!("skipped: {why}; the Rust round-trip in tests/export.rs still runs");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let c = common::write_campaign(dir.path(), 6);
    let tally = common::two_annotators(&c);
    let opts = ExportOptions::new(Format::Npz);
    let out = dir.path().join("exports/merged.npz");
    export(&c, &tally, &opts, &out, &Progress::new()).unwrap();
    let expected = merge(&c, &tally, &opts).0;
    let o = Command::new("python3")
        .args(["-c", SCRIPT, out.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let n = expected.len() as u64;
    assert_eq!(n, 12 + 6);
    let meta = |k: &str| {
        (
            v[k]["dtype"].as_str().unwrap().to_string(),
            v[k]["shape"].clone(),
        )
    };
    let shape = |s: &[u64]| serde_json::json!(s);
    assert_eq!(meta("states"), ("<f4".into(), shape(&[n, 3])));
    assert_eq!(meta("actions"), ("<f4".into(), shape(&[n, 2])));
    assert_eq!(meta("source"), ("<U13".into(), shape(&[n])));
    assert_eq!(meta("episode"), ("<U7".into(), shape(&[n])));
    assert_eq!(meta("round"), ("<i8".into(), shape(&[n])));
    assert_eq!(meta("t"), ("<i8".into(), shape(&[n])));
    assert_eq!(meta("weight"), ("<f4".into(), shape(&[n])));
    assert_eq!(meta("annotators"), ("<i8".into(), shape(&[n])));
    assert_eq!(meta("agreement"), ("<f4".into(), shape(&[n])));
    assert_eq!(
        v["state_names"]["values"],
        serde_json::json!(["x", "y", "heading"])
    );
    assert_eq!(
        v["action_names"]["values"],
        serde_json::json!(["steer", "speed"])
    );
    // Values: NumPy's float32 widened to float64 must equal ours exactly.
    let flat = |k: &str| -> Vec<Option<f64>> {
        let rows = v[k]["values"].as_array().unwrap();
        rows.iter()
            .flat_map(|r| match r.as_array() {
                Some(a) => a.iter().map(|x| x.as_f64()).collect::<Vec<_>>(),
                None => vec![r.as_f64()],
            })
            .collect()
    };
    let widen = |x: &[f32]| x.iter().map(|&x| Some(f64::from(x))).collect::<Vec<_>>();
    assert_eq!(flat("states"), widen(&expected.states));
    assert_eq!(flat("actions"), widen(&expected.actions));
    assert_eq!(flat("weight"), widen(&expected.weight));
    let agreement: Vec<Option<f64>> = expected
        .agreement
        .iter()
        .map(|a| a.map(f64::from))
        .collect();
    assert_eq!(flat("agreement"), agreement);
    let rounds: Vec<i64> = expected
        .round
        .iter()
        .map(|r| r.map_or(-1, i64::from))
        .collect();
    assert_eq!(v["round"]["values"], serde_json::json!(rounds));
    assert_eq!(v["t"]["values"], serde_json::json!(expected.t));
    assert_eq!(v["episode"]["values"], serde_json::json!(expected.episode));
    let sources: Vec<&str> = expected.source.iter().map(|s| s.name()).collect();
    assert_eq!(v["source"]["values"], serde_json::json!(sources));
    assert_eq!(
        v["annotators"]["values"],
        serde_json::json!(expected.annotators)
    );
    // Spot values from the scenario: round 1 lane-00 t 4 is row 12 + 4.
    assert_eq!(v["agreement"]["values"][16], serde_json::json!(0.5));
    assert_eq!(v["actions"]["values"][16][1], serde_json::json!(0.0));
}
