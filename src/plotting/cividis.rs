//! The cividis colour scale (Nuñez, Anderton & Renslow 2018, "Optimizing colormaps with
//! consideration for color vision deficiency to enable accurate interpretation of scientific
//! data", PLOS ONE 13(7): e0199239). Its lightness rises steadily from dark blue to yellow and
//! it reads the same for the common colour-vision deficiencies, so a path coloured by novelty
//! stays legible for every expert.

pub use super::cividis_table::CIVIDIS;

/// The cividis colour at `t` in `0..=1` (clamped; NaN gives the low end), as 8-bit sRGB,
/// linearly interpolated between the 256 published entries.
pub fn cividis(t: f32) -> [u8; 3] {
    let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
    let pos = t * 255.0;
    let i = (pos.floor() as usize).min(254);
    let f = pos - i as f32;
    let (a, b) = (CIVIDIS[i], CIVIDIS[i + 1]);
    let mix = |k: usize| {
        ((a[k] + (b[k] - a[k]) * f) * 255.0)
            .round()
            .clamp(0.0, 255.0) as u8
    };
    [mix(0), mix(1), mix(2)]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The committed fixture (tests/fixtures/plotting/cividis.csv, written by make_cividis.py
    /// from the PyPI package `cividis` 0.0.2) equals the compiled table entry by entry.
    #[test]
    fn table_equals_published_fixture() {
        let text = include_str!("../../tests/fixtures/plotting/cividis.csv");
        let rows: Vec<[f32; 3]> = text
            .lines()
            .filter(|l| l.starts_with(|c: char| c.is_ascii_digit()))
            .map(|l| {
                let v: Vec<f32> = l.split(',').map(|x| x.parse().unwrap()).collect();
                [v[0], v[1], v[2]]
            })
            .collect();
        assert_eq!(rows.len(), 256);
        assert_eq!(rows.as_slice(), CIVIDIS.as_slice());
    }

    /// Ends and midpoint: the published first entry (0, 0.1262, 0.3015) is dark blue, the
    /// last (1, 0.9169, 0.2731) yellow; halfway lies between entries 127 and 128.
    #[test]
    fn ends_and_interpolation() {
        assert_eq!(cividis(0.0), [0, 32, 77]);
        assert_eq!(cividis(1.0), [255, 234, 70]);
        assert_eq!(cividis(f32::NAN), cividis(0.0));
        assert_eq!(cividis(-3.0), cividis(0.0));
        let mid = cividis(0.5);
        for ((m, a), b) in mid.iter().zip(CIVIDIS[127]).zip(CIVIDIS[128]) {
            let (lo, hi) = (a.min(b) * 255.0, a.max(b) * 255.0);
            assert!((*m as f32) >= lo.floor() && (*m as f32) <= hi.ceil());
        }
    }

    /// Lightness rises monotonically (the property the scale was designed for): the luma of
    /// successive entries never falls. Luma here is the weighted sum of the gamma-encoded
    /// (sRGB) values with the luma coefficients of ITU-R Recommendation BT.709 (0.2126,
    /// 0.7152, 0.0722); it is not relative luminance, which weights linearised values. The
    /// tolerance 1e-3 is common practice for values stored to four decimals.
    #[test]
    fn luma_rises() {
        let luma = |c: [f32; 3]| 0.2126 * c[0] + 0.7152 * c[1] + 0.0722 * c[2];
        for w in CIVIDIS.windows(2) {
            assert!(luma(w[1]) >= luma(w[0]) - 1e-3, "{:?} -> {:?}", w[0], w[1]);
        }
    }
}
