//! Split-conformal p-values of novelty scores (Vovk, Gammerman & Shafer 2005, "Algorithmic
//! Learning in a Random World"; Bates, Candès, Lei, Romano & Sesia 2023, "Testing for outliers
//! with conformal p-values").
//!
//! With `n` calibration novelties `c_1..c_n`, the p-value of a score `s` is
//! `p(s) = (1 + #{i : c_i >= s}) / (n + 1)`. When the scored state and the calibration states
//! are exchangeable, `P(p(s) <= alpha) <= alpha`: at most an `alpha` share of fresh
//! expert-like states is flagged.

/// The smallest flag level `n` calibration scores can resolve: the smallest p-value,
/// `1 / (n + 1)`. Below it nothing can ever be flagged.
pub fn smallest_alpha(n: usize) -> f64 {
    1.0 / (n + 1) as f64
}

/// Sorted calibration novelties and the flag level.
#[derive(Debug, Clone, PartialEq)]
pub struct Conformal {
    sorted: Vec<f32>,
    alpha: f64,
}

impl Conformal {
    /// Calibration from raw novelties (any order; NaN values are dropped) and a flag level.
    pub fn new(mut scores: Vec<f32>, alpha: f64) -> Self {
        scores.retain(|s| !s.is_nan());
        scores.sort_by(f32::total_cmp);
        Conformal {
            sorted: scores,
            alpha,
        }
    }

    /// Number of calibration scores.
    pub fn len(&self) -> usize {
        self.sorted.len()
    }

    /// True when there is no calibration score.
    pub fn is_empty(&self) -> bool {
        self.sorted.is_empty()
    }

    /// The flag level.
    pub fn alpha(&self) -> f64 {
        self.alpha
    }

    /// The calibration novelties, ascending.
    pub fn scores(&self) -> &[f32] {
        &self.sorted
    }

    /// Number of calibration scores at least `s`.
    pub fn count_at_least(&self, s: f32) -> usize {
        self.sorted.len() - self.sorted.partition_point(|&c| c < s)
    }

    /// The conformal p-value of a novelty score.
    pub fn p_value(&self, s: f32) -> f64 {
        let n = self.sorted.len();
        (1 + self.count_at_least(s)) as f64 / (n + 1) as f64
    }

    /// Whether a score is flagged (`p <= alpha`).
    pub fn flagged(&self, s: f32) -> bool {
        self.p_value(s) <= self.alpha
    }

    /// Largest count `m` of calibration scores at or above a score that still gives
    /// `p <= alpha`, or `None` when even `m = 0` does not (then nothing can be flagged).
    fn max_count(&self) -> Option<usize> {
        let n1 = (self.sorted.len() + 1) as f64;
        let guess = (self.alpha * n1).floor() as i64 - 1;
        let ok = |m: i64| m >= 0 && (1 + m) as f64 / n1 <= self.alpha;
        let mut m = guess.max(-1);
        while ok(m + 1) {
            m += 1;
        }
        while m >= 0 && !ok(m) {
            m -= 1;
        }
        (m >= 0).then_some(m as usize)
    }

    /// The novelty above which a score is flagged: the calibration order statistic
    /// `c_(ceil((n + 1)(1 - alpha)))`. A score `s` has `p(s) <= alpha` exactly when
    /// `s > threshold`. Infinite when `alpha < 1 / (n + 1)` (too few calibration scores to
    /// ever flag at this level).
    pub fn threshold(&self) -> f32 {
        match self.max_count() {
            Some(m) if m < self.sorted.len() => self.sorted[self.sorted.len() - 1 - m],
            Some(_) => f32::NEG_INFINITY,
            None => f32::INFINITY,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn p_values_of_a_hand_worked_example() {
        // Calibration 1..=19 (n = 19). By hand: p(19.5) = 1/20, p(19) = 2/20,
        // p(10) = (1 + 10)/20, p(0) = 20/20.
        let c = Conformal::new((1..=19).map(|i| i as f32).rev().collect(), 0.05);
        assert_eq!(c.p_value(19.5), 0.05);
        assert_eq!(c.p_value(19.0), 0.10);
        assert_eq!(c.p_value(10.0), 0.55);
        assert_eq!(c.p_value(0.0), 1.0);
        // ceil(20 * 0.95) = 19: the 19th smallest is 19, so scores above 19 are flagged.
        assert_eq!(c.threshold(), 19.0);
        assert!(c.flagged(19.01) && !c.flagged(19.0));
    }

    #[test]
    fn the_smallest_alpha_is_the_smallest_p_value() {
        // By hand: 1197 calibration scores give p-values k/1198, the smallest 1/1198.
        assert_eq!(smallest_alpha(1197), 1.0 / 1198.0);
        let c = Conformal::new(vec![1.0; 1197], smallest_alpha(1197));
        assert!(c.flagged(2.0) && c.threshold().is_finite());
        let below = Conformal::new(vec![1.0; 1197], 0.0005);
        assert_eq!(below.threshold(), f32::INFINITY);
    }

    #[test]
    fn too_few_calibration_scores_never_flag() {
        // n = 10, alpha 0.05: the smallest possible p-value is 1/11 > 0.05.
        let c = Conformal::new((0..10).map(|i| i as f32).collect(), 0.05);
        assert_eq!(c.threshold(), f32::INFINITY);
        assert!(!c.flagged(1e9));
    }
}
