//! A local learner: ridge regression on Gaussian radial basis functions.
//!
//! The state (divided by per-feature scales) is mapped to `m` Gaussian bumps
//! `phi_c(x) = exp(-|x - c|^2 / (2 h^2))` centred on a greedy k-center subset of the training
//! states ([`crate::review::kcenter`], Gonzalez 1985), and the actions are a ridge regression on
//! those bumps with a small penalty (radial basis function networks, Broomhead & Lowe 1988,
//! "Multivariable functional interpolation and adaptive networks"; centres from the data and a
//! linear solve for the weights as in Moody & Darken 1989). The width `h` is the covering
//! radius of the centres (every training state lies within `h` of a centre), so neighbouring
//! bumps overlap and the fit is smooth. Far from every centre all bumps vanish and the learner
//! falls back to its intercept (the mean action): it is right where it has data and wrong
//! where it has none.

use super::features::{FEATURE_COUNT, Features};
use super::policy::{Action, Observation, Policy};
use super::ridge::Ridge;
use crate::review::kcenter::greedy_k_center;

/// A fitted radial basis function learner.
#[derive(Debug, Clone, PartialEq)]
pub struct RbfLearner {
    inv_scale: Features,
    centres: Vec<Features>,
    inv_two_h2: f64,
    model: Ridge,
}

/// How an [`RbfLearner`] is fitted.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RbfSettings {
    /// Most centres (fewer when there are fewer distinct training states).
    pub centres: usize,
    /// Ridge penalty per unit of total training weight.
    pub lambda: f64,
    /// Width as a multiple of the centres' covering radius.
    pub width_factor: f64,
}

impl Default for RbfSettings {
    fn default() -> Self {
        RbfSettings {
            centres: 150,
            lambda: 1e-4,
            width_factor: 1.0,
        }
    }
}

impl RbfLearner {
    /// Fits on `states` and `actions` (`weights` default 1); features are divided by `scale`.
    pub fn fit(
        states: &[Features],
        actions: &[Action],
        weights: Option<&[f64]>,
        scale: &Features,
        s: &RbfSettings,
    ) -> Result<RbfLearner, String> {
        if states.len() != actions.len() || states.is_empty() {
            return Err(format!("{} states, {} actions", states.len(), actions.len()));
        }
        let inv_scale: Features = std::array::from_fn(|j| 1.0 / scale[j]);
        let scaled: Vec<f32> = states
            .iter()
            .flat_map(|x| (0..FEATURE_COUNT).map(move |j| (x[j] * inv_scale[j]) as f32))
            .collect();
        let (picks, radii) = greedy_k_center(&scaled, FEATURE_COUNT, &[], s.centres.max(1));
        let radius = f64::from(radii.last().copied().unwrap_or(1.0)).max(1e-3);
        let h = radius * s.width_factor;
        let centres: Vec<Features> = picks
            .iter()
            .map(|&i| std::array::from_fn(|j| f64::from(scaled[i * FEATURE_COUNT + j])))
            .collect();
        let mut learner = RbfLearner {
            inv_scale,
            centres,
            inv_two_h2: 1.0 / (2.0 * h * h),
            model: Ridge {
                inputs: 0,
                outputs: 2,
                coef: Vec::new(),
                intercept: vec![0.0; 2],
            },
        };
        let m = learner.centres.len();
        let mut x = Vec::with_capacity(states.len() * m);
        let mut phi = vec![0.0; m];
        for st in states {
            learner.bumps(st, &mut phi);
            x.extend_from_slice(&phi);
        }
        let y: Vec<f64> = actions.iter().flat_map(|a| a.to_array()).collect();
        let total: f64 = weights.map_or(states.len() as f64, |w| w.iter().sum());
        learner.model = Ridge::fit(&x, m, &y, 2, weights, s.lambda * total.max(1e-12))
            .map_err(|e| e.to_string())?;
        Ok(learner)
    }

    fn bumps(&self, f: &Features, out: &mut [f64]) {
        let z: Features = std::array::from_fn(|j| f[j] * self.inv_scale[j]);
        for (o, c) in out.iter_mut().zip(&self.centres) {
            let d2: f64 = z.iter().zip(c).map(|(a, b)| (a - b) * (a - b)).sum();
            *o = (-d2 * self.inv_two_h2).exp();
        }
    }

    /// Number of centres.
    pub fn centres(&self) -> usize {
        self.centres.len()
    }

    /// The learner's action for a state (clipped to the spec's bounds).
    pub fn predict(&self, f: &Features) -> Action {
        let mut phi = vec![0.0; self.centres.len()];
        self.bumps(f, &mut phi);
        let mut out = [0.0; 2];
        self.model.predict(&phi, &mut out);
        Action::from_array(out).clipped()
    }
}

impl Policy for RbfLearner {
    fn act(&self, obs: &Observation<'_>) -> Action {
        self.predict(obs.features)
    }
}
