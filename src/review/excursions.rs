//! Excursions: maximal runs of flagged steps in one episode, with hysteresis.
//!
//! A run starts at a step whose p-value is at most `alpha` and continues until a step's
//! p-value rises above the looser exit level `exit_factor * alpha`; a single unflagged step
//! inside an excursion therefore does not split it. Runs shorter than `min_len` flagged-to-
//! flagged steps are dropped, so one noisy step does not make an excursion. This is the
//! two-threshold (Schmitt trigger) rule of signal detection, applied to p-values.

use crate::campaign::StepTable;
use crate::novelty::RoundScores;

/// How excursions are found.
#[derive(Debug, Clone, PartialEq)]
pub struct ExcursionSettings {
    /// Entry level; `None` uses the scores' alpha.
    pub alpha: Option<f64>,
    /// An excursion ends at a step with p-value above `exit_factor * alpha`.
    pub exit_factor: f64,
    /// Fewest steps from onset to end (inclusive).
    pub min_len: usize,
}

impl Default for ExcursionSettings {
    fn default() -> Self {
        ExcursionSettings {
            alpha: None,
            exit_factor: 2.0,
            min_len: 3,
        }
    }
}

/// One excursion; all fields are rows of the step table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Excursion {
    /// Episode index in the step table.
    pub episode: usize,
    /// First flagged row (where the learner leaves expert territory).
    pub onset: usize,
    /// Row of the largest novelty.
    pub peak: usize,
    /// Last flagged row (inclusive).
    pub end: usize,
}

impl Excursion {
    /// Number of steps from onset to end.
    pub fn len(&self) -> usize {
        self.end + 1 - self.onset
    }

    /// Never empty; present for symmetry with `len`.
    pub fn is_empty(&self) -> bool {
        false
    }
}

/// Finds the excursions of every episode, in table order.
pub fn excursions(
    steps: &StepTable,
    scores: &RoundScores,
    settings: &ExcursionSettings,
) -> Vec<Excursion> {
    let alpha = settings.alpha.unwrap_or(scores.alpha) as f32;
    let exit = (f64::from(alpha) * settings.exit_factor) as f32;
    let mut out = Vec::new();
    for (e, ep) in steps.episodes.iter().enumerate() {
        let mut open: Option<(usize, usize)> = None;
        for row in ep.rows() {
            let p = scores.p_value[row];
            open = match open {
                None if p <= alpha => Some((row, row)),
                None => None,
                Some((onset, _)) if p <= alpha => Some((onset, row)),
                Some(run) if p <= exit => Some(run),
                Some(run) => {
                    push_run(&mut out, scores, e, run, settings.min_len);
                    None
                }
            };
        }
        if let Some(run) = open {
            push_run(&mut out, scores, e, run, settings.min_len);
        }
    }
    out
}

fn push_run(
    out: &mut Vec<Excursion>,
    scores: &RoundScores,
    episode: usize,
    (onset, end): (usize, usize),
    min_len: usize,
) {
    if end + 1 - onset < min_len {
        return;
    }
    let peak = (onset..=end)
        .max_by(|&a, &b| {
            scores.novelty[a]
                .total_cmp(&scores.novelty[b])
                .then(b.cmp(&a))
        })
        .unwrap_or(onset);
    out.push(Excursion {
        episode,
        onset,
        peak,
        end,
    });
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::campaign::Episode;

    fn case(p: &[f32]) -> (StepTable, RoundScores) {
        let mut t = StepTable::new(1, 1);
        t.t = (0..p.len() as i64).collect();
        t.episodes.push(Episode {
            name: "e".into(),
            start: 0,
            len: p.len(),
            source: 0,
        });
        let s = RoundScores {
            p_value: p.to_vec(),
            novelty: p.iter().map(|p| 1.0 - p).collect(),
            alpha: 0.05,
            ..Default::default()
        };
        (t, s)
    }

    #[test]
    fn one_noisy_step_neither_splits_nor_creates_an_excursion() {
        // rows:      0    1     2     3     4     5     6     7    8    9     10
        let p = [
            0.5, 0.01, 0.02, 0.08, 0.01, 0.001, 0.04, 0.5, 0.5, 0.01, 0.5,
        ];
        let (t, s) = case(&p);
        let ex = excursions(&t, &s, &ExcursionSettings::default());
        // Row 3 (0.08 <= 2 * 0.05) keeps the run open; row 9 alone is too short.
        assert_eq!(
            ex,
            vec![Excursion {
                episode: 0,
                onset: 1,
                peak: 5,
                end: 6
            }]
        );
    }

    #[test]
    fn an_excursion_still_open_at_the_episode_end_is_kept() {
        let (t, s) = case(&[0.5, 0.01, 0.01, 0.01]);
        let ex = excursions(&t, &s, &ExcursionSettings::default());
        assert_eq!(ex.len(), 1);
        assert_eq!((ex[0].onset, ex[0].end), (1, 3));
    }
}
