//! The linear learner: ridge regression from state features to actions; and a bootstrap
//! ensemble of any of the learners of [`super::model`].
//!
//! Features are standardised with the (weighted) training mean and spread before the fit,
//! and the penalty is per unit of training weight, so one `lambda` means the same for any
//! amount of data. Ensemble members are fit on bootstrap resamples (Efron 1979) expressed as
//! per-row multiplicities, as in bagging (Breiman 1996).

use super::features::{FEATURE_COUNT, Features};
use super::model::{LearnerKind, Model};
use super::policy::{Action, Observation, Policy};
use super::ridge::{Ridge, RidgeError};
use super::rng::SplitMix64;

/// A linear policy fit by ridge regression.
#[derive(Debug, Clone, PartialEq)]
pub struct Learner {
    mean: Features,
    spread: Features,
    model: Ridge,
}

impl Learner {
    /// Fits one learner. `weights` (one per row, default 1) scale each row's squared error;
    /// `lambda` is the ridge penalty per unit of total weight on standardised features.
    pub fn fit(
        states: &[Features],
        actions: &[Action],
        weights: Option<&[f64]>,
        lambda: f64,
    ) -> Result<Learner, RidgeError> {
        if states.len() != actions.len() {
            return Err(RidgeError::Shape(format!(
                "{} states but {} actions",
                states.len(),
                actions.len()
            )));
        }
        let w = |i: usize| weights.map_or(1.0, |w| w.get(i).copied().unwrap_or(0.0));
        let total: f64 = (0..states.len()).map(w).sum();
        if total.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            return Err(RidgeError::NoWeight);
        }
        let mut mean = [0.0; FEATURE_COUNT];
        let mut spread = [0.0; FEATURE_COUNT];
        for j in 0..FEATURE_COUNT {
            mean[j] = (0..states.len()).map(|i| w(i) * states[i][j]).sum::<f64>() / total;
            let var = (0..states.len())
                .map(|i| w(i) * (states[i][j] - mean[j]).powi(2))
                .sum::<f64>()
                / total;
            spread[j] = if var > 1e-18 { var.sqrt() } else { 1.0 };
        }
        let x: Vec<f64> = states
            .iter()
            .flat_map(|s| (0..FEATURE_COUNT).map(move |j| (s[j] - mean[j]) / spread[j]))
            .collect();
        let y: Vec<f64> = actions.iter().flat_map(|a| a.to_array()).collect();
        let model = Ridge::fit(&x, FEATURE_COUNT, &y, 2, weights, lambda * total)?;
        Ok(Learner {
            mean,
            spread,
            model,
        })
    }

    /// The learner's action for a state (clipped to the spec's bounds).
    pub fn predict(&self, f: &Features) -> Action {
        let z: Features = std::array::from_fn(|j| (f[j] - self.mean[j]) / self.spread[j]);
        let mut out = [0.0; 2];
        self.model.predict(&z, &mut out);
        Action::from_array(out).clipped()
    }

    /// Coefficients in raw feature units, per action channel: `coef[channel][feature]`.
    pub fn raw_coefficients(&self) -> [Features; 2] {
        std::array::from_fn(|k| {
            std::array::from_fn(|j| self.model.coef[j * 2 + k] / self.spread[j])
        })
    }
}

impl Policy for Learner {
    fn act(&self, obs: &Observation<'_>) -> Action {
        self.predict(obs.features)
    }
}

/// Several learners fit on bootstrap resamples of the same data.
#[derive(Debug)]
pub struct Ensemble {
    /// The members.
    pub members: Vec<Model>,
}

impl Ensemble {
    /// Fits `size` members of `kind` (`lambda`: the ridge learner's penalty), each on a
    /// bootstrap resample of the rows (drawn with the generator seeded by `seed`); row
    /// weights multiply the resample counts.
    #[allow(clippy::too_many_arguments)]
    pub fn bootstrap(
        kind: LearnerKind,
        states: &[Features],
        actions: &[Action],
        weights: Option<&[f64]>,
        lambda: f64,
        size: usize,
        seed: u64,
    ) -> Result<Ensemble, String> {
        let n = states.len();
        let mut rng = SplitMix64::new(seed);
        let mut members = Vec::with_capacity(size);
        for _ in 0..size {
            let mut counts = vec![0.0; n];
            for _ in 0..n {
                counts[rng.index(n)] += 1.0;
            }
            if let Some(w) = weights {
                for (c, w) in counts.iter_mut().zip(w) {
                    *c *= w;
                }
            }
            members.push(Model::fit_one(
                kind,
                states,
                actions,
                Some(&counts),
                lambda,
            )?);
        }
        Ok(Ensemble { members })
    }

    /// Each member's action for a state.
    pub fn samples(&self, f: &Features) -> Vec<Action> {
        self.members.iter().map(|m| m.predict(f)).collect()
    }
}

impl Policy for Ensemble {
    /// The members' mean action.
    fn act(&self, obs: &Observation<'_>) -> Action {
        let s = self.samples(obs.features);
        let n = s.len().max(1) as f64;
        Action {
            steer: s.iter().map(|a| a.steer).sum::<f64>() / n,
            accel: s.iter().map(|a| a.accel).sum::<f64>() / n,
        }
        .clipped()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn data() -> (Vec<Features>, Vec<Action>) {
        let mut rng = SplitMix64::new(4);
        let states: Vec<Features> = (0..200)
            .map(|_| std::array::from_fn(|_| rng.normal()))
            .collect();
        let actions = states
            .iter()
            .map(|s| Action {
                steer: 0.1 * s[0] - 0.05 * s[3],
                accel: 0.2 + 0.1 * s[2],
            })
            .collect();
        (states, actions)
    }

    #[test]
    fn a_linear_expert_is_recovered_in_raw_units() {
        let (states, actions) = data();
        let l = Learner::fit(&states, &actions, None, 1e-9).unwrap();
        let c = l.raw_coefficients();
        assert!((c[0][0] - 0.1).abs() < 1e-6 && (c[0][3] + 0.05).abs() < 1e-6);
        assert!((c[1][2] - 0.1).abs() < 1e-6 && c[1][0].abs() < 1e-6);
        let a = l.predict(&[1.0, 0.0, 2.0, 0.0, 0.0, 0.0, 0.0]);
        assert!((a.steer - 0.1).abs() < 1e-6 && (a.accel - 0.4).abs() < 1e-6);
    }

    #[test]
    fn bootstrap_members_differ_but_agree_roughly() {
        let (states, mut actions) = data();
        let mut rng = SplitMix64::new(9);
        for a in &mut actions {
            a.steer += 0.02 * rng.normal();
        }
        let e =
            Ensemble::bootstrap(LearnerKind::Ridge, &states, &actions, None, 0.01, 4, 1).unwrap();
        let s = e.samples(&states[0]);
        assert_eq!(s.len(), 4);
        assert!(s[0] != s[1]);
        // Our own bound: members fit to the same data within the label noise (0.02).
        assert!(s.iter().all(|a| (a.steer - s[0].steer).abs() < 0.02));
    }
}
