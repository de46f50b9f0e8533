//! Per-phase calibration: Mondrian conformal prediction (Vovk, Gammerman & Shafer 2005,
//! "Algorithmic Learning in a Random World", section 4.5 from memory; Vovk, Lindsay,
//! Nouretdinov & Gammerman 2003, "Mondrian confidence machine").
//!
//! A step's **phase** is a range of positions counted from its episode's first step. Each
//! phase has its own calibration: the novelties of the calibration episodes' steps in that
//! phase. A step's p-value compares its novelty only with its own phase's scores, so the flag
//! promise holds within every phase, not only over all steps together: at most about `alpha`
//! of fresh expert steps near an episode's start are flagged, even when start states are rare
//! among the demonstrations (every demonstration starts from its own pose). The taxonomy
//! depends on the step's position alone, never on its novelty, which is what the Mondrian
//! guarantee needs.
//!
//! **Phases that fit any step rate and data size.** Phase boundaries are positions
//! `0 = b_0 < b_1 < ...`: each phase is at least as long as all phases before it together
//! (`b_{i+1} >= 2 b_i`), so the phases are short where states change fastest, at the start,
//! and there are at most about log2(episode length) of them; and each phase holds at least
//! [`min_phase_scores`] calibration scores (at least 2 above the threshold at `alpha`). With
//! many calibration episodes the first phase is a single step; with few it grows until it holds
//! enough. Phases end at half the median calibration episode length; the rest is one phase.
//! A phase that cannot be filled (too few calibration scores left) joins the phase before it,
//! and with too few scores overall there is a single phase: the pooled calibration. Nothing
//! here depends on the step rate or on the spec.

use super::conformal::Conformal;

/// Least calibration scores per phase for alpha: `ceil(2 / alpha) - 1`, so that
/// `(n + 1) alpha >= 2` and the threshold is not the single largest score (common practice:
/// the largest score alone makes a very noisy threshold).
pub fn min_phase_scores(alpha: f64) -> usize {
    if alpha > 0.0 && alpha.is_finite() {
        ((2.0 / alpha).ceil() as usize).saturating_sub(1).max(1)
    } else {
        usize::MAX
    }
}

/// Phase boundaries from the lengths of the calibration episodes (see the module
/// documentation): the first position of each phase, starting with 0.
pub fn phase_starts(lengths: &[usize], alpha: f64) -> Vec<usize> {
    let need = min_phase_scores(alpha);
    let mut sorted = lengths.to_vec();
    sorted.sort_unstable();
    let end = sorted.get(sorted.len() / 2).map_or(0, |m| m / 2);
    let count =
        |a: usize, b: usize| -> usize { lengths.iter().map(|&l| l.min(b).saturating_sub(a)).sum() };
    let mut starts = vec![0];
    let mut a = 0;
    loop {
        let mut b = (2 * a).max(a + 1);
        while b < end && count(a, b) < need {
            b += 1;
        }
        if b >= end || count(b, usize::MAX) < need {
            break;
        }
        starts.push(b);
        a = b;
    }
    starts
}

/// Calibrations per phase of an episode.
#[derive(Debug, Clone, PartialEq)]
pub struct PhasedConformal {
    starts: Vec<usize>,
    parts: Vec<Conformal>,
}

impl PhasedConformal {
    /// Calibration from `(position in episode, novelty)` pairs and phase starts (the first is
    /// taken as 0).
    pub fn new(scores: &[(usize, f32)], starts: Vec<usize>, alpha: f64) -> Self {
        let mut starts = starts;
        if starts.first() != Some(&0) {
            starts.insert(0, 0);
        }
        let mut buckets = vec![Vec::new(); starts.len()];
        for &(pos, s) in scores {
            buckets[phase_in(&starts, pos)].push(s);
        }
        let parts = buckets
            .into_iter()
            .map(|b| Conformal::new(b, alpha))
            .collect();
        PhasedConformal { starts, parts }
    }

    /// Calibration from saved parts: phase starts (the first is taken as 0) and one
    /// calibration per phase (missing ones are empty; extra ones dropped).
    pub fn from_parts(starts: Vec<usize>, mut parts: Vec<Conformal>) -> Self {
        let mut starts = starts;
        if starts.first() != Some(&0) {
            starts.insert(0, 0);
            parts.insert(
                0,
                Conformal::new(Vec::new(), parts.first().map_or(1.0, Conformal::alpha)),
            );
        }
        let alpha = parts.first().map_or(1.0, Conformal::alpha);
        parts.resize_with(starts.len(), || Conformal::new(Vec::new(), alpha));
        PhasedConformal { starts, parts }
    }

    /// Calibration scores in each phase.
    pub fn counts(&self) -> Vec<usize> {
        self.parts.iter().map(Conformal::len).collect()
    }

    /// The first position of each phase.
    pub fn starts(&self) -> &[usize] {
        &self.starts
    }

    /// Each phase's calibration.
    pub fn parts(&self) -> &[Conformal] {
        &self.parts
    }

    /// The phase of a position in an episode.
    pub fn phase(&self, position: usize) -> usize {
        phase_in(&self.starts, position)
    }

    /// The calibration of a position's phase.
    pub fn part(&self, position: usize) -> &Conformal {
        &self.parts[self.phase(position)]
    }

    /// The conformal p-value of a novelty at a position in its episode.
    pub fn p_value(&self, score: f32, position: usize) -> f64 {
        self.part(position).p_value(score)
    }

    /// The flag threshold of each phase.
    pub fn thresholds(&self) -> Vec<f32> {
        self.parts.iter().map(Conformal::threshold).collect()
    }
}

fn phase_in(starts: &[usize], pos: usize) -> usize {
    starts.partition_point(|&s| s <= pos).saturating_sub(1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn few_calibration_episodes_get_a_longer_first_phase() {
        // alpha 0.05: 39 scores per phase. 4 episodes of 200 steps: [0, 10) holds 40,
        // [10, 20) 40, [20, 40) 80, [40, 80) 160; the phases end at 100 (half of 200).
        assert_eq!(min_phase_scores(0.05), 39);
        assert_eq!(phase_starts(&[200; 4], 0.05), vec![0, 10, 20, 40, 80]);
        // 40 episodes: a single step holds 40 scores; then doubling.
        assert_eq!(
            phase_starts(&[200; 40], 0.05),
            vec![0, 1, 2, 4, 8, 16, 32, 64]
        );
    }

    #[test]
    fn too_few_scores_make_one_pooled_phase() {
        assert_eq!(phase_starts(&[30; 2], 0.05), vec![0]);
        assert_eq!(phase_starts(&[], 0.05), vec![0]);
    }

    #[test]
    fn positions_fall_into_their_phase() {
        let c = PhasedConformal::new(&[(0, 1.0), (5, 2.0), (12, 3.0)], vec![0, 10], 0.5);
        assert_eq!(
            (c.phase(0), c.phase(9), c.phase(10), c.phase(99)),
            (0, 0, 1, 1)
        );
        assert_eq!(c.parts()[0].scores(), &[1.0, 2.0]);
        assert_eq!(c.parts()[1].scores(), &[3.0]);
    }
}
