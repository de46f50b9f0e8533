//! The map's two axes: the spec's declared position pair, or else the first two principal
//! components (Pearson 1901; Jolliffe 2002, *Principal Component Analysis*) of the scaled
//! demonstration states.

use crate::campaign::{Spec, StepTable};
use crate::novelty::eigen::{JACOBI_MAX_DIM, leading_axes};
use crate::novelty::subspace::{COVARIANCE_SAMPLE_VALUES, MIN_SAMPLE_ROWS};
use crate::progress::Progress;

/// How the map's axes were chosen.
#[derive(Debug, Clone, PartialEq)]
pub enum ProjectionKind {
    /// The spec's declared position features, in their own units.
    Declared([usize; 2]),
    /// The first two principal components of the scaled demonstration states, with the share
    /// of the scaled variance each explains.
    Principal {
        /// Share of total variance explained by each axis.
        explained: [f64; 2],
    },
}

/// A linear map from a state vector to two map coordinates.
#[derive(Debug, Clone, PartialEq)]
pub struct Projection {
    /// How the axes were chosen.
    pub kind: ProjectionKind,
    /// Axis captions ("x [m]" or "PC1 (62%)").
    pub labels: [String; 2],
    /// Per-feature offset subtracted before weighting.
    center: Vec<f32>,
    /// Weights of each axis, one per feature (already divided by the feature scale).
    weights: [Vec<f32>; 2],
}

impl Projection {
    /// Chooses the axes for `spec` over the demonstrations: the declared position pair when the
    /// spec has one, otherwise principal components of the states scaled feature by feature
    /// (the spec's `scale`, else the demonstrations' standard deviation, else 1).
    pub fn fit(spec: &Spec, demos: &StepTable, progress: &Progress) -> Projection {
        let d = demos.state_dim;
        if let Some([a, b]) = spec.position_indices() {
            let unit = |i: usize| match spec.features[i].unit.as_str() {
                "" => spec.features[i].name.clone(),
                u => format!("{} [{u}]", spec.features[i].name),
            };
            let axis = |i: usize| (0..d).map(|j| f32::from(u8::from(i == j))).collect();
            return Projection {
                kind: ProjectionKind::Declared([a, b]),
                labels: [unit(a), unit(b)],
                center: vec![0.0; d],
                weights: [axis(a), axis(b)],
            };
        }
        progress.stage("projecting", 2);
        let (mean, sd) = moments(demos);
        progress.advance(1);
        let scale: Vec<f64> = (0..d)
            .map(|j| match spec.features.get(j).and_then(|f| f.scale) {
                Some(s) => s,
                None if sd[j] > 0.0 => sd[j],
                None => 1.0,
            })
            .collect();
        let (values, vectors, total) = if d <= JACOBI_MAX_DIM {
            let (values, vectors) = symmetric_eigen(covariance(demos, &mean, &scale), d);
            let total: f64 = values.iter().map(|v| v.max(0.0)).sum();
            (values, vectors, total)
        } else {
            wide_axes(demos, &mean, &scale)
        };
        progress.advance(1);
        let total = total.max(f64::MIN_POSITIVE);
        let pick = |r: usize| -> (Vec<f32>, f64) {
            match (values.get(r), vectors.get(r)) {
                (Some(&val), Some(vec)) => {
                    let w = vec
                        .iter()
                        .zip(&scale)
                        .map(|(v, s)| (v / s) as f32)
                        .collect();
                    (w, val.max(0.0) / total)
                }
                _ => (vec![0.0; d], 0.0),
            }
        };
        let (w0, e0) = pick(0);
        let (w1, e1) = pick(1);
        Projection {
            kind: ProjectionKind::Principal {
                explained: [e0, e1],
            },
            labels: [
                format!("PC1 ({:.0}% of variance)", e0 * 100.0),
                format!("PC2 ({:.0}% of variance)", e1 * 100.0),
            ],
            center: mean.iter().map(|&m| m as f32).collect(),
            weights: [w0, w1],
        }
    }

    /// The map coordinates of one state.
    pub fn project(&self, state: &[f32]) -> [f32; 2] {
        let mut out = [0.0f32; 2];
        for (o, w) in out.iter_mut().zip(&self.weights) {
            *o = state
                .iter()
                .zip(&self.center)
                .zip(w)
                .map(|((s, c), w)| (s - c) * w)
                .sum();
        }
        out
    }

    /// The map coordinates of every row of a table, in row order.
    pub fn project_all(&self, table: &StepTable, progress: &Progress) -> Vec<[f32; 2]> {
        let d = table.state_dim.max(1);
        progress.stage("projecting states", table.len() as u64);
        let mut out = Vec::with_capacity(table.len());
        for chunk in table.states.chunks(d * 65_536) {
            if progress.is_cancelled() {
                break;
            }
            out.extend(chunk.chunks_exact(d).map(|s| self.project(s)));
            progress.advance((chunk.len() / d) as u64);
        }
        out
    }
}

fn moments(t: &StepTable) -> (Vec<f64>, Vec<f64>) {
    let d = t.state_dim;
    let n = t.len().max(1) as f64;
    let mut mean = vec![0.0; d];
    for s in t.states.chunks_exact(d.max(1)) {
        mean.iter_mut().zip(s).for_each(|(m, &v)| *m += v as f64);
    }
    mean.iter_mut().for_each(|m| *m /= n);
    let mut var = vec![0.0; d];
    for s in t.states.chunks_exact(d.max(1)) {
        for ((v, &x), m) in var.iter_mut().zip(s).zip(&mean) {
            *v += (x as f64 - m).powi(2);
        }
    }
    let sd = var.iter().map(|v| (v / n).sqrt()).collect();
    (mean, sd)
}

/// The two leading axes of wide states (more than [`JACOBI_MAX_DIM`] features), from rows
/// taken at an even stride, by the bounded routine of [`crate::novelty::eigen`]; with their
/// eigenvalues and the total variance of the sample.
fn wide_axes(t: &StepTable, mean: &[f64], scale: &[f64]) -> (Vec<f64>, Vec<Vec<f64>>, f64) {
    let d = t.state_dim;
    let cap = (COVARIANCE_SAMPLE_VALUES / d).max(MIN_SAMPLE_ROWS);
    let stride = t.len().div_ceil(cap).max(1);
    let mut x = Vec::new();
    for s in t.states.chunks_exact(d).step_by(stride) {
        x.extend(
            s.iter()
                .zip(mean)
                .zip(scale)
                .map(|((&v, m), sc)| (f64::from(v) - m) / sc),
        );
    }
    let lead = leading_axes(&x, x.len() / d, d, 2);
    let vectors = lead
        .vectors
        .chunks_exact(d)
        .map(|v| {
            let big = v
                .iter()
                .copied()
                .fold(0.0f64, |m, x| if x.abs() > m.abs() { x } else { m });
            v.iter().map(|x| if big < 0.0 { -x } else { *x }).collect()
        })
        .collect();
    (lead.values, vectors, lead.total)
}

/// Covariance (divided by n) of the states after centring by `mean` and dividing by `scale`.
fn covariance(t: &StepTable, mean: &[f64], scale: &[f64]) -> Vec<f64> {
    let d = t.state_dim;
    let mut cov = vec![0.0; d * d];
    let mut z = vec![0.0; d];
    for s in t.states.chunks_exact(d.max(1)) {
        for (((zj, &x), m), sc) in z.iter_mut().zip(s).zip(mean).zip(scale) {
            *zj = (x as f64 - m) / sc;
        }
        for i in 0..d {
            for j in i..d {
                cov[i * d + j] += z[i] * z[j];
            }
        }
    }
    let n = t.len().max(1) as f64;
    for i in 0..d {
        for j in i..d {
            cov[i * d + j] /= n;
            cov[j * d + i] = cov[i * d + j];
        }
    }
    cov
}

/// Eigenvalues (descending) and unit eigenvectors of a symmetric `d x d` matrix by the cyclic
/// Jacobi method (Golub & Van Loan, *Matrix Computations*, 4th ed., section 8.5). Each vector's
/// largest-magnitude component is made positive so the result does not depend on rounding.
pub fn symmetric_eigen(mut a: Vec<f64>, d: usize) -> (Vec<f64>, Vec<Vec<f64>>) {
    let mut v = vec![0.0; d * d];
    (0..d).for_each(|i| v[i * d + i] = 1.0);
    for _sweep in 0..64 {
        let off: f64 = (0..d)
            .flat_map(|i| (0..d).filter(move |&j| j != i).map(move |j| (i, j)))
            .map(|(i, j)| a[i * d + j].powi(2))
            .sum();
        if off < 1e-24 {
            break;
        }
        for p in 0..d {
            for q in p + 1..d {
                jacobi_rotate(&mut a, &mut v, d, p, q);
            }
        }
    }
    let mut order: Vec<usize> = (0..d).collect();
    order.sort_by(|&i, &j| a[j * d + j].total_cmp(&a[i * d + i]));
    let values = order.iter().map(|&i| a[i * d + i]).collect();
    let vectors = order
        .iter()
        .map(|&c| {
            let mut col: Vec<f64> = (0..d).map(|r| v[r * d + c]).collect();
            let big = col
                .iter()
                .copied()
                .fold(0.0f64, |m, x| if x.abs() > m.abs() { x } else { m });
            if big < 0.0 {
                col.iter_mut().for_each(|x| *x = -*x);
            }
            col
        })
        .collect();
    (values, vectors)
}

fn jacobi_rotate(a: &mut [f64], v: &mut [f64], d: usize, p: usize, q: usize) {
    let apq = a[p * d + q];
    if apq.abs() < 1e-300 {
        return;
    }
    let theta = (a[q * d + q] - a[p * d + p]) / (2.0 * apq);
    let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
    let t = if theta == 0.0 { 1.0 } else { t };
    let c = 1.0 / (t * t + 1.0).sqrt();
    let s = t * c;
    for k in 0..d {
        let (akp, akq) = (a[k * d + p], a[k * d + q]);
        a[k * d + p] = c * akp - s * akq;
        a[k * d + q] = s * akp + c * akq;
    }
    for k in 0..d {
        let (apk, aqk) = (a[p * d + k], a[q * d + k]);
        a[p * d + k] = c * apk - s * aqk;
        a[q * d + k] = s * apk + c * aqk;
    }
    for k in 0..d {
        let (vkp, vkq) = (v[k * d + p], v[k * d + q]);
        v[k * d + p] = c * vkp - s * vkq;
        v[k * d + q] = s * vkp + c * vkq;
    }
}
