//! Krippendorff's alpha, the agreement coefficient of several annotators with missing values.
//!
//! Krippendorff, K. (2011). "Computing Krippendorff's Alpha-Reliability", Annenberg School for
//! Communication, University of Pennsylvania. With `n` pairable values (those in units with at
//! least two values), observed disagreement `D_o = (1/n) Σ_u Σ_{i≠j in u} δ²(v_i, v_j) /
//! (m_u - 1)` and expected disagreement `D_e = Σ_{i≠j over all} δ²(v_i, v_j) / (n (n - 1))`,
//! `alpha = 1 - D_o / D_e`. This is the coincidence-matrix form of the paper written over
//! values; δ² is `(a - b)²` for the interval metric and `[a ≠ b]` for the nominal one.

/// The difference function between two values.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Metric {
    /// Values are labels: any two different values differ by 1.
    Nominal,
    /// Values are numbers on an interval scale: squared difference.
    Interval,
}

impl Metric {
    /// The metric's name.
    pub fn name(self) -> &'static str {
        match self {
            Metric::Nominal => "nominal",
            Metric::Interval => "interval",
        }
    }
}

/// Sum of δ² over ordered pairs `i ≠ j` of `values`.
fn pair_sum(values: &[f64], metric: Metric) -> f64 {
    let m = values.len() as f64;
    match metric {
        Metric::Interval => {
            let mean = values.iter().sum::<f64>() / m;
            2.0 * m * values.iter().map(|v| (v - mean).powi(2)).sum::<f64>()
        }
        Metric::Nominal => {
            let mut sorted = values.to_vec();
            sorted.sort_by(f64::total_cmp);
            let same: f64 = sorted
                .chunk_by(|a, b| a.total_cmp(b).is_eq())
                .map(|run| (run.len() as f64).powi(2))
                .sum();
            m * m - same
        }
    }
}

/// Krippendorff's alpha over units, each given as the values its annotators gave (missing
/// values left out). Units with fewer than two values are not pairable and are ignored.
/// `None` when fewer than two pairable values exist or when every pairable value is the same
/// (no expected disagreement: alpha is undefined).
pub fn krippendorff_alpha(units: &[Vec<f64>], metric: Metric) -> Option<f64> {
    let pairable: Vec<&Vec<f64>> = units.iter().filter(|u| u.len() >= 2).collect();
    let all: Vec<f64> = pairable.iter().flat_map(|u| u.iter().copied()).collect();
    let n = all.len() as f64;
    if all.len() < 2 {
        return None;
    }
    let observed: f64 = pairable
        .iter()
        .map(|u| pair_sum(u, metric) / (u.len() as f64 - 1.0))
        .sum::<f64>()
        / n;
    let expected = pair_sum(&all, metric) / (n * (n - 1.0));
    (expected > 0.0).then(|| 1.0 - observed / expected)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The worked example of Krippendorff (2011) (section C, from memory: the case of several
    /// observers, nominal data and missing values): 4 observers x 12 units, values
    /// 1..5, missing values (`None`). Rows are observers A..D.
    fn worked_example() -> Vec<Vec<f64>> {
        let n = None;
        let rows: [[Option<u8>; 12]; 4] = [
            [
                Some(1),
                Some(2),
                Some(3),
                Some(3),
                Some(2),
                Some(1),
                Some(4),
                Some(1),
                Some(2),
                n,
                n,
                n,
            ],
            [
                Some(1),
                Some(2),
                Some(3),
                Some(3),
                Some(2),
                Some(2),
                Some(4),
                Some(1),
                Some(2),
                Some(5),
                n,
                Some(3),
            ],
            [
                n,
                Some(3),
                Some(3),
                Some(3),
                Some(2),
                Some(3),
                Some(4),
                Some(2),
                Some(2),
                Some(5),
                Some(1),
                n,
            ],
            [
                Some(1),
                Some(2),
                Some(3),
                Some(3),
                Some(2),
                Some(4),
                Some(4),
                Some(1),
                Some(2),
                Some(5),
                Some(1),
                n,
            ],
        ];
        (0..12)
            .map(|u| rows.iter().filter_map(|r| r[u]).map(f64::from).collect())
            .collect()
    }

    #[test]
    fn worked_example_matches_published_nominal_alpha() {
        // Krippendorff (2011), section C (from memory): nominal alpha = 0.743; the PyPI
        // `krippendorff` package 0.9.0 gives 0.7434211 (run by hand on 2026-12-02).
        let a = krippendorff_alpha(&worked_example(), Metric::Nominal).unwrap();
        assert!((a - 0.743).abs() < 5e-4, "{a}");
        assert!((a - 0.743_421_052_631_579).abs() < 1e-9, "{a}");
    }

    #[test]
    fn worked_example_matches_published_interval_alpha() {
        // The same data under the interval metric: alpha = 0.849. From memory, Krippendorff
        // (2011) gives this value where it extends the worked example to other metrics, not
        // in section C, which computes the nominal case; the section is not checked here.
        // The PyPI `krippendorff` package 0.9.0 gives 0.8491071 on this data (run by hand on
        // 2026-12-02), which is the check's outside source.
        let a = krippendorff_alpha(&worked_example(), Metric::Interval).unwrap();
        assert!((a - 0.849).abs() < 5e-4, "{a}");
        assert!((a - 0.849_107_142_857_142_8).abs() < 1e-9, "{a}");
    }

    #[test]
    fn perfect_agreement_is_one_and_no_variation_is_undefined() {
        let units = vec![vec![1.0, 1.0], vec![2.0, 2.0, 2.0], vec![7.0]];
        assert_eq!(krippendorff_alpha(&units, Metric::Interval), Some(1.0));
        assert_eq!(krippendorff_alpha(&units, Metric::Nominal), Some(1.0));
        let flat = vec![vec![3.0, 3.0], vec![3.0, 3.0]];
        assert_eq!(krippendorff_alpha(&flat, Metric::Interval), None);
        assert_eq!(krippendorff_alpha(&[vec![1.0]], Metric::Nominal), None);
    }

    #[test]
    fn systematic_disagreement_is_negative() {
        // Two annotators who always pick opposite ends: D_o > D_e.
        let units = vec![vec![0.0, 1.0], vec![1.0, 0.0], vec![0.0, 1.0]];
        // By hand: D_o = 1, D_e = (36 - 18) / 30 = 0.6, alpha = 1 - 1 / 0.6.
        let a = krippendorff_alpha(&units, Metric::Nominal).unwrap();
        assert!((a - (1.0 - 1.0 / 0.6)).abs() < 1e-12, "{a}");
    }
}
