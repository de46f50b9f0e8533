//! k-nearest-neighbour search checked against a brute-force oracle and against scipy.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::novelty::index::{KnnIndex, MAX_TREE_DIM};
use countersteer::novelty::query::{brute_knn, knn_rows};
use countersteer::novelty::synth::{Rng, SynthSpec, trajectories};
use countersteer::progress::Progress;

/// Which index a check builds.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Build {
    /// `KnnIndex::build`: the path chosen from the data.
    Chosen,
    /// `KnnIndex::build_plain`: a plain tree whatever the data.
    PlainTree,
}

fn check_against_brute_force(dim: usize, build: Build) -> String {
    let mut spec = SynthSpec::expert(6, 150, dim, 11);
    spec.latent = 4.min(dim);
    let demos = trajectories(&spec);
    let mut rng = Rng::new(dim as u64);
    let inv: Vec<f32> = (0..dim).map(|_| 0.5 + rng.uniform() as f32).collect();
    let rows: Vec<u32> = (0..demos.len() as u32).collect();
    let index = match build {
        Build::Chosen => KnnIndex::build(&demos.states, dim, &inv, &rows).unwrap(),
        Build::PlainTree => KnnIndex::build_plain(&demos.states, dim, &inv, &rows).unwrap(),
    };
    let mut hits = Vec::new();
    for _ in 0..40 {
        let base = (rng.uniform() * demos.len() as f64) as usize;
        let q: Vec<f32> = demos
            .state(base)
            .iter()
            .zip(&inv)
            .map(|(x, i)| x * i + rng.normal() as f32 * 0.3)
            .collect();
        let want = brute_knn(&demos.states, dim, &inv, &q, 5);
        index.knn(&q, 5, f32::INFINITY, &mut hits);
        assert_eq!(hits.len(), 5, "dim {dim}");
        // Oracle: brute force over every point; the relative tolerance 1e-4 covers f32
        // summation order (common practice).
        for (h, w) in hits.iter().zip(&want) {
            assert!(
                (h.1 - w.1).abs() <= 1e-4 * w.1.max(1e-3),
                "dim {dim}: {h:?} vs {w:?}"
            );
        }
        // A deliberately too small bound still gives the exact answer (second search).
        index.knn(&q, 5, want[0].1.sqrt() * 0.5, &mut hits);
        assert!((hits[4].1 - want[4].1).abs() <= 1e-4 * want[4].1.max(1e-3));
    }
    index.path()
}

#[test]
fn knn_equals_brute_force_in_every_dispatched_size() {
    // Plain trees: 3 and 5 are padded (to 4 and 8), 16 exact, 32 the largest tree.
    for dim in [2, 3, 5, 16, MAX_TREE_DIM] {
        let path = check_against_brute_force(dim, Build::PlainTree);
        assert!(path.starts_with("k-d tree"), "{path}");
    }
    // As chosen from the data: small states stay on a plain tree; the 4-dimensional latent
    // path of the wider ones fits 3 or 7 principal components plus the residual norm.
    for (dim, want) in [
        (3, "k-d tree, 3 dimensions"),
        (8, "k-d tree, 8 dimensions"),
        (16, "principal subspace of 7 components"),
        (MAX_TREE_DIM, "principal subspace of 7 components"),
        (40, "principal subspace of 7 components"),
    ] {
        let path = check_against_brute_force(dim, Build::Chosen);
        assert!(path.starts_with(want), "dim {dim}: {path}");
    }
}

#[test]
fn seeded_chains_give_the_same_neighbours_as_plain_queries() {
    let demos = trajectories(&SynthSpec::expert(8, 200, 6, 3));
    let mut roll = SynthSpec::expert(3, 200, 6, 4);
    roll.drift = 0.02;
    let steps = trajectories(&roll);
    let inv = vec![1.0; 6];
    let rows: Vec<u32> = (0..demos.len() as u32).collect();
    let index = KnnIndex::build(&demos.states, 6, &inv, &rows).unwrap();
    let all: Vec<usize> = (0..steps.len()).collect();
    let p = Progress::new();
    let seeded = knn_rows(&index, &inv, &steps, &all, 5, true, "", &p).unwrap();
    let plain = knn_rows(&index, &inv, &steps, &all, 5, false, "", &p).unwrap();
    // Oracle: the unseeded search; relative tolerance for f32 rounding (common practice).
    for (a, b) in seeded.iter().zip(&plain) {
        assert!((a.1 - b.1).abs() <= 1e-5 * b.1.max(1e-3), "{a:?} vs {b:?}");
    }
}

/// Brute force over a subset of rows: hits name demonstration rows, as the index's do.
fn brute_subset(
    states: &[f32],
    dim: usize,
    inv: &[f32],
    rows: &[u32],
    q: &[f32],
) -> Vec<(u32, f32)> {
    let sub: Vec<f32> = rows
        .iter()
        .flat_map(|&r| {
            states[r as usize * dim..(r as usize + 1) * dim]
                .iter()
                .copied()
        })
        .collect();
    brute_knn(&sub, dim, inv, q, 5)
        .into_iter()
        .map(|(i, d)| (rows[i as usize], d))
        .collect()
}

/// Demonstrations of `episodes` 150-step episodes with 16 features on a 4-dimensional latent
/// path, and an index (which must take the subspace path) over the rows `keep` accepts.
fn subspace_over(
    episodes: usize,
    seed: u64,
    keep: impl Fn(u32) -> bool,
) -> (countersteer::campaign::StepTable, Vec<u32>, KnnIndex) {
    let mut spec = SynthSpec::expert(episodes, 150, 16, seed);
    spec.latent = 4;
    let demos = trajectories(&spec);
    let rows: Vec<u32> = (0..demos.len() as u32).filter(|&r| keep(r)).collect();
    let index = KnnIndex::build(&demos.states, 16, &[1.0; 16], &rows).unwrap();
    assert!(
        index.path().starts_with("principal subspace"),
        "{}",
        index.path()
    );
    (demos, rows, index)
}

#[test]
fn hinted_subspace_chains_equal_brute_force_on_a_subset_index() {
    // The subspace path (16 features on a 4-dimensional latent path) over every other
    // episode, as the calibration's fit index is built over part of the demonstrations:
    // hints then name rows that are not indexed, which must be skipped. Oracle: brute force.
    let dim = 16;
    let (demos, rows, index) = subspace_over(10, 21, |r| (r / 150) % 2 == 0);
    let inv = vec![1.0f32; dim];
    let mut roll = SynthSpec::expert(3, 150, dim, 22);
    roll.latent = 4;
    roll.drift = 0.02;
    let steps = trajectories(&roll);
    let p = Progress::new();
    // Every step (hints one row ahead) and every third step (hints three rows ahead).
    for stride in [1, 3] {
        let picked: Vec<usize> = (0..steps.len()).step_by(stride).collect();
        let hits = knn_rows(&index, &inv, &steps, &picked, 5, true, "", &p).unwrap();
        for (&row, got) in picked.iter().zip(hits.chunks_exact(5)) {
            let want = brute_subset(&demos.states, dim, &inv, &rows, steps.state(row));
            for (g, w) in got.iter().zip(&want) {
                assert!(
                    (g.1 - w.1).abs() <= 1e-4 * w.1.max(1e-3),
                    "stride {stride}, row {row}: {got:?} vs {want:?}"
                );
            }
        }
    }
}

#[test]
fn misleading_hints_never_change_the_answer() {
    // Hints that are far away, repeated, not indexed or past the last row: the answer must
    // still be brute force's (a hint only ever tightens an upper bound).
    let dim = 16;
    let (demos, rows, index) = subspace_over(6, 5, |r| r % 7 != 0);
    let inv = vec![1.0f32; dim];
    let mut rng = Rng::new(9);
    let mut hits = Vec::new();
    let bad_hints: [&[u32]; 4] = [
        &[0, 0, 0, 0, 0, 0, 0, 0, 0, 0],
        &[7, 14, 21, 28, 35, 42, 49],
        &[u32::MAX, u32::MAX - 1, 899, 898, 897, 896, 895, 1, 2],
        &[1, 2, 3, 4, 5, 6, 8, 9, 10, 11],
    ];
    for _ in 0..30 {
        let base = (rng.uniform() * demos.len() as f64) as usize;
        let q: Vec<f32> = demos
            .state(base)
            .iter()
            .map(|x| x + rng.normal() as f32 * 0.2)
            .collect();
        let want = brute_subset(&demos.states, dim, &inv, &rows, &q);
        for hints in bad_hints {
            index.knn_hinted(&q, 5, f32::INFINITY, hints, &mut hits);
            assert_eq!(hits.len(), 5);
            for (g, w) in hits.iter().zip(&want) {
                assert!(
                    (g.1 - w.1).abs() <= 1e-4 * w.1.max(1e-3),
                    "{hints:?}: {hits:?} vs {want:?}"
                );
            }
        }
    }
}

#[derive(serde::Deserialize)]
struct ScipyFixture {
    scipy: String,
    k: usize,
    cases: Vec<ScipyCase>,
}

#[derive(serde::Deserialize)]
struct ScipyCase {
    dim: usize,
    points: Vec<Vec<f32>>,
    queries: Vec<Vec<f32>>,
    distances: Vec<Vec<f64>>,
}

#[test]
fn knn_distances_equal_scipy_ckdtree() {
    // Source: scipy.spatial.cKDTree.query, fixture made by tests/fixtures/knn_scipy.py.
    let text = std::fs::read_to_string("tests/fixtures/knn_scipy.json").unwrap();
    let f: ScipyFixture = serde_json::from_str(&text).unwrap();
    assert_eq!(f.scipy, "1.17.1");
    for c in &f.cases {
        let flat: Vec<f32> = c.points.iter().flatten().copied().collect();
        let rows: Vec<u32> = (0..c.points.len() as u32).collect();
        let index = KnnIndex::build(&flat, c.dim, &vec![1.0; c.dim], &rows).unwrap();
        let mut hits = Vec::new();
        for (q, want) in c.queries.iter().zip(&c.distances) {
            index.knn(q, f.k, f32::INFINITY, &mut hits);
            for (h, w) in hits.iter().zip(want) {
                let got = f64::from(h.1).sqrt();
                assert!(
                    (got - w).abs() <= 1e-5 * w.max(1.0),
                    "dim {}: {got} vs scipy {w}",
                    c.dim
                );
            }
        }
    }
}
