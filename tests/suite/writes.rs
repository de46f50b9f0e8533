//! What countersteer writes: never through a link, never into the campaign's data, never a
//! pair a reader could take for one export when it is not; stale temporary files cleaned;
//! ledger sequence numbers that cannot wrap; concurrent scorers that do not trip each other.

use std::os::unix::fs::symlink;
use std::path::Path;
use std::process::{Command, Output};

use crate::campaign_kit as kit;
use countersteer::consensus::tally;
use countersteer::export::{ExportOptions, Format, export, manifest_path, read_merged};
use countersteer::ledger::{Ledger, LedgerError, ledger_path, read_ledgers};
use countersteer::progress::Progress;

fn cs(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .env_remove("COUNTERSTEER_ANNOTATOR")
        .output()
        .unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn correct_skip(root: &Path, who: &str, t: &str) -> Output {
    let d = root.to_str().unwrap();
    cs(&[
        "correct",
        d,
        "--annotator",
        who,
        "--round",
        "1",
        "--episode",
        "lane-00",
        "--t",
        t,
        "--skip",
    ])
}

/// A campaign in `base/c` and a folder `base/outside` beside it.
fn campaign_and_outside(base: &Path) -> (std::path::PathBuf, std::path::PathBuf) {
    let root = base.join("c");
    let outside = base.join("outside");
    std::fs::create_dir_all(&root).unwrap();
    std::fs::create_dir_all(&outside).unwrap();
    // Long enough demonstrations that the calibration resolves the default alpha.
    kit::write_campaign(&root, 60);
    (root, outside)
}

fn listing(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn a_lock_file_that_is_a_link_is_refused_and_what_it_points_to_is_untouched() {
    let base = tempfile::tempdir().unwrap();
    let (root, outside) = campaign_and_outside(base.path());
    let precious = outside.join("precious.txt");
    std::fs::write(&precious, b"not a lock file").unwrap();
    std::fs::create_dir_all(root.join("ledgers")).unwrap();
    symlink(&precious, root.join("ledgers/ana.lock")).unwrap();
    let e = Ledger::open(&root, "ana").unwrap_err();
    assert!(matches!(e, LedgerError::IsLink { .. }), "{e}");
    let o = correct_skip(&root, "ana", "3");
    assert!(!o.status.success());
    assert!(stderr(&o).contains("is a link"), "{}", stderr(&o));
    assert_eq!(std::fs::read(&precious).unwrap(), b"not a lock file");
    assert!(!ledger_path(&root, "ana").exists());
}

#[test]
fn a_ledgers_or_analysis_folder_that_is_a_link_out_of_the_campaign_is_not_written_through() {
    let base = tempfile::tempdir().unwrap();
    let (root, outside) = campaign_and_outside(base.path());
    symlink(&outside, root.join("ledgers")).unwrap();
    let o = correct_skip(&root, "ana", "3");
    assert!(!o.status.success());
    assert!(stderr(&o).contains("not a folder"), "{}", stderr(&o));
    symlink(&outside, root.join("analysis")).unwrap();
    let d = root.to_str().unwrap();
    let o = cs(&["score", d, "--round", "1"]);
    assert!(!o.status.success());
    assert!(stderr(&o).contains("not a folder"), "{}", stderr(&o));
    assert_eq!(listing(&outside), Vec::<String>::new());
}

fn export_cli(root: &Path, out: &Path) -> Output {
    cs(&[
        "export",
        root.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--format",
        "jsonl",
    ])
}

#[test]
fn export_refuses_the_campaigns_own_data_and_non_regular_targets() {
    let base = tempfile::tempdir().unwrap();
    let (root, outside) = campaign_and_outside(base.path());
    assert!(correct_skip(&root, "ana", "3").status.success());
    let ledger = ledger_path(&root, "ana");
    let before = std::fs::read(&ledger).unwrap();
    let demo = root.join("demonstrations/steps.jsonl");
    let demo_before = std::fs::read(&demo).unwrap();
    let alias = base.path().join("alias");
    symlink(&root, &alias).unwrap();
    let fifo = outside.join("pipe.jsonl");
    assert!(
        Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .unwrap()
            .success()
    );
    let to_stdout = outside.join("stdout.jsonl");
    symlink("/proc/self/fd/1", &to_stdout).unwrap();
    let refused = [
        (ledger.clone(), "inside the campaign's `ledgers`"),
        (demo.clone(), "inside the campaign's `demonstrations`"),
        (
            root.join("campaign.json"),
            "inside the campaign's `campaign.json`",
        ),
        (
            root.join("exports/../rounds/1/x.jsonl"),
            "inside the campaign's `rounds`",
        ),
        (
            alias.join("ledgers/ana.jsonl"),
            "inside the campaign's `ledgers`",
        ),
        (fifo.clone(), "a fifo"),
        (to_stdout.clone(), "a link"),
    ];
    for (out, why) in &refused {
        let o = export_cli(&root, out);
        assert!(!o.status.success(), "{} was accepted", out.display());
        assert!(
            stderr(&o).contains(why),
            "{}: {}",
            out.display(),
            stderr(&o)
        );
    }
    assert_eq!(std::fs::read(&ledger).unwrap(), before);
    assert_eq!(std::fs::read(&demo).unwrap(), demo_before);
    assert!(
        std::fs::symlink_metadata(&to_stdout)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    let o = export_cli(&root, &root.join("exports/merged.jsonl"));
    assert!(o.status.success(), "{}", stderr(&o));
    let o = export_cli(&root, &outside.join("merged.jsonl"));
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn an_exports_folder_that_is_a_link_out_of_the_campaign_is_not_written_through() {
    let base = tempfile::tempdir().unwrap();
    let (root, outside) = campaign_and_outside(base.path());
    symlink(&outside, root.join("exports")).unwrap();
    let o = export_cli(&root, &root.join("exports/merged.jsonl"));
    assert!(!o.status.success());
    assert!(stderr(&o).contains("not a folder"), "{}", stderr(&o));
    assert_eq!(listing(&outside), Vec::<String>::new());
}

fn dead_pid() -> u32 {
    let mut child = Command::new("true").spawn().unwrap();
    let pid = child.id();
    child.wait().unwrap();
    pid
}

#[test]
fn temporary_files_a_killed_export_left_are_removed_by_the_next_write_there() {
    let base = tempfile::tempdir().unwrap();
    let (root, _) = campaign_and_outside(base.path());
    let exports = root.join("exports");
    std::fs::create_dir_all(&exports).unwrap();
    let out = exports.join("merged.jsonl");
    let left = countersteer::durable::temp_path(&out, dead_pid(), 0);
    std::fs::write(&left, vec![7u8; 4096]).unwrap();
    let o = export_cli(&root, &exports.join("other.jsonl"));
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!left.exists(), "{} is still there", left.display());
    assert_eq!(
        listing(&exports),
        ["other.jsonl", "other.jsonl.manifest.json"]
    );
}

#[test]
fn a_data_file_beside_a_manifest_of_another_export_is_refused_by_the_reader() {
    let base = tempfile::tempdir().unwrap();
    let (root, outside) = campaign_and_outside(base.path());
    let d = root.to_str().unwrap();
    let step = ["--round", "1", "--episode", "lane-00", "--t", "3"];
    let o = cs(&[
        &["correct", d, "--annotator", "ana"],
        &step[..],
        &["--action", "-0.1,slow"],
    ]
    .concat());
    assert!(o.status.success(), "{}", stderr(&o));
    let c = kit::load(&root);
    let t = tally(&c, &read_ledgers(&root).unwrap());
    let spec = c.spec();
    let out = outside.join("merged.jsonl");
    let opts = ExportOptions::new(Format::JsonLines);
    export(&c, &t, &opts, &out, &Progress::new()).unwrap();
    assert!(read_merged(&out, spec).is_ok());
    // A later export killed between its two renames: new data, the old manifest.
    let newer = outside.join("newer.jsonl");
    let mut opts2 = opts.clone();
    opts2.correction_weight = 2.0;
    export(&c, &t, &opts2, &newer, &Progress::new()).unwrap();
    std::fs::rename(&newer, &out).unwrap();
    let e = read_merged(&out, spec).unwrap_err().to_string();
    assert!(
        e.contains("field `manifest`") && e.contains("export again"),
        "{e}"
    );
    std::fs::remove_file(manifest_path(&out)).unwrap();
    let e = read_merged(&out, spec).unwrap_err().to_string();
    assert!(e.contains("did not finish"), "{e}");
}

#[test]
fn the_manifest_hashes_the_bytes_the_rows_came_from_not_a_file_replaced_since() {
    let base = tempfile::tempdir().unwrap();
    let (root, outside) = campaign_and_outside(base.path());
    let demo = root.join("demonstrations/steps.jsonl");
    let original = std::fs::read(&demo).unwrap();
    let c = kit::load(&root);
    let t = tally(&c, &[]);
    // Replaced (a sync tool's copy) after loading, before the export hashes anything.
    let mut changed = original.clone();
    changed.extend_from_slice(b"\n");
    std::fs::write(root.join("new.jsonl"), &changed).unwrap();
    std::fs::rename(root.join("new.jsonl"), &demo).unwrap();
    let out = outside.join("merged.jsonl");
    let m = export(
        &c,
        &t,
        &ExportOptions::new(Format::JsonLines),
        &out,
        &Progress::new(),
    )
    .unwrap();
    let d = m
        .inputs
        .iter()
        .find(|d| d.file == "demonstrations/steps.jsonl")
        .unwrap();
    assert_eq!(d.bytes, original.len() as u64);
    assert_eq!(d.sha256, countersteer::ledger::sha256_hex(&original));
    let spec_bytes = std::fs::read(root.join("campaign.json")).unwrap();
    let s = m.inputs.iter().find(|d| d.file == "campaign.json").unwrap();
    assert_eq!(s.sha256, countersteer::ledger::sha256_hex(&spec_bytes));
}

#[test]
fn concurrent_scorers_of_one_round_all_succeed_and_readers_never_see_half_a_file() {
    let base = tempfile::tempdir().unwrap();
    let (root, _) = campaign_and_outside(base.path());
    let d = root.to_str().unwrap().to_string();
    let score = || {
        Command::new(env!("CARGO_BIN_EXE_countersteer"))
            .args(["score", &d, "--round", "1"])
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .unwrap()
    };
    let first = score().wait_with_output().unwrap();
    assert!(first.status.success(), "{}", stderr(&first));
    let steps = kit::load(&root).rounds[0].steps.clone();
    let done = std::sync::Arc::new(std::sync::atomic::AtomicBool::new(false));
    let reader = {
        let (root, done) = (root.clone(), done.clone());
        std::thread::spawn(move || {
            let mut reads = 0u64;
            while !done.load(std::sync::atomic::Ordering::SeqCst) {
                let r = countersteer::novelty::store::load_scores(&root, 1, &steps);
                assert!(r.is_ok(), "read {reads}: {}", r.unwrap_err());
                reads += 1;
            }
            reads
        })
    };
    for _ in 0..6 {
        let (a, b) = (score(), score());
        for o in [a.wait_with_output().unwrap(), b.wait_with_output().unwrap()] {
            assert!(o.status.success(), "{}", stderr(&o));
        }
    }
    done.store(true, std::sync::atomic::Ordering::SeqCst);
    assert!(reader.join().unwrap() > 0);
    assert_eq!(listing(&root.join("analysis/1")), ["scores.npz"]);
}

#[test]
fn a_full_disk_during_score_leaves_no_partial_file_behind() {
    if Command::new("prlimit").arg("--version").output().is_err() {
        println!("prlimit (util-linux) is not installed: the disk-full test cannot run");
        return;
    }
    let base = tempfile::tempdir().unwrap();
    let (root, _) = campaign_and_outside(base.path());
    let script = "trap '' XFSZ; exec prlimit --fsize=2048 \"$@\"";
    let o = Command::new("sh")
        .args([
            "-c",
            script,
            "sh",
            env!("CARGO_BIN_EXE_countersteer"),
            "score",
        ])
        .arg(&root)
        .args(["--round", "1"])
        .output()
        .unwrap();
    assert!(
        !o.status.success(),
        "the score was written under a 2 kB limit"
    );
    assert_eq!(listing(&root.join("analysis/1")), Vec::<String>::new());
}
