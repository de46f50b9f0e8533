//! Review candidates from episode outcomes: the window before a failure.
//!
//! An episode that ended in a failure (an outcome the spec marks `"failure": true`) holds the
//! learner's last decisions before it; the expert's labels there teach recovery. Labels piled
//! on the last steps of a few failed episodes teach little, though (those states are often
//! past recovery, and a learner fit to them bends everywhere), so these candidates are
//! limited: at most [`FAILURE_SHARE`] of the budget, taken round-robin across the failed
//! episodes, each episode's window from its earliest step on (where recovery is likelier),
//! with the modest weight of [`super::Reason::BeforeFailure`]. They then compete with every
//! other candidate in the diversity selection, which spreads the list over the visited states.

use crate::campaign::StepTable;

/// Most failure-window candidates, as a share of the budget (rounded up).
pub const FAILURE_SHARE: f64 = 0.25;

/// Rows of the `window` steps before the end of each failed episode (an episode whose outcome
/// is one of `failures`), at most `ceil(FAILURE_SHARE * budget)` of them: the first step of
/// each failed episode's window, then the second, and so on.
pub fn failure_candidates(
    steps: &StepTable,
    failures: &[u32],
    window: usize,
    budget: usize,
) -> Vec<usize> {
    let cap = (FAILURE_SHARE * budget as f64).ceil() as usize;
    let windows: Vec<std::ops::Range<usize>> = steps
        .episodes
        .iter()
        .enumerate()
        .filter(|(e, _)| steps.outcome(*e).is_some_and(|o| failures.contains(&o)))
        .map(|(_, ep)| (ep.start + ep.len.saturating_sub(window))..(ep.start + ep.len))
        .collect();
    let longest = windows
        .iter()
        .map(ExactSizeIterator::len)
        .max()
        .unwrap_or(0);
    (0..longest)
        .flat_map(|i| windows.iter().filter_map(move |w| w.clone().nth(i)))
        .take(cap)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::campaign::Episode;

    fn table(lens: &[usize], outcomes: &[Option<u32>]) -> StepTable {
        let mut t = StepTable::new(1, 1);
        let mut start = 0;
        for (i, &len) in lens.iter().enumerate() {
            t.episodes.push(Episode {
                name: format!("e{i}"),
                start,
                len,
                source: 0,
            });
            start += len;
        }
        t.t = (0..start as i64).collect();
        t.states = vec![0.0; start];
        t.actions = vec![0.0; start];
        t.outcomes = outcomes.to_vec();
        t
    }

    #[test]
    fn windows_are_taken_round_robin_and_capped() {
        // Episodes of 20, 30, 20 steps (rows 0..20, 20..50, 50..70); outcome 1 is a failure in
        // episodes 1 and 2. Window 5: rows 45..50 and 65..70. Budget 12: cap 3 (by hand).
        let t = table(&[20, 30, 20], &[Some(0), Some(1), Some(1)]);
        assert_eq!(failure_candidates(&t, &[1], 5, 12), vec![45, 65, 46]);
        assert_eq!(failure_candidates(&t, &[1], 5, 100).len(), 10);
        assert!(failure_candidates(&t, &[], 5, 100).is_empty());
    }
}
