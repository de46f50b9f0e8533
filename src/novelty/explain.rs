//! Which features make a state novel, in words a front-end can print: the per-feature shares
//! of the squared distance to the nearest demonstration state (the scores' `contributions`),
//! for one step or summed over a round's flagged steps. The command line and the window both
//! name features through here.

use super::score::RoundScores;

/// The `count` largest shares, largest first, leaving out shares below `min_share`: (feature
/// index, share).
pub fn top_features(shares: &[f32], count: usize, min_share: f32) -> Vec<(usize, f32)> {
    let mut order: Vec<usize> = (0..shares.len()).collect();
    order.sort_by(|&a, &b| shares[b].total_cmp(&shares[a]).then(a.cmp(&b)));
    order
        .into_iter()
        .take(count)
        .filter(|&i| shares[i] >= min_share)
        .map(|i| (i, shares[i]))
        .collect()
}

/// Each feature's share of the novelty of the round's flagged steps (their contributions
/// summed, as shares of the total); `None` when nothing is flagged.
pub fn flagged_shares(s: &RoundScores) -> Option<Vec<f32>> {
    let mut total = vec![0.0f64; s.state_dim];
    for row in (0..s.len()).filter(|&r| s.flagged[r]) {
        for (t, v) in total.iter_mut().zip(s.contribution(row)) {
            *t += f64::from(*v);
        }
    }
    let sum: f64 = total.iter().sum();
    (sum > 0.0).then(|| total.iter().map(|t| (t / sum) as f32).collect())
}

/// Features with their shares as text, e.g. `heading 61%, y 30%`.
pub fn describe(names: &[&str], top: &[(usize, f32)]) -> String {
    let parts: Vec<String> = top
        .iter()
        .filter_map(|&(i, s)| Some(format!("{} {:.0}%", names.get(i)?, s * 100.0)))
        .collect();
    parts.join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    // Worked by hand: shares 0.1, 0.6, 0.3 rank 1, 2, 0; a floor of 0.2 drops feature 0.
    #[test]
    fn top_features_rank_by_share_and_drop_small_ones() {
        let shares = [0.1, 0.6, 0.3];
        assert_eq!(
            top_features(&shares, 3, 0.0),
            [(1, 0.6), (2, 0.3), (0, 0.1)]
        );
        assert_eq!(top_features(&shares, 3, 0.2), [(1, 0.6), (2, 0.3)]);
        assert_eq!(top_features(&shares, 1, 0.0), [(1, 0.6)]);
        assert_eq!(
            describe(&["x", "y", "heading"], &[(1, 0.6), (2, 0.3)]),
            "y 60%, heading 30%"
        );
    }
}
