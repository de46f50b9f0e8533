//! The fuzz corpus, replayed in the normal suite: every seed under `fuzz/corpus/<target>/`
//! and every input that once crashed a target (`fuzz/regressions/<target>/`) goes through the
//! same entry point as the fuzz target ([`crate::fuzzing`]), without cargo-fuzz. A unit test,
//! because the entry points exist only in test builds and under `--cfg fuzzing`.

use std::path::Path;

use crate::fuzzing::{self, StepFormat};

const TARGETS: [&str; 9] = [
    "spec",
    "jsonl",
    "csv",
    "npy",
    "npz",
    "ledger",
    "ledger_append",
    "frame",
    "scores",
];

fn run(target: &str, data: &[u8]) {
    match target {
        "spec" => fuzzing::campaign_file(data),
        "jsonl" => drop(fuzzing::steps(StepFormat::JsonLines, data)),
        "csv" => drop(fuzzing::steps(StepFormat::Csv, data)),
        "npz" => drop(fuzzing::steps(StepFormat::Npz, data)),
        "scores" => fuzzing::scores(data),
        "npy" => fuzzing::npy(data),
        "ledger" => fuzzing::ledger(data),
        "ledger_append" => fuzzing::ledger_append(data),
        "frame" => fuzzing::frame(data),
        other => panic!("no fuzz target `{other}`"),
    }
}

fn replay(folder: &str) -> usize {
    let base = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fuzz")
        .join(folder);
    let mut count = 0;
    for target in TARGETS {
        let Ok(entries) = std::fs::read_dir(base.join(target)) else {
            continue;
        };
        for entry in entries {
            let path = entry.unwrap().path();
            let data = std::fs::read(&path).unwrap();
            let outcome = std::panic::catch_unwind(|| run(target, &data));
            assert!(outcome.is_ok(), "{target}: {} fails", path.display());
            count += 1;
        }
    }
    count
}

#[test]
fn every_seed_of_the_fuzz_corpus_passes_its_target() {
    assert!(replay("corpus") >= 40);
}

#[test]
fn every_input_that_once_crashed_a_target_passes_now() {
    replay("regressions");
}

#[test]
fn the_seeds_are_read_as_the_corpus_says() {
    // The entry points really read: a good seed gives rows, a faulty one a located problem.
    let good =
        std::fs::read(Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/corpus/csv/good.csv"));
    let (table, problems) = fuzzing::steps(StepFormat::Csv, &good.unwrap());
    assert_eq!(table.len(), 3, "{problems:#?}");
    assert_eq!(problems.len(), 1, "{problems:#?}"); // steer 0.6 clipped to 0.5
    let (table, problems) = fuzzing::steps(StepFormat::JsonLines, b"{\"episode\": 1}\n");
    assert!(table.is_empty());
    assert_eq!(problems[0].field, "t");
}

#[test]
fn the_scores_seeds_are_the_library_example_and_damaged_copies_of_it() {
    // COUNTERSTEER_WRITE_SEEDS=1 writes them (once, when the scores layout changes).
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/corpus/scores");
    let good = fuzzing::scores_example();
    if std::env::var_os("COUNTERSTEER_WRITE_SEEDS").is_some() {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(dir.join("good.npz"), &good).unwrap();
        let mut flipped = good.clone();
        let at = good.len() / 3;
        flipped[at] ^= 0x10;
        std::fs::write(dir.join("flipped.npz"), flipped).unwrap();
        std::fs::write(dir.join("truncated.npz"), &good[..good.len() / 2]).unwrap();
    }
    assert_eq!(std::fs::read(dir.join("good.npz")).unwrap(), good);
    assert!(std::fs::read(dir.join("flipped.npz")).unwrap() != good);
}
