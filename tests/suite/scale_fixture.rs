//! Per-feature novelty scales: the estimators checked against scipy, and the fallback chain on
//! features whose median absolute deviation is zero.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::campaign::{ActionChannel, ChannelKind, Feature, FeatureKind, Spec, StepTable};
use countersteer::novelty::scale::{
    IQR_OF_NORMAL, MAD_TO_SD, ScaleOrigin, estimated_scale, iqr, mad_normal, scales_with_origin,
    std_dev,
};

#[derive(serde::Deserialize)]
struct Fixture {
    numpy: String,
    scipy: String,
    mad_to_sd: f64,
    iqr_of_normal: f64,
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    name: String,
    values: Vec<f64>,
    mad_normal: f64,
    iqr: f64,
    std: f64,
}

fn fixture() -> Fixture {
    let text = std::fs::read_to_string("tests/fixtures/scale_scipy.json").unwrap();
    serde_json::from_str(&text).unwrap()
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * (1.0 + b.abs())
}

#[test]
fn mad_iqr_and_standard_deviation_equal_scipy() {
    // Source: scipy 1.17.1 / numpy 2.4.6, tests/fixtures/scale_scipy.py:
    // stats.median_abs_deviation(x, scale='normal'), stats.iqr(x), np.std(x).
    let f = fixture();
    assert_eq!((f.numpy.as_str(), f.scipy.as_str()), ("2.4.6", "1.17.1"));
    for c in &f.cases {
        assert!(close(mad_normal(&c.values), c.mad_normal), "{} MAD", c.name);
        assert!(close(iqr(&c.values), c.iqr), "{} IQR", c.name);
        assert!(close(std_dev(&c.values), c.std), "{} sd", c.name);
    }
}

#[test]
fn normal_consistency_constants_equal_scipy() {
    // 1 / Phi^-1(3/4) and 2 Phi^-1(3/4) from scipy.stats.norm (same fixture); 1.349 is the
    // usual rounding of the latter (common practice).
    let f = fixture();
    assert!((MAD_TO_SD - f.mad_to_sd).abs() < 1e-15);
    assert!((IQR_OF_NORMAL - f.iqr_of_normal).abs() < 1e-4);
}

#[test]
fn the_chain_takes_the_first_estimate_that_does_not_collapse() {
    // Expected origins follow from the fixture's scipy values: a MAD of 0 collapses, an IQR of
    // 0 collapses, the standard deviation of a non-constant column never does.
    let f = fixture();
    for c in &f.cases {
        let s = estimated_scale(&c.values);
        let (want, origin) = if c.mad_normal > 0.0 {
            (c.mad_normal, ScaleOrigin::Mad)
        } else if c.iqr > 0.0 {
            (c.iqr / IQR_OF_NORMAL, ScaleOrigin::Iqr)
        } else {
            (c.std, ScaleOrigin::StdDev)
        };
        assert_eq!(s.origin, origin, "{}", c.name);
        assert!(close(s.scale, want), "{}: {} vs {want}", c.name, s.scale);
    }
}

fn contact_table() -> StepTable {
    // 1000 steps: lateral offset spread over +-0.5 m, contact flag on in 1 % of the steps.
    let mut t = StepTable::new(2, 1);
    for i in 0..1000 {
        let offset = ((i * 37 % 1000) as f32 / 1000.0 - 0.5) * 1.0;
        let contact = if i % 100 == 0 { 1.0 } else { 0.0 };
        t.states.extend([offset, contact]);
        t.actions.push(0.0);
        t.t.push(i as i64);
    }
    t
}

fn spec(kind: FeatureKind) -> Spec {
    let f = |name: &str, unit: &str, kind| Feature {
        name: name.into(),
        unit: unit.into(),
        scale: None,
        kind,
    };
    Spec {
        features: vec![
            f("lateral_offset", "m", FeatureKind::Continuous),
            f("contact", "", kind),
        ],
        actions: vec![ActionChannel {
            name: "steer".into(),
            unit: "rad".into(),
            kind: ChannelKind::Continuous {
                low: -0.5,
                high: 0.5,
            },
        }],
        position: None,
        outcomes: Vec::new(),
    }
}

#[test]
fn a_contact_flag_with_mad_zero_no_longer_weighs_a_hundred_metres() {
    // The flag's MAD and IQR are 0; the old floor (1 % of its range, 0.01) made one flip weigh
    // 100 scaled units. By hand: the standard deviation of a 1 % flag is sqrt(0.01 * 0.99) =
    // 0.0995, and the offset's MAD is that of a uniform grid over 1 m: 0.25 m * 1.4826.
    let t = contact_table();
    let s = scales_with_origin(&spec(FeatureKind::Continuous), &t);
    assert_eq!(s[0].origin, ScaleOrigin::Mad);
    assert!((s[0].scale - 0.25 * MAD_TO_SD).abs() < 2e-3, "{:?}", s[0]);
    assert_eq!(s[1].origin, ScaleOrigin::StdDev);
    assert!(
        (s[1].scale - (0.01f64 * 0.99).sqrt()).abs() < 1e-9,
        "{:?}",
        s[1]
    );
    let flip_in_metres = s[0].scale / s[1].scale;
    assert!(flip_in_metres < 4.0, "a flip weighs {flip_in_metres} m");
    // Marked binary: the range of its codes, so a flip weighs one scaled unit.
    let s = scales_with_origin(&spec(FeatureKind::Binary), &t);
    assert_eq!((s[1].scale, s[1].origin), (1.0, ScaleOrigin::Binary));
}
