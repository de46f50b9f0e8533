//! Leading principal axes with bounded work.
//!
//! The search path and the map need only the few largest eigenpairs of a covariance and its
//! trace. A full eigen-decomposition by the cyclic Jacobi method (Golub & Van Loan, *Matrix
//! Computations*, 4th ed., section 8.5) costs O(D^3) per sweep, which is fine for narrow
//! states but took minutes at D = 1,000 and never finished at D = 10,000. So:
//!
//! * up to [`JACOBI_MAX_DIM`] features: Jacobi on the covariance, as before;
//! * wider: randomized subspace iteration (Halko, Martinsson & Tropp 2011, "Finding structure
//!   with randomness", SIAM Review 53(2), Algorithm 4.4) on the centred data matrix itself,
//!   never forming the D x D covariance, followed by a Rayleigh-Ritz step on the small
//!   projected matrix. Each iteration costs O(rows * D * l) for `l` = components plus
//!   [`OVERSAMPLE`]; at most [`MAX_ITERATIONS`] are run.
//!
//! The vectors returned are orthonormal in both cases, which is what the subspace path's lower
//! bound needs; approximate eigenvectors only change its speed, never its answers.

use rayon::prelude::*;

use crate::sim::rng::SplitMix64;

/// Widest matrix decomposed by Jacobi; wider data take randomized subspace iteration.
pub const JACOBI_MAX_DIM: usize = 128;
/// Extra directions iterated beyond those asked for (Halko et al. recommend 5 to 10).
pub const OVERSAMPLE: usize = 10;
/// Most subspace iterations.
pub const MAX_ITERATIONS: usize = 24;
/// Iteration stops once the wanted Ritz values change by less than this relative amount.
const TOLERANCE: f64 = 1e-10;

/// The leading eigenpairs of a covariance, and its trace.
#[derive(Debug, Clone, PartialEq)]
pub struct Leading {
    /// Eigenvalues, descending.
    pub values: Vec<f64>,
    /// Unit eigenvectors in the same order, each `dim` long, row-major.
    pub vectors: Vec<f64>,
    /// Sum of all eigenvalues (the total variance).
    pub total: f64,
}

/// The `r` leading eigenpairs of the covariance `X^T X / rows` of a CENTRED row-major data
/// matrix `x` (`rows` x `dim`), and its trace. Fewer than `r` pairs when the matrix has fewer
/// rows or columns.
pub fn leading_axes(x: &[f64], rows: usize, dim: usize, r: usize) -> Leading {
    let r = r.min(dim);
    let total = x.iter().map(|v| v * v).sum::<f64>() / rows.max(1) as f64;
    if dim <= JACOBI_MAX_DIM || rows == 0 {
        let (values, vectors) = sorted_eigen(covariance(x, rows, dim), dim);
        return Leading {
            values: values[..r].to_vec(),
            vectors: vectors[..r * dim].to_vec(),
            total,
        };
    }
    let mut l = randomized(x, rows, dim, r);
    l.total = total;
    l
}

/// `X^T X / rows`, row-major.
fn covariance(x: &[f64], rows: usize, dim: usize) -> Vec<f64> {
    let mut c = vec![0.0f64; dim * dim];
    for p in x.chunks_exact(dim.max(1)) {
        for a in 0..dim {
            for b in a..dim {
                c[a * dim + b] += p[a] * p[b];
            }
        }
    }
    let n = rows.max(1) as f64;
    for a in 0..dim {
        for b in a..dim {
            c[a * dim + b] /= n;
            c[b * dim + a] = c[a * dim + b];
        }
    }
    c
}

/// Every eigenpair of a symmetric matrix, eigenvalues descending, eigenvectors as rows.
pub fn sorted_eigen(a: Vec<f64>, n: usize) -> (Vec<f64>, Vec<f64>) {
    let (values, v) = jacobi_eigen(a, n);
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| values[b].total_cmp(&values[a]));
    let mut rows = Vec::with_capacity(n * n);
    for &c in &order {
        rows.extend((0..n).map(|r| v[r * n + c]));
    }
    (order.iter().map(|&c| values[c]).collect(), rows)
}

/// Randomized subspace iteration with a Rayleigh-Ritz step (see the module documentation).
fn randomized(x: &[f64], rows: usize, dim: usize, r: usize) -> Leading {
    let l = (r + OVERSAMPLE).min(rows).min(dim);
    let mut g = SplitMix64::new(0x5eed_a8e5);
    let mut v: Vec<Vec<f64>> = (0..l)
        .map(|_| (0..dim).map(|_| g.normal()).collect())
        .collect();
    orthonormalize(&mut v, &mut g);
    let mut last: Vec<f64> = Vec::new();
    for it in 0..MAX_ITERATIONS {
        let mut y: Vec<Vec<f64>> = v.iter().map(|c| times(x, rows, dim, c)).collect();
        let (theta, _) = ritz(&y, rows);
        let done = converged(&last, &theta[..r.min(theta.len())]);
        last = theta[..r.min(theta.len())].to_vec();
        if done || it + 1 == MAX_ITERATIONS {
            break;
        }
        orthonormalize(&mut y, &mut g);
        v = y.iter().map(|u| times_t(x, rows, dim, u)).collect();
        orthonormalize(&mut v, &mut g);
    }
    let y: Vec<Vec<f64>> = v.iter().map(|c| times(x, rows, dim, c)).collect();
    let (theta, rot) = ritz(&y, rows);
    let k = r.min(l);
    let mut vectors = vec![0.0f64; k * dim];
    for (i, out) in vectors.chunks_exact_mut(dim).enumerate() {
        for (j, c) in v.iter().enumerate() {
            let w = rot[i * l + j];
            out.iter_mut().zip(c).for_each(|(o, x)| *o += w * x);
        }
    }
    Leading {
        values: theta[..k].to_vec(),
        vectors,
        total: 0.0,
    }
}

/// Ritz values (descending) and their rotation (rows) of the projected matrix `Y^T Y / rows`.
fn ritz(y: &[Vec<f64>], rows: usize) -> (Vec<f64>, Vec<f64>) {
    let l = y.len();
    let mut t = vec![0.0f64; l * l];
    for a in 0..l {
        for b in a..l {
            let d: f64 = y[a].iter().zip(&y[b]).map(|(p, q)| p * q).sum();
            t[a * l + b] = d / rows.max(1) as f64;
            t[b * l + a] = t[a * l + b];
        }
    }
    sorted_eigen(t, l)
}

fn converged(last: &[f64], now: &[f64]) -> bool {
    last.len() == now.len()
        && last
            .iter()
            .zip(now)
            .all(|(a, b)| (a - b).abs() <= TOLERANCE * now[0].abs().max(f64::MIN_POSITIVE))
}

/// `X c` for a column vector `c` of length `dim`.
fn times(x: &[f64], rows: usize, dim: usize, c: &[f64]) -> Vec<f64> {
    x[..rows * dim]
        .par_chunks_exact(dim)
        .map(|p| p.iter().zip(c).map(|(a, b)| a * b).sum())
        .collect()
}

/// `X^T u` for a vector `u` of length `rows`.
fn times_t(x: &[f64], rows: usize, dim: usize, u: &[f64]) -> Vec<f64> {
    let mut out = vec![0.0f64; dim];
    for (p, &w) in x[..rows * dim].chunks_exact(dim).zip(u) {
        out.iter_mut().zip(p).for_each(|(o, a)| *o += w * a);
    }
    out
}

/// Modified Gram-Schmidt, twice ("twice is enough": Giraud, Langou & Rozloznik 2005). A
/// vector that vanishes against the earlier ones is replaced by a fresh random one.
fn orthonormalize(v: &mut [Vec<f64>], g: &mut SplitMix64) {
    for i in 0..v.len() {
        for attempt in 0..4 {
            let before = norm(&v[i]);
            for _ in 0..2 {
                for j in 0..i {
                    let d: f64 = v[i].iter().zip(&v[j]).map(|(a, b)| a * b).sum();
                    let (head, tail) = v.split_at_mut(i);
                    tail[0]
                        .iter_mut()
                        .zip(&head[j])
                        .for_each(|(a, b)| *a -= d * b);
                }
            }
            let after = norm(&v[i]);
            if after > 1e-10 * before.max(f64::MIN_POSITIVE) && after > 0.0 {
                v[i].iter_mut().for_each(|a| *a /= after);
                break;
            }
            let fresh: Vec<f64> = (0..v[i].len()).map(|_| g.normal()).collect();
            v[i] = fresh;
            if attempt == 3 {
                v[i].iter_mut().for_each(|a| *a = 0.0);
            }
        }
    }
}

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|a| a * a).sum::<f64>().sqrt()
}

/// Eigenvalues and eigenvectors (columns of a row-major matrix) of a symmetric matrix by the
/// cyclic Jacobi method (Golub & Van Loan, Matrix Computations, 4th ed., section 8.5).
pub fn jacobi_eigen(mut a: Vec<f64>, n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut v = vec![0.0f64; n * n];
    for i in 0..n {
        v[i * n + i] = 1.0;
    }
    for _sweep in 0..60 {
        let off: f64 = (0..n)
            .flat_map(|p| (0..n).filter(move |&q| q != p).map(move |q| (p, q)))
            .map(|(p, q)| a[p * n + q] * a[p * n + q])
            .sum();
        let scale: f64 = (0..n).map(|i| a[i * n + i] * a[i * n + i]).sum();
        if off <= 1e-22 * scale.max(1e-300) {
            break;
        }
        for p in 0..n {
            for q in p + 1..n {
                rotate(&mut a, &mut v, n, p, q);
            }
        }
    }
    ((0..n).map(|i| a[i * n + i]).collect(), v)
}

fn rotate(a: &mut [f64], v: &mut [f64], n: usize, p: usize, q: usize) {
    let apq = a[p * n + q];
    if apq.abs() < 1e-300 {
        return;
    }
    let theta = (a[q * n + q] - a[p * n + p]) / (2.0 * apq);
    let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
    let t = if theta == 0.0 { 1.0 } else { t };
    let c = 1.0 / (t * t + 1.0).sqrt();
    let s = t * c;
    for k in 0..n {
        let (akp, akq) = (a[k * n + p], a[k * n + q]);
        a[k * n + p] = c * akp - s * akq;
        a[k * n + q] = s * akp + c * akq;
    }
    for k in 0..n {
        let (apk, aqk) = (a[p * n + k], a[q * n + k]);
        a[p * n + k] = c * apk - s * aqk;
        a[q * n + k] = s * apk + c * aqk;
    }
    for k in 0..n {
        let (vkp, vkq) = (v[k * n + p], v[k * n + q]);
        v[k * n + p] = c * vkp - s * vkq;
        v[k * n + q] = s * vkp + c * vkq;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn jacobi_finds_the_eigenpairs_of_a_textbook_matrix() {
        // [[2,1],[1,2]] has eigenvalues 1 and 3 with eigenvectors (1,-1)/sqrt2, (1,1)/sqrt2
        // (worked by hand from the characteristic polynomial (2-l)^2 - 1).
        let (vals, vecs) = jacobi_eigen(vec![2.0, 1.0, 1.0, 2.0], 2);
        let mut sorted = vals.clone();
        sorted.sort_by(f64::total_cmp);
        assert!((sorted[0] - 1.0).abs() < 1e-12 && (sorted[1] - 3.0).abs() < 1e-12);
        let big = if vals[0] > vals[1] { 0 } else { 1 };
        let (x, y) = (vecs[big], vecs[2 + big]);
        assert!((x.abs() - 0.5f64.sqrt()).abs() < 1e-12 && (x - y).abs() < 1e-12);
    }

    #[test]
    fn randomized_vectors_are_orthonormal_even_on_rank_deficient_data() {
        // 20 rows of 300 features holding only 2 directions: the other directions found are
        // arbitrary but must still be unit length and orthogonal.
        let (rows, dim) = (20, 300);
        let x: Vec<f64> = (0..rows * dim)
            .map(|i| {
                let (r, c) = (i / dim, i % dim);
                (r as f64 - 9.5) * (c as f64 * 0.01).sin() + ((r % 3) as f64 - 1.0) * 0.5
            })
            .collect();
        let l = leading_axes(&x, rows, dim, 15);
        assert_eq!(l.values.len(), 15);
        for a in 0..15 {
            for b in 0..15 {
                let d: f64 = (0..dim)
                    .map(|j| l.vectors[a * dim + j] * l.vectors[b * dim + j])
                    .sum();
                let want = if a == b { 1.0 } else { 0.0 };
                assert!((d - want).abs() < 1e-9, "{a},{b}: {d}");
            }
        }
        assert!(l.values[2].abs() < 1e-9 * l.values[0]);
    }
}
