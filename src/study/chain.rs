//! A two-state chain, inside and outside the demonstrated states: an exact check of why
//! aggregation helps.
//!
//! A learner acts for `T` steps, starting inside the demonstrated states (the states the
//! expert's own policy visits). In every step, with probability `eps` it takes an action the
//! expert would not take. Being outside the demonstrated states after a step costs 1.
//!
//! * **Behaviour cloning** was trained only on states the expert visited. In the words of
//!   Ross, Gordon & Bagnell (2011), once the learner makes a mistake it may encounter
//!   completely different observations than those under expert demonstration, leading to a
//!   compounding of errors (quoted from memory). The chain takes the worst case of that
//!   argument: the learner's training says nothing about the states outside, so once there
//!   it stays there (the outside state is absorbing). With `q = 1 - eps`, P(outside after step t) = 1 - q^t, so
//!   the expected cost is
//!
//!   `J_bc(T) = sum_{t=1..T} (1 - q^t) = T - q (1 - q^T) / eps`,
//!
//!   which for small `eps T` is about `eps T (T + 1) / 2`: quadratic in the horizon.
//!
//! * **The aggregated learner** was also trained on the expert's actions in the states the
//!   learner itself visited, including those outside the demonstrated states (where the
//!   expert's action returns inside in one step), and errs there with the same `eps`. Let
//!   p_t = P(outside after step t). From inside it leaves with probability eps; from outside
//!   it stays outside (errs again) with probability eps; so
//!   p_t = eps (1 - p_{t-1}) + eps p_{t-1} = eps for every t >= 1, and
//!
//!   `J_agg(T) = eps T`: linear in the horizon.
//!
//! These are the two regimes of Ross & Bagnell (2010), "Efficient reductions for imitation
//! learning", and Ross, Gordon & Bagnell (2011), "A reduction of imitation learning and
//! structured prediction to no-regret online learning" (O(eps T^2) against O(eps T)); the
//! two-state chain and the derivation above are this module's own.

/// Which learner walks the chain.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChainLearner {
    /// Trained on the demonstrated states alone: the outside state is absorbing.
    BehaviourCloning,
    /// Trained on the expert's actions in its own states too: returns inside with
    /// probability `1 - eps`.
    Aggregated,
}

/// Exact expected cost over horizon `t_max` with per-step error `eps`.
pub fn expected_cost(learner: ChainLearner, eps: f64, t_max: u32) -> f64 {
    let t = f64::from(t_max);
    match learner {
        ChainLearner::BehaviourCloning => {
            let q = 1.0 - eps;
            t - q * (1.0 - q.powf(t)) / eps
        }
        ChainLearner::Aggregated => eps * t,
    }
}

/// Mean and standard error of the cost over `episodes` simulated episodes.
pub fn simulate(
    learner: ChainLearner,
    eps: f64,
    t_max: u32,
    episodes: u32,
    seed: u64,
) -> (f64, f64) {
    let mut rng = crate::sim::rng::SplitMix64::new(seed);
    let (mut sum, mut sum_sq) = (0.0, 0.0);
    for _ in 0..episodes {
        let mut outside = false;
        let mut cost = 0.0;
        for _ in 0..t_max {
            let error = rng.uniform() < eps;
            outside = match (learner, outside) {
                (_, false) => error,
                (ChainLearner::BehaviourCloning, true) => true,
                (ChainLearner::Aggregated, true) => error,
            };
            cost += f64::from(u8::from(outside));
        }
        sum += cost;
        sum_sq += cost * cost;
    }
    let n = f64::from(episodes);
    let mean = sum / n;
    let var = (sum_sq / n - mean * mean).max(0.0) * n / (n - 1.0).max(1.0);
    (mean, (var / n).sqrt())
}

/// Least-squares slope of log(cost) against log(T): about 2 for behaviour cloning in the
/// small-`eps T` regime, exactly 1 for the aggregated learner.
pub fn log_log_slope(points: &[(u32, f64)]) -> f64 {
    let xs: Vec<f64> = points.iter().map(|(t, _)| f64::from(*t).ln()).collect();
    let ys: Vec<f64> = points.iter().map(|(_, c)| c.ln()).collect();
    let n = xs.len() as f64;
    let (mx, my) = (xs.iter().sum::<f64>() / n, ys.iter().sum::<f64>() / n);
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
    let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
    sxy / sxx
}

#[cfg(test)]
mod tests {
    use super::*;

    const HORIZONS: [u32; 4] = [10, 20, 40, 80];

    /// Hand check of the closed form at T = 2: P(outside after 1) = eps, P(outside after 2) =
    /// 1 - (1 - eps)^2, so J = eps + 2 eps - eps^2 = 3 eps - eps^2.
    #[test]
    fn closed_forms_match_hand_sums() {
        let eps = 0.1;
        let bc = expected_cost(ChainLearner::BehaviourCloning, eps, 2);
        assert!((bc - (3.0 * eps - eps * eps)).abs() < 1e-12);
        let direct: f64 = (1..=50).map(|t| 1.0 - (1.0 - eps).powi(t)).sum();
        assert!((expected_cost(ChainLearner::BehaviourCloning, eps, 50) - direct).abs() < 1e-9);
        assert!((expected_cost(ChainLearner::Aggregated, eps, 50) - 5.0).abs() < 1e-12);
    }

    /// Simulation within 4 standard errors of the exact value at several horizons (a
    /// normal approximation of the mean of 40,000 episodes: common practice).
    #[test]
    fn simulation_matches_the_exact_costs() {
        for (i, &t) in HORIZONS.iter().enumerate() {
            for learner in [ChainLearner::BehaviourCloning, ChainLearner::Aggregated] {
                let exact = expected_cost(learner, 0.01, t);
                let (mean, se) = simulate(learner, 0.01, t, 40_000, 7 + i as u64);
                assert!(
                    (mean - exact).abs() < 4.0 * se,
                    "{learner:?} T={t}: {mean} vs {exact} (se {se})"
                );
            }
        }
    }

    /// Log-log slopes: near 2 for behaviour cloning (eps T <= 0.16 keeps it quadratic),
    /// 1 for the aggregated learner; on the simulated means too. The orders come from Ross
    /// & Bagnell (2010); the ranges 1.85..2 (exact) and 1.75..2.1 / 0.9..1.1 (simulated) are
    /// our own allowance for the small-`eps T` regime and sampling noise.
    #[test]
    fn cost_grows_quadratically_for_cloning_and_linearly_with_aggregation() {
        let eps = 0.002;
        let exact = |l| {
            HORIZONS
                .iter()
                .map(|&t| (t, expected_cost(l, eps, t)))
                .collect::<Vec<_>>()
        };
        let bc = log_log_slope(&exact(ChainLearner::BehaviourCloning));
        let agg = log_log_slope(&exact(ChainLearner::Aggregated));
        assert!((1.85..=2.0).contains(&bc), "{bc}");
        assert!((agg - 1.0).abs() < 1e-9, "{agg}");
        let sim = |l| {
            HORIZONS
                .iter()
                .map(|&t| (t, simulate(l, eps, t, 60_000, u64::from(t)).0))
                .collect::<Vec<_>>()
        };
        let bc_sim = log_log_slope(&sim(ChainLearner::BehaviourCloning));
        let agg_sim = log_log_slope(&sim(ChainLearner::Aggregated));
        assert!((1.75..=2.1).contains(&bc_sim), "{bc_sim}");
        assert!((0.9..=1.1).contains(&agg_sim), "{agg_sim}");
    }
}
