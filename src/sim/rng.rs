//! A small deterministic random number generator for the demo scenario.
//!
//! SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators",
//! OOPSLA; the constants are those of Vigna's public-domain reference code) drives uniform
//! draws; normal draws use the Box-Muller transform (Box & Muller 1958). Owning the generator
//! keeps every demo campaign byte-identical for a seed, whatever crate versions say.

/// The scenario's generator under a short name.
pub type Rng = SplitMix64;

/// SplitMix64: a 64-bit state advanced by a fixed odd increment and mixed on output.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    /// A generator seeded with `seed`.
    pub fn new(seed: u64) -> Self {
        SplitMix64 { state: seed }
    }

    /// A generator for a named sub-stream: independent streams for (seed, purpose, index).
    pub fn stream(seed: u64, purpose: u64, index: u64) -> Self {
        let mut g = SplitMix64::new(seed ^ purpose.wrapping_mul(0xA076_1D64_78BD_642F));
        let mixed = g.next_u64() ^ index.wrapping_mul(0xE703_7ED1_A0B4_28DB);
        SplitMix64::new(mixed)
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// A uniform draw in `[0, 1)` with 53 random bits.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// A uniform draw in `[lo, hi)`.
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }

    /// A uniform index in `0..n` (`n > 0`).
    pub fn index(&mut self, n: usize) -> usize {
        ((self.uniform() * n as f64) as usize).min(n.saturating_sub(1))
    }

    /// A standard normal draw (Box-Muller; the second value of the pair is discarded to keep
    /// the stream stateless).
    pub fn normal(&mut self) -> f64 {
        let u1 = 1.0 - self.uniform(); // in (0, 1]: the log stays finite
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix64_matches_the_reference_sequence_for_seed_zero() {
        // First outputs of Vigna's splitmix64.c seeded with 0 (values as published with
        // the reference implementation and reproduced by many ports; quoted from memory and
        // checked against this implementation's arithmetic).
        let mut g = SplitMix64::new(0);
        assert_eq!(g.next_u64(), 0xE220_A839_7B1D_CDAF);
        assert_eq!(g.next_u64(), 0x6E78_9E6A_A1B9_65F4);
        assert_eq!(g.next_u64(), 0x06C4_5D18_8009_454F);
    }

    #[test]
    fn normal_draws_have_unit_variance() {
        let mut g = SplitMix64::new(7);
        let n = 20_000;
        let xs: Vec<f64> = (0..n).map(|_| g.normal()).collect();
        let mean = xs.iter().sum::<f64>() / n as f64;
        let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        assert!(mean.abs() < 0.03, "mean {mean}");
        assert!((var - 1.0).abs() < 0.04, "variance {var}");
    }
}
