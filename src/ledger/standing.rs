//! The standing-verdict rule, written once: within one annotator's ledger, a correction
//! stands when no retraction points at it and no later correction of the same step (round,
//! episode, t) follows it. Undo retracts the latest standing correction, so an earlier
//! correction of the step stands again.

use std::collections::{HashMap, HashSet};

use super::record::{Correction, Entry, Record};

/// Sequence numbers of the corrections that a retraction of these records points at.
pub fn retracted(records: &[Record]) -> HashSet<u64> {
    records
        .iter()
        .filter_map(|r| match r.entry {
            Entry::Retraction(x) => Some(x.retracts),
            Entry::Correction(_) => None,
        })
        .collect()
}

/// The standing corrections of one ledger's records, one per step, in ledger order (by
/// sequence number), each with its sequence number.
pub fn standing(records: &[Record]) -> Vec<(u64, &Correction)> {
    let gone = retracted(records);
    let mut latest: HashMap<(u32, &str, i64), (u64, &Correction)> = HashMap::new();
    for r in records.iter().filter(|r| !gone.contains(&r.seq)) {
        if let Some(c) = r.correction() {
            latest.insert((c.round, c.episode.as_str(), c.t), (r.seq, c));
        }
    }
    let mut out: Vec<_> = latest.into_values().collect();
    out.sort_by_key(|(seq, _)| *seq);
    out
}

/// The standing record of one step, if any.
pub fn standing_of<'a>(
    records: &'a [Record],
    round: u32,
    episode: &str,
    t: i64,
) -> Option<&'a Record> {
    let gone = retracted(records);
    records.iter().rev().find(|r| {
        !gone.contains(&r.seq)
            && r.correction()
                .is_some_and(|c| c.round == round && c.episode == episode && c.t == t)
    })
}

/// The correction an undo takes back: the latest one in the ledger that is not retracted.
pub fn last_standing(records: &[Record]) -> Option<(u64, &Correction)> {
    let gone = retracted(records);
    records
        .iter()
        .rev()
        .filter(|r| !gone.contains(&r.seq))
        .find_map(|r| Some((r.seq, r.correction()?)))
}

/// Records built by hand for tests of the rule and of its users.
#[cfg(test)]
pub(crate) mod kit {
    use crate::ledger::{Correction, Entry, Record, Retraction, Verdict};

    /// A record of annotator `ana`.
    pub(crate) fn record(seq: u64, entry: Entry) -> Record {
        Record {
            seq,
            entry,
            annotator: "ana".into(),
            time: String::new(),
            tool: String::new(),
        }
    }

    /// A correction of step `e` t of round 1.
    pub(crate) fn fix(t: i64, verdict: Verdict) -> Entry {
        Entry::Correction(Correction {
            round: 1,
            episode: "e".into(),
            t,
            fingerprint: String::new(),
            verdict,
            note: None,
        })
    }

    /// A retraction of `seq`.
    pub(crate) fn undo(seq: u64) -> Entry {
        Entry::Retraction(Retraction { retracts: seq })
    }
}

#[cfg(test)]
mod tests {
    use super::kit::{fix, record, undo};
    use super::*;
    use crate::ledger::Verdict;

    // Worked by hand from the rule in the module documentation.
    #[test]
    fn a_retracted_latest_correction_lets_the_earlier_one_stand() {
        let records = [
            record(1, fix(3, Verdict::Skip)),
            record(2, fix(3, Verdict::Unrecoverable)),
            record(3, undo(2)),
            record(4, fix(5, Verdict::Skip)),
        ];
        let seqs: Vec<u64> = standing(&records).iter().map(|(s, _)| *s).collect();
        assert_eq!(seqs, [1, 4]);
        assert_eq!(standing_of(&records, 1, "e", 3).map(|r| r.seq), Some(1));
        assert_eq!(standing_of(&records, 2, "e", 3).map(|r| r.seq), None);
        assert_eq!(last_standing(&records).map(|(s, _)| s), Some(4));
        let after = [&records[..], &[record(5, undo(4)), record(6, undo(1))]].concat();
        assert_eq!(last_standing(&after).map(|(s, _)| s), None);
        assert!(standing(&after).is_empty());
    }
}
