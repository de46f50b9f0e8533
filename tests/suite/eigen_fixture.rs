//! The bounded eigen routine (Jacobi up to 128 features, randomized subspace iteration above)
//! checked against numpy's `eigh` on the same data.

use countersteer::novelty::eigen::leading_axes;

#[derive(serde::Deserialize)]
struct Fixture {
    numpy: String,
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    rows: usize,
    dim: usize,
    values: Vec<f64>,
    trace: f64,
    vectors: Vec<Vec<f64>>,
}

/// The formula of tests/fixtures/make_eigen_numpy.py, centred by column.
fn centred(rows: usize, dim: usize) -> Vec<f64> {
    let mut x = vec![0.0f64; rows * dim];
    for i in 0..rows {
        for j in 0..dim {
            let mut v = 0.0;
            for k in 0..8 {
                let u = (1.3 * i as f64 * (k + 1) as f64 + 0.7 * k as f64).sin();
                let w = (0.21 * (j + 1) as f64 * (k + 1) as f64 + k as f64).cos();
                v += 2f64.powi(-k) * u * w;
            }
            v += 0.01 * (12.9898 * i as f64 + 78.233 * j as f64).sin();
            x[i * dim + j] = v;
        }
    }
    for j in 0..dim {
        let m = (0..rows).map(|i| x[i * dim + j]).sum::<f64>() / rows as f64;
        (0..rows).for_each(|i| x[i * dim + j] -= m);
    }
    x
}

#[test]
fn leading_eigenpairs_equal_numpy_eigh() {
    // Source: numpy 2.4.6 `numpy.linalg.eigh`, tests/fixtures/make_eigen_numpy.py.
    let text = std::fs::read_to_string("tests/fixtures/eigen_numpy.json").unwrap();
    let f: Fixture = serde_json::from_str(&text).unwrap();
    assert_eq!(f.numpy, "2.4.6");
    assert_eq!(f.cases.len(), 3);
    for c in &f.cases {
        let x = centred(c.rows, c.dim);
        let got = leading_axes(&x, c.rows, c.dim, 15);
        let top = c.values[0];
        assert!((got.total - c.trace).abs() <= 1e-9 * c.trace, "D {}", c.dim);
        assert_eq!(got.values.len(), 15);
        // The eight latent directions stand well apart: tight. The flat tail beyond them:
        // every value within 1e-4 of the largest (Ritz values approach from below).
        for (i, (g, w)) in got.values.iter().zip(&c.values).enumerate() {
            let tol = if i < 8 { 1e-9 * top } else { 1e-4 * top };
            assert!((g - w).abs() <= tol, "D {} value {i}: {g} vs {w}", c.dim);
            assert!(*g <= w + 1e-9 * top, "D {} value {i} above eigh", c.dim);
        }
        for (i, want) in c.vectors.iter().enumerate() {
            let v = &got.vectors[i * c.dim..(i + 1) * c.dim];
            let dot: f64 = v.iter().zip(want).map(|(a, b)| a * b).sum();
            assert!(
                (dot.abs() - 1.0).abs() < 1e-8,
                "D {} vector {i}: {dot}",
                c.dim
            );
        }
    }
}
