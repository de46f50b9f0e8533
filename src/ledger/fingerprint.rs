//! The step fingerprint: ties a correction to the exact data it was given for.

use sha2::{Digest, Sha256};

use crate::campaign::StepTable;

/// A stable fingerprint of one step: the first 16 hex digits of the SHA-256 of its `t`
/// (little-endian i64) followed by the bit patterns of its state values (little-endian f32).
/// Any change to the step's state or time changes it; the GUI, the CLI and the consensus all
/// use this one function.
pub fn fingerprint(steps: &StepTable, row: usize) -> String {
    let mut h = Sha256::new();
    h.update(steps.t[row].to_le_bytes());
    for v in steps.state(row) {
        h.update(v.to_bits().to_le_bytes());
    }
    let digest = h.finalize();
    digest[..8].iter().map(|b| format!("{b:02x}")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table(state: &[f32], t: i64) -> StepTable {
        StepTable {
            state_dim: state.len(),
            action_dim: 0,
            states: state.to_vec(),
            t: vec![t],
            ..Default::default()
        }
    }

    #[test]
    fn fingerprint_is_sha256_of_t_and_state_bits() {
        // Reference digest from Python's hashlib (outside the project):
        // hashlib.sha256(struct.pack('<q', 7) + struct.pack('<2f', 1.5, -2.0)).hexdigest()[:16]
        assert_eq!(fingerprint(&table(&[1.5, -2.0], 7), 0), "883e84fa23489c60");
    }

    #[test]
    fn fingerprint_changes_with_any_state_bit_or_t() {
        let a = fingerprint(&table(&[1.5, -2.0], 7), 0);
        assert_eq!(a.len(), 16);
        assert_ne!(a, fingerprint(&table(&[1.5, -2.0], 8), 0));
        assert_ne!(a, fingerprint(&table(&[1.5000001, -2.0], 7), 0));
        assert_ne!(
            fingerprint(&table(&[0.0], 0), 0),
            fingerprint(&table(&[-0.0], 0), 0)
        );
    }
}
