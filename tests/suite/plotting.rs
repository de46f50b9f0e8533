//! Plotting computations against outside references: LTTB against the PyPI `lttb` package,
//! the map's principal components against numpy (scripts and versions beside the fixtures in
//! tests/fixtures/plotting/).
#![allow(clippy::unwrap_used)] // test helpers may panic on a broken fixture

use countersteer::campaign::{ActionChannel, ChannelKind, Episode, Feature, Spec, StepTable};
use countersteer::plotting::{Projection, ProjectionKind, lttb, lttb_indices};
use countersteer::progress::Progress;

fn csv_rows(text: &str) -> Vec<Vec<f64>> {
    text.lines()
        .filter(|l| l.starts_with(|c: char| c.is_ascii_digit() || c == '-'))
        .map(|l| l.split(',').map(|x| x.parse().unwrap()).collect())
        .collect()
}

/// LTTB equals `lttb.downsample` (lttb 0.3.2, numpy 1.26.4) on an unevenly spaced random walk,
/// for several output sizes, to the last bit.
#[test]
fn lttb_matches_the_pypi_lttb_package() {
    let input: Vec<[f64; 2]> = csv_rows(include_str!("../fixtures/plotting/lttb_input.csv"))
        .into_iter()
        .map(|r| [r[0], r[1]])
        .collect();
    assert_eq!(input.len(), 1000);
    let expected = csv_rows(include_str!("../fixtures/plotting/lttb_output.csv"));
    for n_out in [3usize, 37, 100, 999] {
        let want: Vec<[f64; 2]> = expected
            .iter()
            .filter(|r| r[0] as usize == n_out)
            .map(|r| [r[1], r[2]])
            .collect();
        assert_eq!(want.len(), n_out);
        assert_eq!(lttb(&input, n_out), want, "n_out = {n_out}");
    }
}

/// Thinning by index works the same whatever the plane: a 2-D loop keeps its far corner.
#[test]
fn lttb_thins_a_path_by_index() {
    let path: Vec<[f64; 2]> = (0..=40)
        .map(|i| match i {
            0..=10 => [i as f64, 0.0],
            11..=20 => [10.0, (i - 10) as f64],
            21..=30 => [(30 - i) as f64, 10.0],
            _ => [0.0, (40 - i) as f64],
        })
        .collect();
    let idx = lttb_indices(path.len(), 6, |i| path[i]);
    assert_eq!(idx.len(), 6);
    assert_eq!((idx[0], idx[5]), (0, 40));
    assert!(idx.contains(&20) || idx.contains(&10) || idx.contains(&30));
}

fn table_of(states: &[Vec<f64>]) -> StepTable {
    let d = states[0].len();
    let mut t = StepTable::new(d, 1);
    for (i, s) in states.iter().enumerate() {
        t.states.extend(s.iter().map(|&v| v as f32));
        t.actions.push(0.0);
        t.t.push(i as i64);
        t.origins.push(i as u64 + 1);
    }
    t.episodes.push(Episode {
        name: "e".into(),
        start: 0,
        len: states.len(),
        source: 0,
    });
    t
}

fn spec(d: usize) -> Spec {
    Spec {
        features: (0..d)
            .map(|i| Feature {
                name: format!("f{i}"),
                unit: String::new(),
                scale: None,
                kind: Default::default(),
            })
            .collect(),
        actions: vec![ActionChannel {
            name: "a".into(),
            unit: String::new(),
            kind: ChannelKind::Continuous {
                low: -1.0,
                high: 1.0,
            },
        }],
        position: None,
        outcomes: Vec::new(),
    }
}

/// Principal components of the states in the novelty's scaling (floored MAD, as
/// `novelty::scale`) equal numpy.linalg.eigh's (numpy 1.26.4): the map shows the novelty's metric.
#[test]
fn principal_projection_matches_numpy() {
    let v: serde_json::Value =
        serde_json::from_str(include_str!("../fixtures/plotting/pca.json")).unwrap();
    let states: Vec<Vec<f64>> = serde_json::from_value(v["states"].clone()).unwrap();
    let want: Vec<[f64; 2]> = serde_json::from_value(v["projected"].clone()).unwrap();
    let explained: [f64; 2] = serde_json::from_value(v["explained"].clone()).unwrap();
    let table = table_of(&states);
    let p = Projection::fit(&spec(4), &table, &Progress::new());
    let ProjectionKind::Principal { explained: got } = p.kind else {
        panic!("expected principal components");
    };
    // Source: numpy (the fixture); tolerances 1e-5 / 1e-3 cover f32 projection (common
    // practice).
    assert!((got[0] - explained[0]).abs() < 1e-5 && (got[1] - explained[1]).abs() < 1e-5);
    let all = p.project_all(&table, &Progress::new());
    for (g, w) in all.iter().zip(&want) {
        assert!((g[0] as f64 - w[0]).abs() < 1e-3, "{g:?} vs {w:?}");
        assert!((g[1] as f64 - w[1]).abs() < 1e-3, "{g:?} vs {w:?}");
    }
}

/// A declared position pair is used as it stands.
#[test]
fn declared_position_pair_is_used_as_is() {
    let mut s = spec(3);
    s.position = Some(["f2".into(), "f0".into()]);
    let table = table_of(&[vec![1.0, 2.0, 3.0], vec![4.0, 5.0, 6.0]]);
    let p = Projection::fit(&s, &table, &Progress::new());
    assert_eq!(p.kind, ProjectionKind::Declared([2, 0]));
    assert_eq!(p.project(&[1.0, 2.0, 3.0]), [3.0, 1.0]);
}
