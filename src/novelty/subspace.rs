//! The search path for wide states: a tree over a principal subspace.
//!
//! kiddo picks split axes by cycling through the dimensions, so with ~20 tree levels most axes
//! of a 64-wide state are never split and a plain tree degrades to brute force; already at 16
//! dimensions each axis is split only about once. Trajectory data is usually close to a
//! low-dimensional subspace, so this path builds the tree over the state's leading principal
//! components (principal component analysis of the scaled
//! demonstrations; Jolliffe 2002) plus one more coordinate: the norm of the residual outside
//! that subspace (the Q statistic of Jackson & Mudholkar 1979). For any two states,
//! `|P(x - y)|^2 + (|R x| - |R y|)^2 <= |x - y|^2` (Pythagoras plus the reverse triangle
//! inequality in the residual space), so distances in the tree are lower bounds of the true
//! ones. A query takes a few tree neighbours, measures their exact distances to get an upper
//! bound on the k-th distance, then collects every point whose lower bound is within it and
//! measures those exactly. The answer is exact; only the speed depends on how much of the
//! variance the subspace holds.

use rayon::prelude::*;

use super::eigen::{JACOBI_MAX_DIM, leading_axes};
use super::index::{Hit, TreeBackend, build_tree};

/// Rows per parallel block when the index is built.
const BLOCK_ROWS: usize = 16_384;

/// Widest tree of the subspace path: principal components plus the residual norm.
pub const SUBSPACE_TREE_DIM: usize = 16;
/// Share of the scaled demonstrations' variance the components must hold for a narrower tree
/// to be used (see [`components_for`]).
pub const SUBSPACE_VARIANCE: f64 = 0.99;
/// Rows sampled (evenly) to estimate the covariance.
pub const COVARIANCE_SAMPLE_ROWS: usize = 50_000;
/// Most values (rows times features) sampled for wide states: the sample only chooses the
/// search path's axes, whose answers are exact whatever the axes.
pub const COVARIANCE_SAMPLE_VALUES: usize = 2_000_000;
/// Fewest rows sampled, however wide the states.
pub const MIN_SAMPLE_ROWS: usize = 64;

/// Principal-subspace index (see the module documentation).
pub struct Subspace {
    dim: usize,
    m: usize,
    mean: Vec<f32>,
    /// `m` basis vectors of length `dim`, row-major.
    basis: Vec<f32>,
    points: Vec<f32>,
    rows: Vec<u32>,
    /// Local id of each demonstration row, `u32::MAX` where the row is not indexed; empty
    /// when `rows` is `0..n` (the local id is the row itself).
    local: Vec<u32>,
    tree: Box<dyn TreeBackend>,
}

/// Principal axes of scaled states: the mean, the leading eigenpairs of the covariance
/// (largest eigenvalue first) and the total variance.
#[derive(Debug, Clone)]
pub struct Axes {
    dim: usize,
    mean: Vec<f32>,
    /// The leading eigenvalues, descending.
    pub values: Vec<f64>,
    /// Sum of every eigenvalue (the trace of the covariance).
    pub total: f64,
    /// Eigenvectors in the same order, each `dim` long, row-major.
    vectors: Vec<f32>,
}

/// How many components the tree should hold for the leading eigenvalues `values` (descending)
/// of a covariance whose eigenvalues sum to `total`: the most
/// that fit a compiled tree of 4, 8 or 16 dimensions with the residual norm (3, 7 or 15),
/// taking the narrowest tree whose components hold [`SUBSPACE_VARIANCE`] of the variance,
/// and the widest when none does. Padding is free, so a tree gets as many components as fit.
pub fn components_for(values: &[f64], total: f64) -> usize {
    let held = |m: usize| values.iter().take(m).map(|v| v.max(0.0)).sum::<f64>();
    for width in [4, 8, SUBSPACE_TREE_DIM] {
        let m = (width - 1).min(values.len());
        if total <= 0.0 || held(m) >= SUBSPACE_VARIANCE * total {
            return m;
        }
    }
    (SUBSPACE_TREE_DIM - 1).min(values.len())
}

impl Subspace {
    /// Builds the index over `rows` of `states` scaled by `inv_scale`, on the first `m` of
    /// `axes` (see [`principal_axes`] and [`components_for`]).
    pub fn build(
        states: &[f32],
        dim: usize,
        inv_scale: &[f32],
        rows: &[u32],
        axes: &Axes,
        m: usize,
    ) -> Result<Self, String> {
        let m = m.min(dim).min(SUBSPACE_TREE_DIM - 1);
        // Scaling and embedding run in parallel blocks of rows: single-threaded they took
        // about 0.09 s of each 1M-row build (bench w1parts).
        let mut points = vec![0.0f32; rows.len() * dim];
        points
            .par_chunks_mut(BLOCK_ROWS * dim)
            .zip(rows.par_chunks(BLOCK_ROWS))
            .for_each(|(out, rows)| {
                for (o, &r) in out.chunks_exact_mut(dim).zip(rows) {
                    let s = &states[r as usize * dim..(r as usize + 1) * dim];
                    for ((o, x), i) in o.iter_mut().zip(s).zip(inv_scale) {
                        *o = x * i;
                    }
                }
            });
        let (mean, basis) = (axes.mean.clone(), axes.vectors[..m * dim].to_vec());
        let mut s = Subspace {
            dim,
            m,
            mean,
            basis,
            points,
            rows: rows.to_vec(),
            local: local_ids(rows),
            tree: build_tree(1, &[], |_, _| 0.0)?,
        };
        let e = m + 1;
        let mut embedded = vec![0.0f32; rows.len() * e];
        embedded
            .par_chunks_mut(BLOCK_ROWS * e)
            .zip(s.points.par_chunks(BLOCK_ROWS * dim))
            .for_each(|(out, points)| {
                for (o, p) in out.chunks_exact_mut(e).zip(points.chunks_exact(dim)) {
                    s.embed(p, o);
                }
            });
        let ids: Vec<u32> = (0..rows.len() as u32).collect();
        s.tree = build_tree(e, &ids, |i, j| embedded[i as usize * e + j])?;
        Ok(s)
    }

    /// Number of principal components in the tree.
    pub fn components(&self) -> usize {
        self.m
    }

    /// The tree coordinates of a scaled state: its `m` components and its residual norm.
    /// Works on the centred state without allocating (it runs once per query).
    fn embed(&self, x: &[f32], out: &mut [f32]) {
        let mut in_plane = 0.0f32;
        for (k, o) in out[..self.m].iter_mut().enumerate() {
            let v = &self.basis[k * self.dim..(k + 1) * self.dim];
            *o = v
                .iter()
                .zip(x.iter().zip(&self.mean))
                .map(|(w, (a, b))| w * (a - b))
                .sum();
            in_plane += *o * *o;
        }
        let total: f32 = x
            .iter()
            .zip(&self.mean)
            .map(|(a, b)| (a - b) * (a - b))
            .sum();
        out[self.m] = (total - in_plane).max(0.0).sqrt();
    }

    fn exact(&self, q: &[f32], i: u32) -> f32 {
        let p = &self.points[i as usize * self.dim..(i as usize + 1) * self.dim];
        squared_distance(p, q)
    }

    /// The `k` nearest points within squared distance `bound2`, exact, ascending.
    ///
    /// Multi-step search (filter and refine; Seidl & Kriegel 1998, "Optimal multi-step
    /// k-nearest neighbor search"): the tree gives the `2k` points of smallest lower bound,
    /// whose exact distances give an upper bound `u` on the k-th distance. Every other point's
    /// lower bound is at least the largest one handed out, so when that exceeds `u` (or the
    /// tree handed out every point within `bound2`) the answer is already complete; only
    /// otherwise does a radius search collect every point whose lower bound is within `u`.
    pub fn knn(&self, q: &[f32], k: usize, bound2: f32, out: &mut Vec<Hit>) {
        self.knn_hinted(q, k, bound2, &[], out);
    }

    /// Like [`Subspace::knn`], with `hints`: demonstration rows likely to be near `q` (for a
    /// step of a rollout, the successors of the previous step's neighbours). Any `k` distinct
    /// indexed points bound the k-th distance from above by their own k-th exact distance, so
    /// the hints can only tighten `bound2`. The answer is exact whatever the hints; good hints
    /// only let the tree prune sooner.
    pub fn knn_hinted(&self, q: &[f32], k: usize, bound2: f32, hints: &[u32], out: &mut Vec<Hit>) {
        out.clear();
        let mut e = [0.0f32; SUBSPACE_TREE_DIM];
        let e = &mut e[..self.m + 1];
        self.embed(q, e);
        let bound2 = match self.hint_bound(q, k, hints) {
            Some(u) => bound2.min(u * (1.0 + 1e-5) + 1e-12),
            None => bound2,
        };
        let want = (2 * k).max(8);
        let mut cand = Vec::with_capacity(want);
        self.tree.knn(e, want, bound2, &mut cand);
        let mut exact: Vec<Hit> = cand.iter().map(|&(i, _)| (i, self.exact(q, i))).collect();
        exact.sort_by(|a, b| a.1.total_cmp(&b.1));
        let upper = match exact.get(k.saturating_sub(1)) {
            Some(&(_, d)) if k > 0 => d.min(bound2),
            _ => bound2,
        };
        let margin = upper * (1.0 + 1e-5);
        let complete = cand.len() < want || cand.last().is_some_and(|h| h.1 > margin);
        if !complete && upper.is_finite() {
            self.tree.within(e, margin, &mut cand);
            exact.clear();
            exact.extend(cand.iter().map(|&(i, _)| (i, self.exact(q, i))));
            exact.retain(|h| h.1 <= margin);
            exact.sort_by(|a, b| a.1.total_cmp(&b.1));
        }
        out.extend(
            exact
                .iter()
                .take(k)
                .map(|&(i, d)| (self.rows[i as usize], d)),
        );
    }

    /// Local id of a demonstration row, if it is indexed.
    fn local_of(&self, row: u32) -> Option<u32> {
        if self.local.is_empty() {
            (row < self.rows.len() as u32).then_some(row)
        } else {
            self.local
                .get(row as usize)
                .copied()
                .filter(|&i| i != u32::MAX)
        }
    }

    /// The k-th smallest exact squared distance from `q` to the distinct indexed rows among
    /// `hints`; `None` when they hold fewer than `k`.
    fn hint_bound(&self, q: &[f32], k: usize, hints: &[u32]) -> Option<f32> {
        if k == 0 || hints.len() < k {
            return None;
        }
        let mut ids = [0u32; 64];
        let mut n = 0;
        for i in hints.iter().filter_map(|&r| self.local_of(r)) {
            if n < ids.len() && !ids[..n].contains(&i) {
                ids[n] = i;
                n += 1;
            }
        }
        if n < k {
            return None;
        }
        let mut d = [0.0f32; 64];
        for (d, &i) in d.iter_mut().zip(&ids[..n]) {
            *d = self.exact(q, i);
        }
        let d = &mut d[..n];
        d.select_nth_unstable_by(k - 1, f32::total_cmp);
        Some(d[k - 1])
    }
}

/// Squared Euclidean distance between two equally long vectors, summed in 8 independent
/// lanes (then the lanes in a fixed order) so that the compiler can use SIMD: a plain
/// running sum cannot be reordered. On wide states whose candidates are many, this step took
/// 71 % of a profile of `countersteer score`.
pub fn squared_distance(a: &[f32], b: &[f32]) -> f32 {
    let (ca, ra) = a.as_chunks::<8>();
    let (cb, rb) = b.as_chunks::<8>();
    let mut acc = [0.0f32; 8];
    for (x, y) in ca.iter().zip(cb) {
        for l in 0..8 {
            let d = x[l] - y[l];
            acc[l] += d * d;
        }
    }
    let head = ((acc[0] + acc[4]) + (acc[1] + acc[5])) + ((acc[2] + acc[6]) + (acc[3] + acc[7]));
    ra.iter()
        .zip(rb)
        .fold(head, |s, (x, y)| s + (x - y) * (x - y))
}

/// The local-id table of [`Subspace`]: empty when `rows` is `0..n`.
fn local_ids(rows: &[u32]) -> Vec<u32> {
    if rows.iter().enumerate().all(|(i, &r)| r == i as u32) {
        return Vec::new();
    }
    let top = rows.iter().max().map_or(0, |&r| r as usize + 1);
    let mut local = vec![u32::MAX; top];
    for (i, &r) in rows.iter().enumerate() {
        local[r as usize] = i as u32;
    }
    local
}

/// Principal axes of `rows` of `states` scaled by `inv_scale`, from a sample taken at an even
/// stride: at most [`COVARIANCE_SAMPLE_ROWS`] rows and, for states wider than
/// [`JACOBI_MAX_DIM`], at most
/// [`COVARIANCE_SAMPLE_VALUES`] values (but at least [`MIN_SAMPLE_ROWS`] rows). Only the
/// leading [`SUBSPACE_TREE_DIM`]` - 1` axes are computed (see [`super::eigen`]).
pub fn principal_axes(states: &[f32], dim: usize, inv_scale: &[f32], rows: &[u32]) -> Axes {
    let n = rows.len();
    let cap = if dim <= JACOBI_MAX_DIM {
        COVARIANCE_SAMPLE_ROWS
    } else {
        (COVARIANCE_SAMPLE_VALUES / dim).clamp(MIN_SAMPLE_ROWS, COVARIANCE_SAMPLE_ROWS)
    };
    let stride = n.div_ceil(cap).max(1);
    let picked: Vec<usize> = (0..n).step_by(stride).collect();
    let mut x = Vec::with_capacity(picked.len() * dim);
    for &i in &picked {
        let r = rows[i] as usize;
        let s = &states[r * dim..(r + 1) * dim];
        x.extend(s.iter().zip(inv_scale).map(|(x, s)| f64::from(x * s)));
    }
    let count = picked.len().max(1) as f64;
    let mut mean = vec![0.0f64; dim];
    for p in x.chunks_exact(dim.max(1)) {
        for (m, &v) in mean.iter_mut().zip(p) {
            *m += v / count;
        }
    }
    for p in x.chunks_exact_mut(dim.max(1)) {
        p.iter_mut().zip(&mean).for_each(|(v, m)| *v -= m);
    }
    let lead = leading_axes(&x, picked.len(), dim, SUBSPACE_TREE_DIM - 1);
    Axes {
        dim,
        mean: mean.iter().map(|&x| x as f32).collect(),
        values: lead.values,
        total: lead.total,
        vectors: lead.vectors.iter().map(|&v| v as f32).collect(),
    }
}

impl Axes {
    /// State dimension.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Mean of the scaled states the axes were found from.
    pub fn mean(&self) -> &[f32] {
        &self.mean
    }

    /// Axis `i` (by eigenvalue, descending) as a unit vector over the scaled features.
    pub fn vector(&self, i: usize) -> Option<&[f32]> {
        self.vectors.get(i * self.dim..(i + 1) * self.dim)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn components_fill_the_narrowest_tree_that_holds_the_variance() {
        // Worked by hand. Total 10: three components hold 9.0 (90 %), seven hold 9.95
        // (99.5 % >= 99 %), so the 8-wide tree with 7 components.
        let v = [5.0, 3.0, 1.0, 0.5, 0.3, 0.1, 0.05, 0.03, 0.02];
        assert_eq!(components_for(&v, 10.0), 7);
        // One dominant axis: three components hold 100 %, the 4-wide tree.
        assert_eq!(components_for(&[1.0, 0.0, 0.0, 0.0, 0.0, 0.0], 1.0), 3);
        // Twenty equal axes: 15 hold 75 %, no tree holds 99 %: the widest, 15 components.
        assert_eq!(components_for(&[1.0; 20], 20.0), 15);
        // Only the leading values known: the total decides. 15 of 20 equal axes hold 75 %.
        assert_eq!(components_for(&[1.0; 15], 20.0), 15);
        assert_eq!(components_for(&[1.0; 3], 3.0), 3);
        // Fewer axes than a tree's components: all of them.
        assert_eq!(components_for(&[2.0, 1.0], 3.0), 2);
    }

    #[test]
    fn lane_sums_equal_the_squared_distance_for_every_length() {
        // Against the definition summed in f64 (lengths with and without a remainder).
        for n in [0usize, 1, 7, 8, 9, 16, 17, 64, 67] {
            let a: Vec<f32> = (0..n).map(|i| (i as f32 * 0.37).sin() * 3.0).collect();
            let b: Vec<f32> = (0..n).map(|i| (i as f32 * 0.11).cos()).collect();
            let want: f64 = a
                .iter()
                .zip(&b)
                .map(|(x, y)| (f64::from(*x) - f64::from(*y)).powi(2))
                .sum();
            let got = f64::from(squared_distance(&a, &b));
            assert!(
                (got - want).abs() <= 1e-5 * want.max(1.0),
                "n {n}: {got} vs {want}"
            );
        }
        assert_eq!(squared_distance(&[1.0, 2.0], &[4.0, 6.0]), 25.0);
    }
}
