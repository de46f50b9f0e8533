//! The map's two axes: the spec's declared position pair, or else the first two principal
//! components (Pearson 1901; Jolliffe 2002, *Principal Component Analysis*) of the
//! demonstration states in the novelty's metric: the same per-feature scales
//! ([`crate::novelty::scale`]) and the same principal axes ([`crate::novelty::subspace`]) the
//! novelty distance uses, so the map shows the distances it colours.

use crate::campaign::{Spec, StepTable};
use crate::novelty::scale::feature_scales;
use crate::novelty::subspace::principal_axes;
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
    /// as the novelty scales them (the spec's `scale`, else the demonstrations' floored MAD).
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
        // The novelty's metric: its per-feature scales and its principal axes.
        let scale = feature_scales(spec, demos);
        let inv: Vec<f32> = scale.iter().map(|s| 1.0 / s).collect();
        progress.advance(1);
        let rows: Vec<u32> = (0..demos.len() as u32).collect();
        let axes = principal_axes(&demos.states, d, &inv, &rows);
        progress.advance(1);
        let total = axes.total.max(f64::MIN_POSITIVE);
        let pick = |r: usize| -> (Vec<f32>, f64) {
            match (axes.values.get(r), axes.vector(r)) {
                (Some(&val), Some(v)) => {
                    let sign = largest_sign(v);
                    let w = v.iter().zip(&inv).map(|(v, i)| sign * v * i).collect();
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
            center: axes.mean().iter().zip(&scale).map(|(m, s)| m * s).collect(),
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

/// The sign that makes a vector's largest-magnitude component positive, so the map's axes do
/// not flip with rounding.
fn largest_sign(v: &[f32]) -> f32 {
    let big = v
        .iter()
        .copied()
        .fold(0.0f32, |m, x| if x.abs() > m.abs() { x } else { m });
    if big < 0.0 { -1.0 } else { 1.0 }
}
