//! Loader round trips (JSON Lines, CSV, .npz written by us) and the NumPy fixture written by
//! numpy itself (tests/fixtures/make_numpy_campaign.py, numpy 1.26.4).

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use crate::common;

use std::fs::File;
use std::path::Path;

use countersteer::campaign::write::{write_csv, write_jsonl, write_npz};
use countersteer::campaign::{LoadOptions, StepTable, load_campaign};
use countersteer::progress::Progress;

fn load(root: &Path) -> countersteer::campaign::Campaign {
    match load_campaign(root, &LoadOptions::default(), &Progress::new()) {
        Ok(c) => c,
        Err(e) => panic!("{e}\n{:#?}", e.problems()),
    }
}

/// Columns that every format carries must come back bit for bit.
fn assert_same_core(a: &StepTable, b: &StepTable) {
    assert_eq!(a.len(), b.len());
    let bits = |v: &[f32]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(bits(&a.states), bits(&b.states), "states differ");
    assert_eq!(bits(&a.actions), bits(&b.actions), "actions differ");
    assert_eq!(a.t, b.t);
    let names = |t: &StepTable| {
        t.episodes
            .iter()
            .map(|e| (e.name.clone(), e.start, e.len))
            .collect::<Vec<_>>()
    };
    assert_eq!(names(a), names(b));
}

fn touch_frames(root: &Path, t: &StepTable) {
    for (_, f) in &t.frames {
        let p = root.join(f);
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, b"").unwrap();
    }
}

#[test]
fn jsonl_round_trip_is_exact_with_frames_interventions_and_samples() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    common::write_campaign_file(root, common::small_spec());
    let table = common::awkward_table(3, 20, true);
    let spec = common::small_spec();
    write_jsonl(
        &table,
        &spec,
        "demonstrations",
        File::create(root.join("demonstrations/d.jsonl")).unwrap(),
    )
    .unwrap();
    write_jsonl(
        &table,
        &spec,
        "rounds/1",
        File::create(root.join("rounds/1/r.jsonl")).unwrap(),
    )
    .unwrap();
    touch_frames(root, &table);
    let c = load(root);
    let r = &c.rounds[0].steps;
    assert_same_core(&table, r);
    assert_same_core(&table, &c.demonstrations);
    assert_eq!(r.interventions, table.interventions);
    assert_eq!(r.frames, table.frames);
    assert_eq!(r.sample_offsets, table.sample_offsets);
    assert_eq!(r.samples, table.samples);
    assert_eq!(r.sources, vec![Path::new("rounds/1/r.jsonl").to_path_buf()]);
    assert_eq!(r.origin(21), "rounds/1/r.jsonl:22");
}

#[test]
fn csv_round_trip_is_exact_with_frames_and_interventions() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    common::write_campaign_file(root, common::small_spec());
    let table = common::awkward_table(2, 30, true);
    let spec = common::small_spec();
    write_csv(
        &table,
        &spec,
        "demonstrations",
        File::create(root.join("demonstrations/d.csv")).unwrap(),
    )
    .unwrap();
    write_csv(
        &table,
        &spec,
        "rounds/1",
        File::create(root.join("rounds/1/r.csv")).unwrap(),
    )
    .unwrap();
    touch_frames(root, &table);
    let c = load(root);
    assert_same_core(&table, &c.rounds[0].steps);
    assert_eq!(c.rounds[0].steps.frames, table.frames);
    assert_eq!(c.rounds[0].steps.interventions, table.interventions);
    assert!(
        c.rounds[0].steps.samples.is_empty(),
        "CSV carries no samples"
    );
}

#[test]
fn npz_round_trip_is_exact() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    common::write_campaign_file(root, common::small_spec());
    let table = common::awkward_table(4, 9, false);
    write_npz(
        &table,
        File::create(root.join("demonstrations/d.npz")).unwrap(),
    )
    .unwrap();
    write_npz(&table, File::create(root.join("rounds/1/r.npz")).unwrap()).unwrap();
    let c = load(root);
    assert_same_core(&table, &c.demonstrations);
    assert_same_core(&table, &c.rounds[0].steps);
}

#[test]
fn npz_writes_are_byte_identical() {
    let table = common::awkward_table(2, 5, false);
    let mut a = std::io::Cursor::new(Vec::new());
    let mut b = std::io::Cursor::new(Vec::new());
    write_npz(&table, &mut a).unwrap();
    write_npz(&table, &mut b).unwrap();
    assert_eq!(a.into_inner(), b.into_inner());
}

#[derive(serde::Deserialize)]
struct Expected {
    demonstrations: ExpectedTable,
    round1: ExpectedTable,
}

#[derive(serde::Deserialize)]
struct ExpectedTable {
    states: Vec<Vec<f64>>,
    actions: Vec<Vec<f64>>,
    episode: Vec<String>,
    t: Vec<i64>,
    #[serde(default)]
    intervention: Vec<bool>,
    #[serde(default)]
    samples: Vec<Vec<Vec<f64>>>,
}

fn assert_matches(t: &StepTable, e: &ExpectedTable) {
    let flat = |v: &Vec<Vec<f64>>| v.iter().flatten().map(|&x| x as f32).collect::<Vec<_>>();
    assert_eq!(t.states, flat(&e.states));
    assert_eq!(t.actions, flat(&e.actions));
    assert_eq!(t.t, e.t);
    let names: Vec<String> = t
        .episodes
        .iter()
        .flat_map(|ep| std::iter::repeat_n(ep.name.clone(), ep.len))
        .collect();
    assert_eq!(names, e.episode);
    assert_eq!(t.interventions, e.intervention);
    let samples: Vec<f32> = e
        .samples
        .iter()
        .flatten()
        .flatten()
        .map(|&x| x as f32)
        .collect();
    assert_eq!(t.samples, samples);
}

/// Reference: the arrays numpy itself saved (np.savez / np.save, one array in Fortran
/// order), and the same values dumped to JSON by the same script.
#[test]
fn numpy_written_fixture_reads_back_exactly() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/numpy_campaign");
    let text =
        std::fs::read_to_string(root.with_file_name("numpy_campaign_expected.json")).unwrap();
    let expected: Expected = serde_json::from_str(&text).unwrap();
    let c = load(&root);
    assert_matches(&c.demonstrations, &expected.demonstrations);
    assert_matches(&c.rounds[0].steps, &expected.round1);
    assert_eq!(c.rounds[0].steps.samples(0).unwrap().count(), 2);
}
