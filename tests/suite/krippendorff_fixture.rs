//! Krippendorff's alpha against the PyPI `krippendorff` package: the committed fixture
//! `tests/fixtures/krippendorff/alpha_fixture.json` was made by `make_fixture.py` beside it
//! (package and numpy versions are recorded in the fixture's `source`).

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::consensus::{Metric, krippendorff_alpha};

#[test]
fn alpha_matches_the_krippendorff_package_on_the_committed_fixture() {
    let text = include_str!("../fixtures/krippendorff/alpha_fixture.json");
    let fixture: serde_json::Value = serde_json::from_str(text).unwrap();
    assert!(
        fixture["source"]
            .as_str()
            .unwrap()
            .starts_with("PyPI krippendorff")
    );
    let cases = fixture["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 2);
    for case in cases {
        let metric = match case["metric"].as_str().unwrap() {
            "interval" => Metric::Interval,
            "nominal" => Metric::Nominal,
            m => panic!("unknown metric {m}"),
        };
        // Rows are annotators, columns are units; null is missing.
        let rows: Vec<Vec<Option<f64>>> = serde_json::from_value(case["data"].clone()).unwrap();
        let units: Vec<Vec<f64>> = (0..rows[0].len())
            .map(|u| rows.iter().filter_map(|r| r[u]).collect())
            .collect();
        let expected = case["alpha"].as_f64().unwrap();
        let got = krippendorff_alpha(&units, metric).unwrap();
        assert!(
            (got - expected).abs() < 1e-9,
            "{metric:?}: got {got}, krippendorff package {expected}"
        );
    }
}
