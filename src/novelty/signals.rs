//! Per-step signals computed from a step's neighbours: which features make it novel, how far
//! the learner's action is from what the experts did nearby, and how much the experts (or the
//! learner's ensemble) disagree among themselves.
//!
//! Action differences are divided by each channel's range ([`ActionChannel::range`]) so that
//! channels in different units compare; several channels combine as a root mean square. A
//! discrete channel's difference is 0 when the choices agree and 1 when they differ.

use crate::campaign::{ActionChannel, ChannelKind};

use super::index::Hit;

/// Offset added to neighbour distances before inverting them into weights, so that an exact
/// duplicate of a demonstration state gets a large but finite weight.
pub const WEIGHT_EPS: f32 = 1e-6;

/// Per-feature share of the squared scaled distance between `x` and `nearest` (both scaled);
/// sums to 1, or all zeros when the two states coincide.
pub fn contributions(x: &[f32], nearest: &[f32], out: &mut [f32]) {
    let mut total = 0.0f32;
    for ((o, a), b) in out.iter_mut().zip(x).zip(nearest) {
        *o = (a - b) * (a - b);
        total += *o;
    }
    if total > 0.0 {
        out.iter_mut().for_each(|o| *o /= total);
    }
}

/// Inverse-distance weights of neighbours (Shepard 1968), normalised to sum to 1.
pub fn weights(hits: &[Hit]) -> Vec<f32> {
    let w: Vec<f32> = hits
        .iter()
        .map(|h| 1.0 / (h.1.max(0.0).sqrt() + WEIGHT_EPS))
        .collect();
    let total: f32 = w.iter().sum();
    w.iter().map(|x| x / total).collect()
}

/// The neighbours' consensus on one channel and their spread (in range units): the weighted
/// mean and weighted standard deviation for a continuous channel; the weighted plurality
/// choice and one minus its weight share for a discrete one.
pub fn consensus(channel: &ActionChannel, values: &[f32], w: &[f32]) -> (f32, f32) {
    match &channel.kind {
        ChannelKind::Continuous { .. } => {
            let mean: f32 = values.iter().zip(w).map(|(v, w)| v * w).sum();
            let var: f32 = values
                .iter()
                .zip(w)
                .map(|(v, w)| w * (v - mean) * (v - mean))
                .sum();
            (mean, var.max(0.0).sqrt() / channel.range() as f32)
        }
        ChannelKind::Discrete { choices } => {
            let mut share = vec![0.0f32; choices.len().max(1)];
            for (v, w) in values.iter().zip(w) {
                if let Some(s) = share.get_mut(*v as usize) {
                    *s += w;
                }
            }
            let (best, top) = share
                .iter()
                .enumerate()
                .fold((0, f32::MIN), |b, (i, &s)| if s > b.1 { (i, s) } else { b });
            (best as f32, (1.0 - top).max(0.0))
        }
    }
}

/// Difference between two values of a channel in range units (0/1 for discrete channels).
pub fn channel_gap(channel: &ActionChannel, a: f32, b: f32) -> f32 {
    match channel.kind {
        ChannelKind::Continuous { .. } => (a - b).abs() / channel.range() as f32,
        ChannelKind::Discrete { .. } => f32::from(a as i64 != b as i64),
    }
}

/// Root mean square of per-channel values.
pub fn rms(values: impl Iterator<Item = f32>) -> f32 {
    let (sum, n) = values.fold((0.0f32, 0usize), |(s, n), v| (s + v * v, n + 1));
    if n == 0 { 0.0 } else { (sum / n as f32).sqrt() }
}

/// Spread of ensemble action samples (`action_dim` values each), in range units, combined
/// over channels as a root mean square; NaN when there are no samples.
pub fn ensemble_spread<'a>(
    channels: &[ActionChannel],
    samples: Option<impl Iterator<Item = &'a [f32]>>,
) -> f32 {
    let Some(samples) = samples else {
        return f32::NAN;
    };
    let samples: Vec<&[f32]> = samples.collect();
    if samples.is_empty() {
        return f32::NAN;
    }
    let w = vec![1.0 / samples.len() as f32; samples.len()];
    rms(channels.iter().enumerate().map(|(c, ch)| {
        let values: Vec<f32> = samples.iter().map(|s| s[c]).collect();
        consensus(ch, &values, &w).1
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cont() -> ActionChannel {
        ActionChannel {
            name: "steer".into(),
            unit: "rad".into(),
            kind: ChannelKind::Continuous {
                low: -1.0,
                high: 1.0,
            },
        }
    }

    #[test]
    fn contributions_are_shares_of_the_squared_distance() {
        // Differences (3, 4): squared 9 and 16 of 25 (the 3-4-5 triangle).
        let mut out = [0.0; 2];
        contributions(&[3.0, 4.0], &[0.0, 0.0], &mut out);
        assert_eq!(out, [0.36, 0.64]);
    }

    #[test]
    fn weighted_consensus_by_hand() {
        // Distances 1 and 3 (squared 1, 9): weights 3/4 and 1/4; values 0 and 1 give mean
        // 0.25, variance 3/4 * 0.0625 + 1/4 * 0.5625 = 0.1875, sd 0.4330, range 2.
        let w = weights(&[(0, 1.0), (1, 9.0)]);
        assert!((w[0] - 0.75).abs() < 1e-5);
        let (m, s) = consensus(&cont(), &[0.0, 1.0], &w);
        assert!((m - 0.25).abs() < 1e-5);
        assert!((s - 0.1875f32.sqrt() / 2.0).abs() < 1e-5);
        assert!((channel_gap(&cont(), 1.0, 0.25) - 0.375).abs() < 1e-6);
    }

    #[test]
    fn discrete_consensus_is_the_weighted_plurality() {
        let ch = ActionChannel {
            name: "gear".into(),
            unit: String::new(),
            kind: ChannelKind::Discrete {
                choices: vec!["low".into(), "high".into()],
            },
        };
        let (m, s) = consensus(&ch, &[1.0, 0.0, 1.0], &[0.2, 0.4, 0.4]);
        assert_eq!(m, 1.0);
        assert!((s - 0.4).abs() < 1e-6);
        assert_eq!(channel_gap(&ch, 0.0, 1.0), 1.0);
    }
}
