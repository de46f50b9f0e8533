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
use super::ridge::{Ridge, cholesky, cholesky_solve};
use crate::review::kcenter::Cover;

/// A bump smaller than this is treated as zero in the fit (about 6.4 widths from its centre).
pub const BUMP_CUTOFF: f64 = 1e-9;

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
            centres: 100,
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
            return Err(format!(
                "{} states, {} actions",
                states.len(),
                actions.len()
            ));
        }
        let inv_scale: Features = std::array::from_fn(|j| 1.0 / scale[j]);
        let scaled: Vec<f32> = states
            .iter()
            .flat_map(|x| (0..FEATURE_COUNT).map(move |j| (x[j] * inv_scale[j]) as f32))
            .collect();
        let mut cover = Cover::new(&scaled, FEATURE_COUNT);
        let mut picks = Vec::with_capacity(s.centres);
        while picks.len() < s.centres.max(1) {
            let Some(i) = cover.farthest() else { break };
            cover.pick(i);
            picks.push(i);
        }
        let radius = (0..cover.len())
            .map(|i| f64::from(cover.distance(i)))
            .fold(1e-3, f64::max);
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
        let w = |i: usize| weights.map_or(1.0, |w| w.get(i).copied().unwrap_or(0.0));
        let mut phi = vec![0.0; m];
        let mut nz: Vec<usize> = Vec::with_capacity(m);
        // Uncentred weighted sums, accumulated over the bumps that are not negligible
        // (below BUMP_CUTOFF a bump is treated as zero, which keeps the sums sparse).
        let (mut sxx, mut sx) = (vec![0.0; m * m], vec![0.0; m]);
        let (mut sxy, mut sy, mut total) = (vec![0.0; m * 2], [0.0; 2], 0.0);
        for (i, (st, a)) in states.iter().zip(actions).enumerate() {
            let wi = w(i);
            if wi <= 0.0 {
                continue;
            }
            learner.bumps(st, &mut phi);
            nz.clear();
            nz.extend((0..m).filter(|&c| phi[c] > BUMP_CUTOFF));
            let y = a.to_array();
            total += wi;
            for k in 0..2 {
                sy[k] += wi * y[k];
            }
            for (p, &c) in nz.iter().enumerate() {
                let wc = wi * phi[c];
                sx[c] += wc;
                sxy[c * 2] += wc * y[0];
                sxy[c * 2 + 1] += wc * y[1];
                let row = &mut sxx[c * m..(c + 1) * m];
                for &d in &nz[p..] {
                    row[d] += wc * phi[d];
                }
            }
        }
        learner.model = solve(&sxx, &sx, &sxy, sy, total, m, s.lambda)?;
        Ok(learner)
    }

    fn bumps(&self, f: &Features, out: &mut [f64]) {
        let z: Features = std::array::from_fn(|j| f[j] * self.inv_scale[j]);
        for (o, c) in out.iter_mut().zip(&self.centres) {
            let mut d2 = 0.0;
            for (a, b) in z.iter().zip(c) {
                d2 += (a - b) * (a - b);
            }
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

/// Ridge weights from uncentred weighted sums: the centred Gram matrix is
/// `Sxx - Sx Sx' / W` (upper triangle given), the centred cross products `Sxy - Sx Sy' / W`,
/// and the intercept `(Sy - Sx' B) / W` (Hoerl & Kennard 1970 on centred data, unpenalised
/// intercept, as [`Ridge::fit`]); the penalty is `lambda W`.
fn solve(
    sxx: &[f64],
    sx: &[f64],
    sxy: &[f64],
    sy: [f64; 2],
    total: f64,
    m: usize,
    lambda: f64,
) -> Result<Ridge, String> {
    if total.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return Err("no row has a positive weight".into());
    }
    let mut gram = vec![0.0; m * m];
    for a in 0..m {
        for b in a..m {
            let g = sxx[a * m + b] - sx[a] * sx[b] / total;
            gram[a * m + b] = g;
            gram[b * m + a] = g;
        }
        gram[a * m + a] += lambda * total;
    }
    let rhs: Vec<f64> = (0..m * 2)
        .map(|i| sxy[i] - sx[i / 2] * sy[i % 2] / total)
        .collect();
    let l = cholesky(&gram, m).ok_or("the radial basis normal equations are singular")?;
    let coef = cholesky_solve(&l, m, &rhs, 2);
    let intercept = (0..2)
        .map(|k| (sy[k] - (0..m).map(|c| sx[c] * coef[c * 2 + k]).sum::<f64>()) / total)
        .collect();
    Ok(Ridge {
        inputs: m,
        outputs: 2,
        coef,
        intercept,
    })
}

impl Policy for RbfLearner {
    fn act(&self, obs: &Observation<'_>) -> Action {
        self.predict(obs.features)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::features::examples::{at, steering};

    /// Three states at 0, 1 and 2 (scale 1), two centres: k-center picks 0 (first), then 2
    /// (farthest); the covering radius is 1 (the state at 1), so h = 1 and
    /// phi_0(x) = exp(-x^2 / 2), phi_2(x) = exp(-(x - 2)^2 / 2). Three rows and three
    /// parameters (intercept and two weights): with no penalty the fit interpolates. For
    /// steering 0, 0.02, 0 symmetry gives equal weights c, and solving by hand
    /// c (1 + e^-2) + b = 0, 2 c e^-1/2 + b = 0.02 gives c = 0.02 / (2 e^-1/2 - 1 - e^-2)
    /// and b = -c (1 + e^-2). Far from both centres every bump vanishes: the action is b.
    #[test]
    fn three_points_two_bumps_interpolate_and_fall_back_to_the_intercept() {
        let states = [at(0.0), at(1.0), at(2.0)];
        let actions = steering(&[0.0, 0.02, 0.0], 0.1);
        let settings = RbfSettings {
            centres: 2,
            lambda: 1e-12,
            width_factor: 1.0,
        };
        let l = RbfLearner::fit(&states, &actions, None, &[1.0; FEATURE_COUNT], &settings).unwrap();
        assert_eq!(l.centres(), 2);
        for (s, a) in states.iter().zip(&actions) {
            assert!((l.predict(s).steer - a.steer).abs() < 1e-6);
            assert!((l.predict(s).accel - 0.1).abs() < 1e-6);
        }
        let e = std::f64::consts::E;
        let c = 0.02 / (2.0 / e.sqrt() - 1.0 - e.powi(-2));
        let b = -c * (1.0 + e.powi(-2));
        assert!((l.predict(&at(60.0)).steer - b).abs() < 1e-6, "{b}");
    }
}
