//! The step fingerprint: ties a correction to the exact data it was given for.
//!
//! Version 2 (written since December 2026) is `2:` and 16 hex digits of a SHA-256 over the
//! step's episode name, its position in the episode, its `t` and state, and the `t` and state
//! of up to [`CONTEXT_STEPS`] steps on either side. So a step whose state repeats (a vehicle
//! standing still) is not taken for its neighbour when the episode's `t` values are
//! renumbered or a step is dropped. Version 1 (16 hex digits, no prefix: `t` and state only)
//! is still read: [`fingerprint_matches`] compares a recorded fingerprint in its own version.

use sha2::{Digest, Sha256};

use crate::campaign::StepTable;

/// Steps on either side of a step that its (version 2) fingerprint covers.
pub const CONTEXT_STEPS: usize = 2;
/// Prefix of version 2 fingerprints.
pub const V2_PREFIX: &str = "2:";

fn hex16(h: Sha256) -> String {
    h.finalize()[..8]
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

fn put_step(h: &mut Sha256, steps: &StepTable, row: usize) {
    h.update(steps.t[row].to_le_bytes());
    for v in steps.state(row) {
        h.update(v.to_bits().to_le_bytes());
    }
}

/// A stable fingerprint of one step (version 2, see the module documentation): any change to
/// the step's episode name, position, time or state, or to the time or state of a step
/// within [`CONTEXT_STEPS`] of it, changes it. The GUI, the CLI and the consensus all use this
/// one function.
pub fn fingerprint(steps: &StepTable, row: usize) -> String {
    let e = &steps.episodes[steps.episode_of(row)];
    let mut h = Sha256::new();
    h.update(V2_PREFIX.as_bytes());
    h.update((e.name.len() as u64).to_le_bytes());
    h.update(e.name.as_bytes());
    h.update(((row - e.start) as u64).to_le_bytes());
    put_step(&mut h, steps, row);
    let lo = row.saturating_sub(CONTEXT_STEPS).max(e.start);
    let hi = (row + CONTEXT_STEPS).min(e.start + e.len - 1);
    h.update(((row - lo) as u64).to_le_bytes());
    h.update(((hi - row) as u64).to_le_bytes());
    for r in (lo..=hi).filter(|&r| r != row) {
        put_step(&mut h, steps, r);
    }
    format!("{V2_PREFIX}{}", hex16(h))
}

/// The version 1 fingerprint: the first 16 hex digits of the SHA-256 of the step's `t`
/// (little-endian i64) followed by the bit patterns of its state values (little-endian f32).
pub fn fingerprint_v1(steps: &StepTable, row: usize) -> String {
    let mut h = Sha256::new();
    put_step(&mut h, steps, row);
    hex16(h)
}

/// Whether a recorded fingerprint (of either version) matches the step as it is now.
pub fn fingerprint_matches(steps: &StepTable, row: usize, recorded: &str) -> bool {
    if recorded.starts_with(V2_PREFIX) {
        recorded == fingerprint(steps, row)
    } else {
        recorded == fingerprint_v1(steps, row)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::campaign::Episode;

    fn table(states: &[f32], ts: &[i64]) -> StepTable {
        StepTable {
            state_dim: 1,
            action_dim: 0,
            states: states.to_vec(),
            t: ts.to_vec(),
            episodes: vec![Episode {
                name: "e".into(),
                start: 0,
                len: ts.len(),
                source: 0,
            }],
            ..Default::default()
        }
    }

    #[test]
    fn fingerprint_v1_is_sha256_of_t_and_state_bits() {
        // Reference digest from Python's hashlib (outside the project):
        // hashlib.sha256(struct.pack('<q', 7) + struct.pack('<2f', 1.5, -2.0)).hexdigest()[:16]
        let t = StepTable {
            state_dim: 2,
            states: vec![1.5, -2.0],
            t: vec![7],
            ..table(&[], &[7])
        };
        assert_eq!(fingerprint_v1(&t, 0), "883e84fa23489c60");
        assert!(fingerprint_matches(&t, 0, "883e84fa23489c60"));
    }

    #[test]
    fn fingerprint_v2_is_sha256_of_the_documented_layout() {
        // From Python's hashlib (outside the project), for the middle step of states
        // [1, 2, 3] at t [0, 1, 2] in episode "e":
        // q = lambda n: struct.pack('<Q', n); s = lambda t, x: struct.pack('<qf', t, x)
        // m = b'2:' + q(1) + b'e' + q(1) + s(1, 2.0) + q(1) + q(1) + s(0, 1.0) + s(2, 3.0)
        // '2:' + hashlib.sha256(m).hexdigest()[:16]
        let t = table(&[1.0, 2.0, 3.0], &[0, 1, 2]);
        assert_eq!(fingerprint(&t, 1), "2:03f5ca9075700d68");
    }

    #[test]
    fn a_repeated_state_is_not_matched_to_its_neighbour_after_t_is_renumbered() {
        // A rover standing still for three steps; the first step is dropped and t renumbered
        // from 0, so (episode, t = 2) is now the step that was t = 3.
        let before = table(&[0.0, 5.0, 5.0, 5.0, 9.0], &[0, 1, 2, 3, 4]);
        let after = table(&[5.0, 5.0, 5.0, 9.0], &[0, 1, 2, 3]);
        let (old, new) = (before.find("e", 2).unwrap(), after.find("e", 2).unwrap());
        // Version 1 cannot tell them apart: the correction would be applied to another step.
        assert!(fingerprint_matches(
            &after,
            new,
            &fingerprint_v1(&before, old)
        ));
        assert!(!fingerprint_matches(
            &after,
            new,
            &fingerprint(&before, old)
        ));
        // Unchanged data still matches, in both versions.
        assert!(fingerprint_matches(
            &before,
            old,
            &fingerprint(&before, old)
        ));
        assert_ne!(fingerprint(&before, 1), fingerprint(&before, 2));
    }
}
