//! Per-feature scales: novelty distances are measured with every feature divided by its scale.
//!
//! A feature's scale is the spec's `scale` when given. Otherwise it comes from the
//! demonstrations, by the first estimator of this chain that does not collapse:
//!
//! 1. **MAD**: the median absolute deviation from the median, times 1.4826 so that it equals
//!    the standard deviation for normal data (Hampel 1974; Rousseeuw & Croux 1993, "Alternatives
//!    to the median absolute deviation", JASA 88, section 1; the constant is 1 / Phi^-1(3/4),
//!    from memory, checked against scipy's `median_abs_deviation(scale='normal')` in
//!    `tests/fixtures/scale_scipy.py`). It ignores the few extreme values every demonstration set
//!    has, where the standard deviation would let them stretch the scale.
//! 2. **IQR**: the interquartile range (linear interpolation between order statistics, numpy's
//!    and scipy's default) divided by 1.349, the IQR of a standard normal (2 Phi^-1(3/4); a
//!    common practice, e.g. Wasserman 2004 "All of Statistics" for kernel bandwidths; from
//!    memory, checked against `scipy.stats.iqr` and `scipy.stats.norm` in the same fixture).
//! 3. **Standard deviation** (population, numpy's `std` default).
//! 4. **Unit**: 1, for a feature that never changes in the demonstrations (any deviation from
//!    its one value is then measured in the feature's own unit).
//!
//! A robust estimate (MAD, IQR) *collapses* when it is below [`COLLAPSE_SHARE`] of the
//! feature's demonstration range: most demonstration steps hold one value and the rest are
//! rare (a contact flag, a gear, a saturated sensor). Dividing by such a scale would make a
//! one-step change weigh hundreds of metres. The standard deviation collapses only when the
//! feature is constant.
//!
//! **Binary and categorical features.** The spec may mark a feature `"kind": "binary"` or
//! `"kind": "categorical"` (values are codes). Its scale is then the demonstrations' range of
//! codes (1 when they hold one code): a flip of a binary feature (0 to 1) weighs one scaled
//! unit, as much as a one-standard-deviation move of a continuous feature; no change of code
//! weighs more. This is the range normalisation of Gower's general similarity coefficient
//! (Gower 1971, "A general coefficient of similarity and some of its properties", Biometrics
//! 27; from memory), which puts binary, categorical and continuous features on one footing. A
//! data-driven scale would not: the standard deviation of a flag that is on in 1 % of the
//! steps is 0.0995, so a flip would weigh ten units. For a categorical feature, codes closer in
//! number count as closer; one binary feature per category avoids that.

use crate::campaign::{FeatureKind, Spec, StepTable};

/// Normal-consistency factor of the median absolute deviation (1 / Phi^-1(3/4)).
pub const MAD_TO_SD: f64 = 1.482_602_218_505_602;
/// Interquartile range of the standard normal distribution (2 Phi^-1(3/4)), rounded as usual.
pub const IQR_OF_NORMAL: f64 = 1.349;
/// A robust estimate below this share of the feature's demonstration range has collapsed.
pub const COLLAPSE_SHARE: f64 = 0.01;
/// Rows sampled (evenly) for the estimates on very large demonstration sets.
pub const SCALE_SAMPLE_ROWS: usize = 200_000;

/// Where a feature's scale came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ScaleOrigin {
    /// Declared in the spec.
    Spec,
    /// Median absolute deviation times 1.4826.
    Mad,
    /// Interquartile range divided by 1.349 (the MAD collapsed).
    Iqr,
    /// Standard deviation (the MAD and the IQR collapsed).
    StdDev,
    /// 1: the feature is constant in the demonstrations.
    Unit,
    /// Range of a feature the spec marks binary.
    Binary,
    /// Range of a feature the spec marks categorical.
    Categorical,
}

impl ScaleOrigin {
    /// Every origin, in the order of [`ScaleOrigin::label`]'s codes.
    pub const ALL: [ScaleOrigin; 7] = [
        ScaleOrigin::Spec,
        ScaleOrigin::Mad,
        ScaleOrigin::Iqr,
        ScaleOrigin::StdDev,
        ScaleOrigin::Unit,
        ScaleOrigin::Binary,
        ScaleOrigin::Categorical,
    ];

    /// The origin's name as printed and saved (`scale_origin` in scores.npz).
    pub fn label(self) -> &'static str {
        match self {
            ScaleOrigin::Spec => "spec",
            ScaleOrigin::Mad => "MAD",
            ScaleOrigin::Iqr => "IQR",
            ScaleOrigin::StdDev => "standard deviation",
            ScaleOrigin::Unit => "unit",
            ScaleOrigin::Binary => "binary",
            ScaleOrigin::Categorical => "categorical",
        }
    }

    /// The origin named by [`ScaleOrigin::label`].
    pub fn from_label(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|o| o.label() == s)
    }
}

/// One feature's scale and where it came from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FeatureScale {
    /// The scale (positive).
    pub scale: f64,
    /// Its origin.
    pub origin: ScaleOrigin,
}

/// Scales of every feature, from the spec where declared, else estimated from `demos`.
pub fn feature_scales(spec: &Spec, demos: &StepTable) -> Vec<f32> {
    scales_with_origin(spec, demos)
        .iter()
        .map(|s| s.scale as f32)
        .collect()
}

/// Scales of every feature with their origins (see the module documentation).
pub fn scales_with_origin(spec: &Spec, demos: &StepTable) -> Vec<FeatureScale> {
    (0..demos.state_dim)
        .map(|j| {
            let f = spec.features.get(j);
            match (f.and_then(|f| f.scale), f.map(|f| f.kind)) {
                (Some(s), _) => FeatureScale {
                    scale: s,
                    origin: ScaleOrigin::Spec,
                },
                (None, Some(FeatureKind::Binary)) => coded_scale(demos, j, ScaleOrigin::Binary),
                (None, Some(FeatureKind::Categorical)) => {
                    coded_scale(demos, j, ScaleOrigin::Categorical)
                }
                _ => estimated_scale(&column(demos, j)),
            }
        })
        .collect()
}

/// The scale of feature `j` of a table by the estimator chain.
pub fn robust_scale(t: &StepTable, j: usize) -> f64 {
    estimated_scale(&column(t, j)).scale
}

fn column(t: &StepTable, j: usize) -> Vec<f64> {
    let n = t.len();
    let stride = n.div_ceil(SCALE_SAMPLE_ROWS).max(1);
    (0..n)
        .step_by(stride)
        .map(|r| f64::from(t.states[r * t.state_dim + j]))
        .collect()
}

fn coded_scale(t: &StepTable, j: usize, origin: ScaleOrigin) -> FeatureScale {
    let range = spread(&column(t, j));
    FeatureScale {
        scale: if range > 0.0 { range } else { 1.0 },
        origin,
    }
}

fn spread(v: &[f64]) -> f64 {
    let (lo, hi) = v
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    if hi >= lo { hi - lo } else { 0.0 }
}

/// The first estimate of the chain MAD, IQR, standard deviation, 1 that does not collapse.
pub fn estimated_scale(values: &[f64]) -> FeatureScale {
    let pick = |scale: f64, origin| FeatureScale { scale, origin };
    let range = spread(values);
    if range <= 0.0 || !range.is_finite() {
        return pick(1.0, ScaleOrigin::Unit);
    }
    let floor = COLLAPSE_SHARE * range;
    let mad = mad_normal(values);
    if mad >= floor {
        return pick(mad, ScaleOrigin::Mad);
    }
    let iqr = iqr(values) / IQR_OF_NORMAL;
    if iqr >= floor {
        return pick(iqr, ScaleOrigin::Iqr);
    }
    let sd = std_dev(values);
    if sd > 0.0 {
        return pick(sd, ScaleOrigin::StdDev);
    }
    pick(1.0, ScaleOrigin::Unit)
}

/// Median absolute deviation times [`MAD_TO_SD`] (scipy's `scale='normal'`).
pub fn mad_normal(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    let med = median(&mut v);
    let mut dev: Vec<f64> = v.iter().map(|x| (x - med).abs()).collect();
    median(&mut dev) * MAD_TO_SD
}

/// Interquartile range with linear interpolation between order statistics (numpy's and
/// scipy's default: the `q` quantile of `n` sorted values sits at position `q (n - 1)`).
pub fn iqr(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    quantile_sorted(&v, 0.75) - quantile_sorted(&v, 0.25)
}

/// The `q` quantile of sorted values by linear interpolation (NaN when empty).
pub fn quantile_sorted(v: &[f64], q: f64) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    let h = q.clamp(0.0, 1.0) * (v.len() - 1) as f64;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(v.len() - 1);
    v[lo] + (h - lo as f64) * (v[hi] - v[lo])
}

/// Population standard deviation (numpy's `std` default, `ddof = 0`).
pub fn std_dev(values: &[f64]) -> f64 {
    let n = values.len().max(1) as f64;
    let mean = values.iter().sum::<f64>() / n;
    (values.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n).sqrt()
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
    fn a_collapsed_mad_falls_back_to_the_iqr_then_the_standard_deviation() {
        // 99 zeros and one 10: MAD 0 and IQR 0 (both below 1% of the range 10), so the
        // population standard deviation: mean 0.1, variance (99 * 0.01 + 9.9^2) / 100 = 0.99
        // (by hand).
        let mut col = vec![0.0; 99];
        col.push(10.0);
        let s = estimated_scale(&col);
        assert_eq!(s.origin, ScaleOrigin::StdDev);
        assert!((s.scale - 0.99f64.sqrt()).abs() < 1e-12, "{s:?}");
        // 60 zeros and 40 ones: MAD 0, quartiles 0 and 1 (positions 24.75 and 74.25), IQR 1.
        let mut col = vec![0.0; 60];
        col.extend([1.0; 40]);
        let s = estimated_scale(&col);
        assert_eq!(s.origin, ScaleOrigin::Iqr);
        assert!((s.scale - 1.0 / 1.349).abs() < 1e-12, "{s:?}");
        let s = estimated_scale(&[5.0; 10]);
        assert_eq!((s.scale, s.origin), (1.0, ScaleOrigin::Unit));
    }

    #[test]
    fn linear_quantiles_match_numpy_by_hand() {
        // numpy.percentile([1, 2, 3, 4], [25, 75]) = [1.75, 3.25] (linear interpolation,
        // positions 0.75 and 2.25; by hand).
        assert!((iqr(&[4.0, 1.0, 3.0, 2.0]) - 1.5).abs() < 1e-12);
        assert_eq!(quantile_sorted(&[1.0, 2.0, 3.0, 4.0], 0.25), 1.75);
    }

    #[test]
    fn median_of_even_count_is_the_mean_of_the_middle_pair() {
        assert_eq!(median(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(median(&mut [5.0, 1.0, 3.0]), 3.0);
    }
}
