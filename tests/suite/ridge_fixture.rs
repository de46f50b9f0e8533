//! Ridge regression against numpy: `tests/fixtures/ridge/ridge_fixture.json` was written by
//! `tests/fixtures/ridge/make_ridge_fixture.py` (numpy.linalg.lstsq on the augmented system;
//! the numpy version is recorded in the file).

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::sim::ridge::Ridge;
use serde_json::Value;

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

#[test]
fn ridge_matches_numpy_lstsq_on_the_augmented_system() {
    let text = include_str!("../fixtures/ridge/ridge_fixture.json");
    let fixture: Value = serde_json::from_str(text).unwrap();
    let cases = fixture["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 3);
    for case in cases {
        let d = case["inputs"].as_u64().unwrap() as usize;
        let m = case["outputs"].as_u64().unwrap() as usize;
        let w = (!case["weights"].is_null()).then(|| floats(&case["weights"]));
        let fit = Ridge::fit(
            &floats(&case["x"]),
            d,
            &floats(&case["y"]),
            m,
            w.as_deref(),
            case["lambda"].as_f64().unwrap(),
        )
        .unwrap();
        for (got, want) in fit.coef.iter().zip(floats(&case["coef"])) {
            assert!((got - want).abs() < 1e-9, "coef {got} vs numpy {want}");
        }
        for (got, want) in fit.intercept.iter().zip(floats(&case["intercept"])) {
            assert!((got - want).abs() < 1e-9, "intercept {got} vs numpy {want}");
        }
    }
}
