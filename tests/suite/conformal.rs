//! Conformal p-values and thresholds checked against numpy.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::novelty::Conformal;

#[derive(serde::Deserialize)]
struct Fixture {
    numpy: String,
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    alpha: f64,
    calibration: Vec<f32>,
    scores: Vec<f32>,
    p_values: Vec<f64>,
    threshold: Option<f32>,
}

#[test]
fn p_values_and_thresholds_equal_numpy() {
    // Source: numpy 1.26.4, tests/fixtures/conformal_numpy.py (order statistic taken directly).
    let text = std::fs::read_to_string("tests/fixtures/conformal_numpy.json").unwrap();
    let f: Fixture = serde_json::from_str(&text).unwrap();
    assert_eq!(f.numpy, "1.26.4");
    for c in &f.cases {
        let conf = Conformal::new(c.calibration.clone(), c.alpha);
        for (s, p) in c.scores.iter().zip(&c.p_values) {
            assert!(
                (conf.p_value(*s) - p).abs() < 1e-12,
                "score {s}: {} vs {p}",
                conf.p_value(*s)
            );
            assert_eq!(conf.flagged(*s), *p <= c.alpha);
        }
        assert_eq!(conf.threshold(), c.threshold.unwrap_or(f32::INFINITY));
        // Scores just above the threshold are flagged, the threshold itself is not.
        let t = conf.threshold();
        if t.is_finite() {
            assert!(conf.flagged(t + t.abs() * 1e-6 + 1e-6) && !conf.flagged(t));
        }
    }
}
