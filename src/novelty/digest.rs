//! Fingerprints that decide whether saved scores still belong to the campaign: one of the
//! novelty model's inputs (settings, spec features, demonstrations) and one of a round's data.
//! Both are the first 16 hex digits of a SHA-256 (FIPS 180-4) over a fixed byte layout
//! (little-endian numbers, each variable-length part preceded by its length), so any change
//! to a value, a name or an order changes them.

use sha2::{Digest, Sha256};

use crate::campaign::{Campaign, StepTable};

/// Changes whenever the way a model is built or a round is scored changes, so that scores
/// saved by an older version are made again (3: scales that cannot collapse, feature kinds and
/// per-phase calibration; 4: cross-conformal calibration over episode folds).
pub const MODEL_VERSION: &str = "countersteer-novelty-4";

/// The first 16 hex digits of a finished hash.
fn hex(h: Sha256) -> String {
    h.finalize()[..8]
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

fn put_len(h: &mut Sha256, n: usize) {
    h.update((n as u64).to_le_bytes());
}

fn put_str(h: &mut Sha256, s: &str) {
    put_len(h, s.len());
    h.update(s.as_bytes());
}

fn put_f32s(h: &mut Sha256, v: &[f32]) {
    put_len(h, v.len());
    for x in v {
        h.update(x.to_bits().to_le_bytes());
    }
}

/// Feeds every value of a step table a score depends on: dimensions, episodes (names and
/// lengths), `t`, states, actions, interventions, frames and ensemble samples.
fn put_table(h: &mut Sha256, t: &StepTable) {
    put_len(h, t.state_dim);
    put_len(h, t.action_dim);
    put_len(h, t.episodes.len());
    for e in &t.episodes {
        put_str(h, &e.name);
        put_len(h, e.len);
    }
    put_len(h, t.t.len());
    for x in &t.t {
        h.update(x.to_le_bytes());
    }
    put_f32s(h, &t.states);
    put_f32s(h, &t.actions);
    put_len(h, t.interventions.len());
    h.update(
        t.interventions
            .iter()
            .map(|&b| u8::from(b))
            .collect::<Vec<u8>>(),
    );
    put_len(h, t.frames.len());
    for (row, path) in &t.frames {
        h.update(row.to_le_bytes());
        put_str(h, path);
    }
    put_len(h, t.sample_offsets.len());
    for x in &t.sample_offsets {
        h.update(x.to_le_bytes());
    }
    put_f32s(h, &t.samples);
}

/// Fingerprint of a round's (or any table's) data.
pub fn data_fingerprint(steps: &StepTable) -> String {
    let mut h = Sha256::new();
    put_str(&mut h, "steps");
    put_table(&mut h, steps);
    hex(h)
}

/// Fingerprint of everything the campaign's novelty model is made from: [`MODEL_VERSION`],
/// the novelty settings and the spec as `campaign.json` holds them (every field, including
/// ones added later), and the demonstrations' data.
pub fn model_fingerprint(c: &Campaign) -> String {
    let mut h = Sha256::new();
    put_str(&mut h, MODEL_VERSION);
    let json = |v: Result<String, serde_json::Error>| v.unwrap_or_default();
    put_str(&mut h, &json(serde_json::to_string(&c.file.novelty)));
    put_str(&mut h, &json(serde_json::to_string(&c.file.spec)));
    put_table(&mut h, &c.demonstrations);
    hex(h)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table(states: &[f32], names: &[&str]) -> StepTable {
        let mut t = StepTable::new(1, 0);
        for (i, (s, n)) in states.iter().zip(names).enumerate() {
            t.states.push(*s);
            t.t.push(0);
            t.episodes.push(crate::campaign::Episode {
                name: n.to_string(),
                start: i,
                len: 1,
                source: 0,
            });
        }
        t
    }

    #[test]
    fn data_fingerprint_is_sha256_of_the_documented_layout() {
        // Recomputed outside the project with Python's hashlib: the layout of `put_table` for
        // one step (state 1.5, t 0, episode "e", no actions, no extras):
        // b = lambda n: struct.pack('<Q', n)
        // m = b(5)+b'steps' + b(1)+b(0) + b(1)+b(1)+b'e'+b(1) + b(1)+struct.pack('<q',0)
        //     + b(1)+struct.pack('<f',1.5) + b(0) + b(0) + b(0) + b(0) + b(0)
        // hashlib.sha256(m).hexdigest()[:16]
        assert_eq!(data_fingerprint(&table(&[1.5], &["e"])), "7a25f053f6a6dc19");
    }

    #[test]
    fn data_fingerprint_changes_with_a_value_or_a_name() {
        let a = data_fingerprint(&table(&[1.5, 2.0], &["a", "b"]));
        assert_ne!(a, data_fingerprint(&table(&[1.5, 2.5], &["a", "b"])));
        assert_ne!(a, data_fingerprint(&table(&[1.5, 2.0], &["a", "c"])));
        assert_eq!(a, data_fingerprint(&table(&[1.5, 2.0], &["a", "b"])));
    }
}
