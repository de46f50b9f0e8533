//! Tests of the model file and of shard scoring.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use super::*;
use crate::novelty::query::brute_knn;
use crate::novelty::synth::{SynthSpec, campaign, trajectories};
use crate::novelty::{build_model, score_round};

fn synth(dim: usize, drift: f32) -> Campaign {
    let demos = trajectories(&SynthSpec::expert(10, 200, dim, 3));
    let mut r = SynthSpec::expert(6, 700, dim, 9);
    r.drift = drift;
    r.prefix = "run".into();
    campaign(demos, trajectories(&r), 5, 0.05)
}

/// Every field of two score sets, compared by bit pattern (NaN equals NaN of the same bits).
fn assert_bitwise(a: &RoundScores, b: &RoundScores, what: &str) {
    let bits = |v: &[f32]| v.iter().map(|x| x.to_bits()).collect::<Vec<u32>>();
    assert_eq!(a.len(), b.len(), "{what}: rows");
    assert_eq!(bits(&a.novelty), bits(&b.novelty), "{what}: novelty");
    assert_eq!(bits(&a.p_value), bits(&b.p_value), "{what}: p_value");
    assert_eq!(a.flagged, b.flagged, "{what}: flagged");
    assert_eq!(
        bits(&a.contributions),
        bits(&b.contributions),
        "{what}: contributions"
    );
    assert_eq!(
        bits(&a.action_gap),
        bits(&b.action_gap),
        "{what}: action_gap"
    );
    let (na, nb) = (&a.neighbour_action, &b.neighbour_action);
    assert_eq!(bits(na), bits(nb), "{what}: neighbour_action");
    let (sa, sb) = (&a.neighbour_spread, &b.neighbour_spread);
    assert_eq!(bits(sa), bits(sb), "{what}: neighbour_spread");
    let (ea, eb) = (&a.ensemble_spread, &b.ensemble_spread);
    assert_eq!(bits(ea), bits(eb), "{what}: ensemble_spread");
    assert_eq!(a.neighbours, b.neighbours, "{what}: neighbours");
    assert_eq!(
        a.threshold.to_bits(),
        b.threshold.to_bits(),
        "{what}: threshold"
    );
    assert_eq!(a.alpha.to_bits(), b.alpha.to_bits(), "{what}: alpha");
    assert_eq!(bits(&a.scale), bits(&b.scale), "{what}: scale");
}

/// Scores of `rows` of a whole-round result.
fn rows_of(s: &RoundScores, rows: Range<usize>) -> RoundScores {
    let (d, a, k) = (s.state_dim, s.action_dim, s.k);
    let (x, y) = (rows.start, rows.end);
    RoundScores {
        novelty: s.novelty[x..y].to_vec(),
        p_value: s.p_value[x..y].to_vec(),
        flagged: s.flagged[x..y].to_vec(),
        contributions: s.contributions[x * d..y * d].to_vec(),
        action_gap: s.action_gap[x..y].to_vec(),
        neighbour_action: s.neighbour_action[x * a..y * a].to_vec(),
        neighbour_spread: s.neighbour_spread[x..y].to_vec(),
        ensemble_spread: s.ensemble_spread[x..y].to_vec(),
        neighbours: s.neighbours[x * k..y * k].to_vec(),
        ..s.clone()
    }
}

fn check_shards(c: &Campaign, cuts: &[usize]) {
    let p = Progress::new();
    let model = build_model(c, &p).unwrap();
    let steps = &c.rounds[0].steps;
    let whole = score_round(&model, c, steps, &p).unwrap();
    let mut bounds = vec![0];
    bounds.extend(cuts.iter().copied().filter(|&x| x < steps.len()));
    bounds.push(steps.len());
    for w in bounds.windows(2) {
        let part = score_shard(
            &model,
            &c.demonstrations,
            &c.spec().actions,
            steps,
            w[0]..w[1],
            &p,
        )
        .unwrap();
        assert_bitwise(&part, &rows_of(&whole, w[0]..w[1]), &format!("rows {w:?}"));
    }
}

#[test]
fn shards_give_the_rows_of_whole_round_scoring_bit_for_bit() {
    // Cuts mid-episode, at and beside the search's 512-row chunks, and one-row shards.
    let cuts = [1, 2, 511, 512, 513, 700, 701, 1500, 2047, 3999, 4000];
    check_shards(&synth(3, 0.01), &cuts); // plain 4-wide tree
    check_shards(&synth(24, 0.01), &cuts); // principal-subspace path
}

/// Demonstrations whose episodes repeat the same states with different actions: every
/// search has ties at the k-th distance, where the kept rows must not depend on the hints.
fn tied_campaign() -> Campaign {
    let base = trajectories(&SynthSpec::expert(1, 300, 3, 5));
    let mut demos = StepTable::new(3, 2);
    for e in 0..6 {
        demos.episodes.push(Episode {
            name: format!("copy-{e}"),
            start: demos.len(),
            len: base.len(),
            source: 0,
        });
        demos.states.extend(&base.states);
        demos
            .actions
            .extend(base.actions.iter().map(|a| a * (1.0 - 0.1 * e as f32)));
        demos.t.extend(&base.t);
        demos.origins.extend(&base.origins);
    }
    demos.sources = base.sources.clone();
    let mut r = SynthSpec::expert(4, 600, 3, 9);
    r.drift = 0.002;
    campaign(demos, trajectories(&r), 5, 0.05)
}

#[test]
fn tied_neighbours_are_the_smallest_rows_whatever_the_chain() {
    let c = tied_campaign();
    check_shards(&c, &[1, 3, 100, 257, 512, 600, 1001]);
    // The kept rows are the brute-force answer ordered by (distance, row).
    let p = Progress::new();
    let model = build_model(&c, &p).unwrap();
    let steps = &c.rounds[0].steps;
    let s = score_round(&model, &c, steps, &p).unwrap();
    for row in (0..steps.len()).step_by(37) {
        let mut q = Vec::new();
        model.scale_into(steps.state(row), &mut q);
        let d = &c.demonstrations;
        let want: Vec<u32> = brute_knn(&d.states, 3, model.inv_scale(), &q, 5)
            .iter()
            .map(|h| h.0)
            .collect();
        assert_eq!(s.neighbour_rows(row), want.as_slice(), "row {row}");
    }
}

#[test]
fn a_saved_model_loads_and_scores_exactly_as_the_built_one() {
    let dir = tempfile::tempdir().unwrap();
    for dim in [3, 24] {
        let c = synth(dim, 0.01);
        let p = Progress::new();
        let built = build_model(&c, &p).unwrap();
        let path = dir.path().join(format!("model-{dim}.bin"));
        save_model(&path, &built, &c.demonstrations).unwrap();
        let loaded = load_model(&path, &c.demonstrations).unwrap();
        assert_eq!(loaded.conformal(), built.conformal());
        assert_eq!(loaded.split(), built.split());
        assert_eq!((loaded.k(), loaded.scale()), (built.k(), built.scale()));
        let steps = &c.rounds[0].steps;
        let a = score_round(&built, &c, steps, &p).unwrap();
        let b = score_round(&loaded, &c, steps, &p).unwrap();
        assert_bitwise(&a, &b, &format!("dim {dim}"));
        // Saving the loaded model gives the same bytes.
        assert_eq!(
            encode(&loaded, &c.demonstrations),
            std::fs::read(&path).unwrap()
        );
    }
}

#[test]
fn a_model_refuses_changed_demonstrations() {
    let dir = tempfile::tempdir().unwrap();
    let mut c = synth(3, 0.0);
    let model = build_model(&c, &Progress::new()).unwrap();
    let path = dir.path().join("model.bin");
    save_model(&path, &model, &c.demonstrations).unwrap();
    c.demonstrations.states[17] += 1e-3;
    let err = load_model(&path, &c.demonstrations).unwrap_err();
    match &err {
        ModelFileError::Stale { field, .. } => assert_eq!(field, "demonstrations"),
        other => panic!("expected a stale model, got {other}"),
    }
    let text = err.to_string();
    assert!(
        text.contains("model.bin") && text.contains("build the model again"),
        "{text}"
    );
}

#[test]
fn a_damaged_or_foreign_file_is_refused_with_its_field() {
    let dir = tempfile::tempdir().unwrap();
    let c = synth(3, 0.0);
    let model = build_model(&c, &Progress::new()).unwrap();
    let bytes = encode(&model, &c.demonstrations);
    let field_of = |b: &[u8]| match decode(b, Path::new("m.bin")) {
        Err(ModelFileError::Format { field, .. }) => field,
        other => panic!("expected a format error, got {other:?}"),
    };
    let mut flipped = bytes.clone();
    flipped[60] ^= 1;
    assert_eq!(field_of(&flipped), "checksum");
    assert_eq!(field_of(&bytes[..bytes.len() - 5]), "checksum");
    assert_eq!(
        field_of(b"not a model at all, just some text of enough length....."),
        "magic"
    );
    // A future version with a valid checksum is named as such.
    let mut future = bytes[..bytes.len() - 32].to_vec();
    future[8] = FORMAT_VERSION as u8 + 1;
    let digest = Sha256::digest(&future);
    future.extend_from_slice(&digest);
    assert_eq!(field_of(&future), "version");
    let missing = load_model(&dir.path().join("none.bin"), &c.demonstrations).unwrap_err();
    assert!(matches!(missing, ModelFileError::Io { .. }), "{missing}");
}

#[test]
fn the_fingerprint_is_sha256_of_the_documented_bytes() {
    // Reference from Python's hashlib (outside the project), for one episode "a" of one step
    // with state [1.5] and action [-2.0] at t = 7:
    // hashlib.sha256(struct.pack('<4Q', 1, 1, 1, 1) + struct.pack('<Q', 1) + b'a'
    //   + struct.pack('<Q', 1) + struct.pack('<q', 7) + struct.pack('<2f', 1.5, -2.0))
    let t = StepTable {
        state_dim: 1,
        action_dim: 1,
        states: vec![1.5],
        actions: vec![-2.0],
        t: vec![7],
        episodes: vec![Episode {
            name: "a".into(),
            start: 0,
            len: 1,
            source: 0,
        }],
        ..Default::default()
    };
    assert_eq!(fingerprint(&t), FINGERPRINT_REFERENCE);
}

/// See `the_fingerprint_is_sha256_of_the_documented_bytes`.
const FINGERPRINT_REFERENCE: &str =
    "7fd6da81d13357676fd023d3bce5c15bf9a3ce0a0085236cab869852cd1dc25c";
