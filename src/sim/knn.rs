//! A local learner: distance-weighted k-nearest-neighbour regression on scaled features.
//!
//! The action at a state is the weighted mean of the actions of its `k` nearest training
//! states, neighbour `i` weighing `w_i / (d_i + eps)` (training weight over scaled distance:
//! inverse-distance weighting, Shepard 1968, "A two-dimensional interpolation function for
//! irregularly-spaced data"; k-nearest-neighbour regression, Stone 1977, "Consistent
//! nonparametric regression"). Unlike a linear model it is right where it has data and knows
//! nothing elsewhere: far from every training state it repeats its nearest neighbours' actions,
//! which is what makes coverage of the visited states matter. Search is exact, with the k-d
//! tree the novelty model uses ([`crate::novelty::index::KnnIndex`]).

use super::features::{FEATURE_COUNT, Features};
use super::policy::{Action, Observation, Policy};
use crate::novelty::index::{Hit, KnnIndex};

/// Added to every scaled distance so an exact match does not get an infinite weight.
pub const DISTANCE_FLOOR: f32 = 0.05;

/// A fitted k-nearest-neighbour learner.
pub struct KnnLearner {
    index: KnnIndex,
    inv_scale: [f32; FEATURE_COUNT],
    actions: Vec<[f32; 2]>,
    weights: Vec<f32>,
    k: usize,
}

impl std::fmt::Debug for KnnLearner {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("KnnLearner")
            .field("rows", &self.actions.len())
            .field("k", &self.k)
            .finish()
    }
}

impl KnnLearner {
    /// Fits on the rows with positive weight (`weights` default 1); features are divided by
    /// `scale` (positive, one per feature) before distances are taken.
    pub fn fit(
        states: &[Features],
        actions: &[Action],
        weights: Option<&[f64]>,
        scale: &Features,
        k: usize,
    ) -> Result<KnnLearner, String> {
        if states.len() != actions.len() || weights.is_some_and(|w| w.len() != states.len()) {
            return Err(format!(
                "{} states, {} actions, {} weights",
                states.len(),
                actions.len(),
                weights.map_or(states.len(), <[f64]>::len)
            ));
        }
        if scale
            .iter()
            .any(|s| s.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater))
        {
            return Err(format!("scales must be positive: {scale:?}"));
        }
        let w = |i: usize| weights.map_or(1.0, |w| w[i]);
        let keep: Vec<usize> = (0..states.len()).filter(|&i| w(i) > 0.0).collect();
        if keep.is_empty() || k == 0 {
            return Err("no row has a positive weight (or k is 0)".into());
        }
        let flat: Vec<f32> = keep
            .iter()
            .flat_map(|&i| states[i].iter().map(|&x| x as f32))
            .collect();
        let inv_scale: [f32; FEATURE_COUNT] = std::array::from_fn(|j| (1.0 / scale[j]) as f32);
        let rows: Vec<u32> = (0..keep.len() as u32).collect();
        let index = KnnIndex::build_plain(&flat, FEATURE_COUNT, &inv_scale, &rows)?;
        Ok(KnnLearner {
            index,
            inv_scale,
            actions: keep
                .iter()
                .map(|&i| [actions[i].steer as f32, actions[i].accel as f32])
                .collect(),
            weights: keep.iter().map(|&i| w(i) as f32).collect(),
            k,
        })
    }

    /// The learner's action for a state (clipped to the spec's bounds).
    pub fn predict(&self, f: &Features) -> Action {
        let q: [f32; FEATURE_COUNT] = std::array::from_fn(|j| f[j] as f32 * self.inv_scale[j]);
        let mut hits: Vec<Hit> = Vec::with_capacity(self.k);
        self.index.knn(&q, self.k, f32::INFINITY, &mut hits);
        let (mut sum, mut total) = ([0.0f64; 2], 0.0f64);
        for &(row, d2) in &hits {
            let r = row as usize;
            let w = f64::from(self.weights[r] / (d2.sqrt() + DISTANCE_FLOOR));
            sum[0] += w * f64::from(self.actions[r][0]);
            sum[1] += w * f64::from(self.actions[r][1]);
            total += w;
        }
        if total <= 0.0 {
            return Action::default();
        }
        Action::from_array([sum[0] / total, sum[1] / total]).clipped()
    }
}

impl Policy for KnnLearner {
    fn act(&self, obs: &Observation<'_>) -> Action {
        self.predict(obs.features)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::features::examples::{at, steering};

    #[test]
    fn inverse_distance_mean_by_hand() {
        // Training states at lateral 0, 1 and 3 (scale 1) with steering 0.0, 0.1, 0.3.
        // Query 0.5, k = 2: neighbours 0 and 1 at distance 0.5 each, equal weights 1/0.55,
        // so the steering is their mean 0.05. Query 2.5, k = 2: neighbours 3 (d 0.5, weight
        // 1/0.55) and 1 (d 1.5, weight 1/1.55): (0.3/0.55 + 0.1/1.55) / (1/0.55 + 1/1.55).
        let states = [at(0.0), at(1.0), at(3.0)];
        let actions = steering(&[0.0, 0.1, 0.3], 0.2);
        let l = KnnLearner::fit(&states, &actions, None, &[1.0; FEATURE_COUNT], 2).unwrap();
        let a = l.predict(&at(0.5));
        assert!((a.steer - 0.05).abs() < 1e-6 && (a.accel - 0.2).abs() < 1e-6);
        let (w1, w2) = (1.0 / 0.55, 1.0 / 1.55);
        let want = (0.3 * w1 + 0.1 * w2) / (w1 + w2);
        assert!((l.predict(&at(2.5)).steer - want).abs() < 1e-6);
        // Far from every state it averages its nearest neighbours (here 3 at 37, 1 at 39):
        // it stays within the actions it has seen and cannot extrapolate.
        let (w1, w2) = (1.0 / 37.05, 1.0 / 39.05);
        let want = (0.3 * w1 + 0.1 * w2) / (w1 + w2);
        assert!((l.predict(&at(40.0)).steer - want).abs() < 1e-6);
    }

    #[test]
    fn zero_weight_rows_are_left_out() {
        let states = [at(0.0), at(1.0)];
        let actions = [
            Action {
                steer: 0.1,
                accel: 0.0,
            },
            Action {
                steer: -0.4,
                accel: 0.0,
            },
        ];
        let l = KnnLearner::fit(
            &states,
            &actions,
            Some(&[1.0, 0.0]),
            &[1.0; FEATURE_COUNT],
            3,
        )
        .unwrap();
        let a = l.predict(&at(1.0));
        assert!((a.steer - 0.1).abs() < 1e-6, "{a:?}");
        assert!(
            KnnLearner::fit(
                &states,
                &actions,
                Some(&[0.0, 0.0]),
                &[1.0; FEATURE_COUNT],
                3
            )
            .is_err()
        );
    }
}
