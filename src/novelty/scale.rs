//! Per-feature scales: novelty distances are measured with every feature divided by its scale.
//!
//! A feature's scale is the spec's `scale` when given. Otherwise it is a robust estimate from
//! the demonstrations: the median absolute deviation from the median, times 1.4826 so that it
//! equals the standard deviation for normal data (Hampel 1974; Rousseeuw & Croux 1993). The MAD
//! ignores the few extreme values a demonstration set always has, where the standard deviation
//! would let them stretch the scale. A feature the experts held (almost) constant would get a
//! scale near zero and make any small learner deviation look infinitely novel, so the estimate
//! is floored at [`SCALE_FLOOR_SHARE`] of the feature's full range, and at
//! [`SCALE_FLOOR_ABS`] when the feature never changes at all.

use crate::campaign::{Spec, StepTable};

/// Normal-consistency factor of the median absolute deviation (1 / Phi^-1(3/4)).
pub const MAD_TO_SD: f64 = 1.482_602_218_505_602;
/// Floor of an estimated scale, as a share of the feature's demonstration range.
pub const SCALE_FLOOR_SHARE: f64 = 0.01;
/// Floor of an estimated scale for a feature that is constant in the demonstrations.
pub const SCALE_FLOOR_ABS: f64 = 1e-6;
/// Rows sampled (evenly) for the median estimates on very large demonstration sets.
pub const SCALE_SAMPLE_ROWS: usize = 200_000;

/// Scales of every feature, from the spec where declared, else estimated from `demos`.
pub fn feature_scales(spec: &Spec, demos: &StepTable) -> Vec<f32> {
    let d = demos.state_dim;
    (0..d)
        .map(|j| match spec.features.get(j).and_then(|f| f.scale) {
            Some(s) => s as f32,
            None => robust_scale(demos, j) as f32,
        })
        .collect()
}

/// The floored MAD scale of feature `j` of a table.
pub fn robust_scale(t: &StepTable, j: usize) -> f64 {
    let n = t.len();
    let stride = n.div_ceil(SCALE_SAMPLE_ROWS).max(1);
    let mut v: Vec<f64> = (0..n)
        .step_by(stride)
        .map(|r| f64::from(t.states[r * t.state_dim + j]))
        .collect();
    if v.is_empty() {
        return 1.0;
    }
    let (lo, hi) = v
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let med = median(&mut v);
    let mut dev: Vec<f64> = v.iter().map(|x| (x - med).abs()).collect();
    let mad = median(&mut dev) * MAD_TO_SD;
    mad.max(SCALE_FLOOR_SHARE * (hi - lo)).max(SCALE_FLOOR_ABS)
}

/// Median (mean of the two middle values for an even count); reorders `v`.
pub fn median(v: &mut [f64]) -> f64 {
    let n = v.len();
    if n == 0 {
        return f64::NAN;
    }
    let (_, &mut hi, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    if n % 2 == 1 {
        return hi;
    }
    let lo = v[..n / 2].iter().copied().fold(f64::NEG_INFINITY, f64::max);
    (lo + hi) / 2.0
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table(col: &[f32]) -> StepTable {
        let mut t = StepTable::new(1, 1);
        t.states = col.to_vec();
        t.t = (0..col.len() as i64).collect();
        t
    }

    #[test]
    fn mad_factor_is_the_reciprocal_of_the_normal_upper_quartile() {
        // Source: the standard normal's upper quartile, Phi^-1(3/4) = 0.6744897501960817, as
        // Python's `statistics.NormalDist().inv_cdf(0.75)` gives it (run by hand on
        // 2026-12-02); Rousseeuw & Croux (1993) print the factor rounded as 1.4826.
        assert!((MAD_TO_SD - 1.0 / 0.674_489_750_196_081_7).abs() < 1e-12);
        assert!((MAD_TO_SD - 1.4826).abs() < 5e-5);
    }

    #[test]
    fn mad_scale_matches_the_textbook_value() {
        // Data 1,2,3,4,100: median 3, absolute deviations 2,1,0,1,97, MAD 1 (by hand),
        // scale 1.4826 (Rousseeuw & Croux 1993; the factor's source is the test above); the
        // outlier 100 does not stretch it.
        let s = robust_scale(&table(&[1.0, 2.0, 3.0, 4.0, 100.0]), 0);
        assert!((s - 1.482_602).abs() < 1e-5, "{s}");
    }

    #[test]
    fn nearly_constant_feature_gets_the_range_floor() {
        // 99 zeros and one 10: MAD 0, so the floor 1% of range 10 = 0.1 applies.
        let mut col = vec![0.0; 99];
        col.push(10.0);
        assert!((robust_scale(&table(&col), 0) - 0.1).abs() < 1e-9);
        assert_eq!(robust_scale(&table(&[5.0; 10]), 0), SCALE_FLOOR_ABS);
    }

    #[test]
    fn median_of_even_count_is_the_mean_of_the_middle_pair() {
        assert_eq!(median(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(median(&mut [5.0, 1.0, 3.0]), 3.0);
    }
}
