//! Drawing a fixed number of steps with known inclusion probabilities.
//!
//! **Probabilities.** Given a non-negative size for every unit and a sample size `n`, each unit
//! gets `pi_i = n * size_i / sum(size)`; a unit whose `pi` would exceed 1 is included for
//! certain (`pi = 1`) and the rest of the sample is shared again among the others, until no
//! probability exceeds 1 (probability proportional to size with certainty units; Särndal,
//! Swensson & Wretman 1992, "Model Assisted Survey Sampling", section 3.6). The probabilities
//! sum to `n` (to `min(n, units with a positive size)`).
//!
//! **Draw.** Systematic sampling (Madow 1949, "On the theory of systematic sampling, II"): the
//! units are laid end to end in their given order, each as an interval of length `pi_i`, and
//! the sample is the units hit by the points `u, u + 1, u + 2, ...` for one uniform start
//! `u` in `[0, 1)`. Each unit is drawn with probability exactly `pi_i`, the sample has exactly
//! `n` units, and laid out in episode and time order the draw spreads over episodes and over
//! each episode's course.
//!
//! **Weights.** A label drawn with probability `pi` stands for `1 / pi` visited steps
//! (Horvitz & Thompson 1952); a trainer weighting each label so keeps its loss an unbiased
//! estimate of the loss over every visited step (importance-weighted active learning,
//! Beygelzimer, Dasgupta & Langford 2009).

/// Probabilities at or above this count as certain (guards the sum against rounding).
const CERTAIN: f64 = 1.0 - 1e-9;

/// Inclusion probabilities proportional to `size`, capped at 1, summing to `n` (or to the
/// number of units with a positive, finite size when that is smaller).
pub fn inclusion_probabilities(size: &[f64], n: usize) -> Vec<f64> {
    let positive = |s: f64| s.is_finite() && s > 0.0;
    let available = size.iter().filter(|&&s| positive(s)).count();
    let mut pi = vec![0.0; size.len()];
    if n == 0 || available == 0 {
        return pi;
    }
    if n >= available {
        for (p, &s) in pi.iter_mut().zip(size) {
            *p = if positive(s) { 1.0 } else { 0.0 };
        }
        return pi;
    }
    let mut certain = vec![false; size.len()];
    loop {
        let left = n - certain.iter().filter(|&&c| c).count();
        let total: f64 = size
            .iter()
            .zip(&certain)
            .filter(|&(&s, &c)| !c && positive(s))
            .map(|(&s, _)| s)
            .sum();
        let mut capped = false;
        for ((p, &s), c) in pi.iter_mut().zip(size).zip(certain.iter_mut()) {
            if *c {
                *p = 1.0;
            } else if positive(s) {
                *p = left as f64 * s / total;
                if *p >= CERTAIN {
                    *c = true;
                    capped = true;
                }
            }
        }
        if !capped {
            return pi;
        }
    }
}

/// Systematic sample with first-order inclusion probabilities `pi` (each in `[0, 1]`, summing
/// to a whole number `n`): the indices of the `n` drawn units, ascending. `start` is the
/// uniform start in `[0, 1)`. Units with `pi` at or above 1 are always drawn.
pub fn systematic(pi: &[f64], start: f64) -> Vec<usize> {
    let mut out: Vec<usize> = Vec::new();
    let mut rest: Vec<usize> = Vec::new();
    for (i, &p) in pi.iter().enumerate() {
        if p >= CERTAIN {
            out.push(i);
        } else if p > 0.0 {
            rest.push(i);
        }
    }
    let total: f64 = rest.iter().map(|&i| pi[i]).sum();
    let draws = total.round() as usize;
    let (mut cum, mut k) = (0.0f64, 0usize);
    for &i in &rest {
        cum += pi[i];
        // The unit's interval is [cum - pi, cum); it holds the point start + k when
        // start + k < cum (the point is past the previous interval by construction).
        if k < draws && start + (k as f64) < cum {
            out.push(i);
            k += 1;
        }
    }
    // Rounding can leave the last point just past the end: it belongs to the last unit not
    // yet drawn.
    if k < draws
        && let Some(&i) = rest.iter().rev().find(|i| !out.contains(i))
    {
        out.push(i);
    }
    out.sort_unstable();
    out
}

/// A uniform number in `[0, 1)` from a seed: one step of SplitMix64 (Steele, Lea & Flood
/// 2014, "Fast splittable pseudorandom number generators"), top 53 bits.
pub fn uniform_start(seed: u64) -> f64 {
    let mut z = seed.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 53) as f64
}

/// Draws `n` of the units with probabilities proportional to `size` (see the module
/// documentation); returns the drawn indices (ascending) and every unit's probability.
pub fn draw(size: &[f64], n: usize, seed: u64) -> (Vec<usize>, Vec<f64>) {
    let pi = inclusion_probabilities(size, n);
    let start = uniform_start(seed);
    (systematic(&pi, start), pi)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn probabilities_are_proportional_capped_and_sum_to_n() {
        // Sizes 1, 1, 2, 16 with n = 2: 16/20*2 = 1.6 caps to 1; the one remaining draw is
        // shared as 1/4, 1/4, 2/4 (worked by hand).
        let pi = inclusion_probabilities(&[1.0, 1.0, 2.0, 16.0], 2);
        assert_eq!(pi, vec![0.25, 0.25, 0.5, 1.0]);
        // No size: no probability; more draws than units: all of them.
        assert_eq!(inclusion_probabilities(&[0.0, 3.0], 1), vec![0.0, 1.0]);
        assert_eq!(inclusion_probabilities(&[1.0, 2.0], 5), vec![1.0, 1.0]);
    }

    #[test]
    fn systematic_draw_hits_the_units_under_the_points() {
        // pi = 0.5 each over 4 units: intervals [0,.5) [.5,1) [1,1.5) [1.5,2); start 0.7 hits
        // the second and the fourth unit (worked by hand).
        assert_eq!(systematic(&[0.5; 4], 0.7), vec![1, 3]);
        assert_eq!(systematic(&[0.5; 4], 0.2), vec![0, 2]);
        // A certain unit is drawn whatever the start.
        assert_eq!(systematic(&[1.0, 0.5, 0.5], 0.9), vec![0, 2]);
    }

    #[test]
    fn each_unit_is_drawn_with_its_probability_over_the_start() {
        // Madow's property of systematic sampling: over a uniform start, unit i is drawn
        // with probability exactly pi_i. Checked on a grid of 10,000 starts (midpoints), which
        // integrates the indicator exactly up to 1e-4 per interval end.
        let pi = inclusion_probabilities(&[3.0, 7.0, 1.0, 1.0, 40.0, 2.0, 6.0], 3);
        assert!((pi.iter().sum::<f64>() - 3.0).abs() < 1e-12);
        let mut hits = vec![0usize; pi.len()];
        let grid = 10_000;
        for k in 0..grid {
            let drawn = systematic(&pi, (k as f64 + 0.5) / grid as f64);
            assert_eq!(drawn.len(), 3);
            for i in drawn {
                hits[i] += 1;
            }
        }
        for (h, p) in hits.iter().zip(&pi) {
            assert!((*h as f64 / grid as f64 - p).abs() <= 2e-4, "{h} vs {p}");
        }
        assert_eq!(pi[4], 1.0, "the large unit is certain");
    }
}
