//! The merged-set export on a small campaign with two annotators' ledgers.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use crate::campaign_kit as common;

use std::path::Path;

use countersteer::SAFETY_CAUTION;
use countersteer::export::{
    ExportError, ExportOptions, Format, Manifest, RowSource, Weighting, export, manifest_path,
    merge, read_merged,
};
use countersteer::ledger::sha256_hex;
use countersteer::progress::Progress;

fn run(dir: &Path, name: &str, opts: &ExportOptions) -> (std::path::PathBuf, Manifest) {
    let c = common::load(dir);
    let ledgers = countersteer::ledger::read_ledgers(dir).unwrap();
    let tally = countersteer::consensus::tally(&c, &ledgers);
    let out = dir.join("exports").join(name);
    let m = export(&c, &tally, opts, &out, &Progress::new()).unwrap();
    (out, m)
}

fn setup(demo_len: usize) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let c = common::write_campaign(dir.path(), demo_len);
    common::two_annotators(&c);
    dir
}

#[test]
fn merged_set_holds_demonstrations_and_consensus_corrections_with_provenance() {
    let dir = setup(20);
    let (out, m) = run(
        dir.path(),
        "merged.jsonl",
        &ExportOptions::new(Format::JsonLines),
    );
    assert_eq!(
        (m.rows.total, m.rows.demonstration, m.rows.correction),
        (46, 40, 6)
    );
    assert_eq!(m.rows.correction_by_round["1"], 5);
    assert_eq!(m.rows.correction_by_round["2"], 1);
    // lane-01 t 7 (two `unrecoverable`) and lane-02 t 1 (one `skip`) give no action.
    assert_eq!(m.excluded.no_consensus_action, 2);
    assert_eq!(m.safety, SAFETY_CAUTION);
    let bytes = std::fs::read(&out).unwrap();
    assert_eq!(m.output.sha256, sha256_hex(&bytes));
    assert_eq!(
        (m.output.file.as_str(), m.output.bytes),
        ("merged.jsonl", bytes.len() as u64)
    );
    let files: Vec<&str> = m.inputs.iter().map(|f| f.file.as_str()).collect();
    assert_eq!(
        files,
        [
            "campaign.json",
            "demonstrations/steps.jsonl",
            "ledgers/ana.jsonl",
            "ledgers/ben.jsonl",
            "rounds/1/steps.jsonl",
            "rounds/2/steps.jsonl"
        ]
    );
    let ana = std::fs::read(dir.path().join("ledgers/ana.jsonl")).unwrap();
    assert_eq!(m.inputs[2].sha256, sha256_hex(&ana));
    let on_disk: Manifest =
        serde_json::from_slice(&std::fs::read(manifest_path(&out)).unwrap()).unwrap();
    assert_eq!(on_disk, m);
    assert!(manifest_path(&out).ends_with("exports/merged.jsonl.manifest.json"));

    let set = read_merged(&out, &common::spec()).unwrap();
    // Worked by hand: row 40 + 4 is round 1 lane-00 t 4: steer median of -0.2 + 0.4 and that + 0.02; speed
    // `slow` against `stop` ties and goes to `stop` (listed first); agreement 1 - 0.5.
    let r = 44;
    assert_eq!(set.source[r], RowSource::Correction);
    assert_eq!(
        (set.round[r], set.episode[r].as_str(), set.t[r]),
        (Some(1), "lane-00", 4)
    );
    let (a, b) = (0.2f64 as f32, 0.22f64 as f32);
    let median = ((f64::from(a) + f64::from(b)) / 2.0) as f32;
    assert_eq!(set.action(r), &[median, 0.0]);
    assert_eq!((set.annotators[r], set.agreement[r]), (2, Some(0.5)));
    // t 0: steer -0.2 and -0.18 (spread 0.02 of the range 1.0), speed agreed.
    let agreement = set.agreement[40].unwrap();
    assert!((agreement - 0.98).abs() < 1e-6, "{agreement}");
    // Round 2: ben alone.
    assert_eq!(
        (set.round[45], set.annotators[45], set.agreement[45]),
        (Some(2), 1, None)
    );
    assert!(set.weight.iter().all(|&w| w == 1.0));
    assert_eq!(set.source[0], RowSource::Demonstration);
    assert_eq!((set.round[0], set.annotators[0]), (None, 0));
}

#[test]
fn filters_and_weighting_change_what_is_kept_and_how_much_it_weighs() {
    let dir = setup(4);
    let mut opts = ExportOptions::new(Format::Csv);
    opts.min_agreement = Some(0.9);
    let (_, m) = run(dir.path(), "a.csv", &opts);
    assert_eq!((m.rows.correction, m.excluded.below_agreement), (5, 1));
    let mut opts = ExportOptions::new(Format::Csv);
    opts.min_annotators = 2;
    let (_, m) = run(dir.path(), "b.csv", &opts);
    assert_eq!((m.rows.correction, m.excluded.too_few_annotators), (5, 1));
    let mut opts = ExportOptions::new(Format::Csv);
    opts.weighting = Weighting::Agreement;
    opts.correction_weight = 2.0;
    let (out, m) = run(dir.path(), "c.csv", &opts);
    assert_eq!(m.settings.weighting, "agreement");
    let set = read_merged(&out, &common::spec()).unwrap();
    let w: Vec<f32> = set.weight.clone();
    assert_eq!(&w[..8], &[1.0; 8], "demonstrations keep weight 1");
    assert!((w[8] - 2.0 * 0.98).abs() < 1e-6, "{}", w[8]);
    assert_eq!(w[12], 2.0 * 0.5);
    assert_eq!(
        w[13], 2.0,
        "a single annotator has no agreement and keeps the factor"
    );
}

#[test]
fn every_format_reads_back_to_the_merged_set() {
    let dir = setup(6);
    let c = common::load(dir.path());
    let ledgers = countersteer::ledger::read_ledgers(dir.path()).unwrap();
    let tally = countersteer::consensus::tally(&c, &ledgers);
    let expected = merge(&c, &tally, &ExportOptions::new(Format::Npz)).0;
    assert_eq!(expected.len(), 18);
    for format in [Format::JsonLines, Format::Csv, Format::Npz] {
        let out = dir.path().join(format!("exports/m.{}", format.extension()));
        export(
            &c,
            &tally,
            &ExportOptions::new(format),
            &out,
            &Progress::new(),
        )
        .unwrap();
        let got = read_merged(&out, &common::spec()).unwrap();
        assert_eq!(got, expected, "{format:?}");
    }
}

#[test]
fn exports_of_one_name_in_two_formats_keep_their_own_manifests() {
    let dir = setup(3);
    let (a, ma) = run(dir.path(), "merged.npz", &ExportOptions::new(Format::Npz));
    let (b, mb) = run(dir.path(), "merged.csv", &ExportOptions::new(Format::Csv));
    assert_ne!(manifest_path(&a), manifest_path(&b));
    let read = |p: &Path| -> Manifest {
        serde_json::from_slice(&std::fs::read(manifest_path(p)).unwrap()).unwrap()
    };
    assert_eq!((read(&a), read(&b)), (ma, mb));
}

#[test]
fn exports_are_byte_identical_across_runs() {
    let dir = setup(10);
    for format in [Format::JsonLines, Format::Csv, Format::Npz] {
        let name = format!("merged.{}", format.extension());
        let (a, _) = run(
            dir.path(),
            &format!("one/{name}"),
            &ExportOptions::new(format),
        );
        let (b, _) = run(
            dir.path(),
            &format!("two/{name}"),
            &ExportOptions::new(format),
        );
        assert_eq!(std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
        let (ma, mb) = (manifest_path(&a), manifest_path(&b));
        assert_eq!(std::fs::read(ma).unwrap(), std::fs::read(mb).unwrap());
    }
}

fn cancelled_export_leaves_nothing(demo_len: usize) {
    let dir = setup(demo_len);
    let c = common::load(dir.path());
    let ledgers = countersteer::ledger::read_ledgers(dir.path()).unwrap();
    let tally = countersteer::consensus::tally(&c, &ledgers);
    let exports = dir.path().join("exports");
    std::fs::create_dir_all(&exports).unwrap();
    let earlier = exports.join("kept.npz");
    std::fs::write(&earlier, b"an earlier export").unwrap();
    for (name, format) in [
        ("new.npz", Format::Npz),
        ("kept.npz", Format::Npz),
        ("x.jsonl", Format::JsonLines),
    ] {
        let progress = Progress::new();
        progress.cancel();
        let out = exports.join(name);
        let r = export(&c, &tally, &ExportOptions::new(format), &out, &progress);
        assert!(matches!(r, Err(ExportError::Cancelled)), "{r:?}");
    }
    let mut left: Vec<String> = std::fs::read_dir(&exports)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    left.sort();
    assert_eq!(left, ["kept.npz"], "no partial or temporary file remains");
    assert_eq!(std::fs::read(&earlier).unwrap(), b"an earlier export");
}

#[test]
fn export_cancelled_before_the_rename_leaves_no_partial_file() {
    cancelled_export_leaves_nothing(5);
}

#[test]
fn export_cancelled_in_the_middle_of_writing_leaves_no_partial_file() {
    // 2 x 2100 demonstration rows: the writer checks for cancellation every 4096 rows.
    cancelled_export_leaves_nothing(2100);
}

#[test]
fn failed_export_reports_the_file_and_leaves_no_temporary_file() {
    let dir = setup(3);
    let c = common::load(dir.path());
    let tally = countersteer::consensus::tally(&c, &[]);
    let out = dir.path().join("exports/taken");
    std::fs::create_dir_all(out.join("inner")).unwrap();
    let err = export(
        &c,
        &tally,
        &ExportOptions::new(Format::Csv),
        &out,
        &Progress::new(),
    )
    .unwrap_err();
    assert!(matches!(err, ExportError::Io { .. }), "{err}");
    assert!(err.to_string().contains("exports/taken"), "{err}");
    let names: Vec<_> = std::fs::read_dir(dir.path().join("exports"))
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(names, ["taken"]);
}
