//! Benchmark of the corrections path: ledger append latency with fsync (against the same
//! append without fsync), bulk corrections (`correct --from`, against one `correct` process
//! per correction on the same campaign), and merged-set export throughput (against the
//! campaign's plain table writers on the same rows). Run in release:
//! `cargo build --release && cargo run --release --features bench --bin bench_ledger [-- --appends N --rows N
//! --corrections N --sample N]`.

use std::io::Write;
use std::path::Path;
use std::time::{Duration, Instant};

use countersteer::campaign::steps::{StepRow, StepTableBuilder};
use countersteer::campaign::{
    ActionChannel, Campaign, CampaignFile, ChannelKind, Feature, NoveltySettings, Round, Spec,
    StepTable,
};
use countersteer::consensus::tally;
use countersteer::export::{ExportOptions, Format, export};
use countersteer::ledger::{
    AnnotatorLedger, Correction, Entry, Ledger, Record, Verdict, fingerprint,
};
use countersteer::progress::Progress;

fn arg(name: &str, default: usize) -> usize {
    let args: Vec<String> = std::env::args().collect();
    args.windows(2)
        .find(|w| w[0] == name)
        .and_then(|w| w[1].parse().ok())
        .unwrap_or(default)
}

fn quantiles(mut d: Vec<Duration>) -> (f64, f64) {
    d.sort();
    let us = |x: Duration| x.as_secs_f64() * 1e6;
    (
        us(d[d.len() / 2]),
        us(d[(d.len() * 99 / 100).min(d.len() - 1)]),
    )
}

fn correction(t: i64) -> Correction {
    Correction {
        round: 1,
        episode: "lane-00".into(),
        t,
        fingerprint: "0123456789abcdef".into(),
        verdict: Verdict::Action(vec![
            countersteer::ledger::ActionValue::Number(0.125),
            countersteer::ledger::ActionValue::Number(1.5),
        ]),
        note: None,
    }
}

fn bench_appends(dir: &Path, n: usize) {
    let (mut l, _) = Ledger::open(dir, "bench").expect("open ledger");
    let mut with_fsync = Vec::with_capacity(n);
    for i in 0..n {
        let t0 = Instant::now();
        l.append(correction(i as i64)).expect("append");
        with_fsync.push(t0.elapsed());
    }
    let line = l.records()[0].to_line();
    let mut f = std::fs::OpenOptions::new()
        .create(true)
        .append(true)
        .open(dir.join("baseline.jsonl"))
        .expect("open baseline");
    let mut without = Vec::with_capacity(n);
    for _ in 0..n {
        let t0 = Instant::now();
        f.write_all(&line).expect("write");
        without.push(t0.elapsed());
    }
    let (m, p) = quantiles(with_fsync);
    let (bm, bp) = quantiles(without);
    println!("ledger append, {n} records of {} bytes:", line.len());
    println!("  Ledger::append (write + fsync)   median {m:9.1} us   p99 {p:9.1} us");
    println!("  baseline write_all, no fsync     median {bm:9.1} us   p99 {bp:9.1} us");
}

fn spec() -> Spec {
    let f = |n: usize| Feature {
        name: format!("s{n}"),
        unit: String::new(),
        scale: None,
        kind: Default::default(),
    };
    let ch = |n: &str| ActionChannel {
        name: n.into(),
        unit: String::new(),
        kind: ChannelKind::Continuous {
            low: -10.0,
            high: 10.0,
        },
    };
    Spec {
        features: (0..12).map(f).collect(),
        actions: vec![ch("steer"), ch("accel")],
        position: None,
        outcomes: Vec::new(),
    }
}

fn table(rows: usize, salt: f32) -> StepTable {
    let mut b = StepTableBuilder::new(12, 2);
    b.begin_source("bench".into());
    let mut state = [0f32; 12];
    for i in 0..rows {
        for (k, s) in state.iter_mut().enumerate() {
            *s = ((i * (k + 1)) as f32 * 0.001 + salt).sin();
        }
        let name = format!("ep{:04}", i / 500);
        b.push(StepRow {
            episode: &name,
            t: (i % 500) as i64,
            state: &state,
            action: &[state[0], state[1]],
            origin: i as u64,
            ..Default::default()
        });
    }
    b.finish()
}

fn ledger(c: &Campaign, who: &str, every: usize, offset: f64) -> AnnotatorLedger {
    let steps = &c.rounds[0].steps;
    let records = (0..steps.len())
        .step_by(every)
        .enumerate()
        .map(|(i, row)| {
            let mut corr = correction(steps.t[row]);
            corr.episode = steps.episodes[steps.episode_of(row)].name.clone();
            corr.fingerprint = fingerprint(steps, row);
            corr.verdict = Verdict::from_action(&c.file.spec, &[offset as f32, 0.5]);
            Record {
                seq: i as u64 + 1,
                entry: Entry::Correction(corr),
                annotator: who.into(),
                time: String::new(),
                tool: String::new(),
            }
        })
        .collect();
    AnnotatorLedger {
        annotator: who.into(),
        path: c.root.join(format!("ledgers/{who}.jsonl")),
        records,
        problems: Vec::new(),
        incomplete_tail: 0,
        stamp: None,
        sha256: String::new(),
        bytes: 0,
    }
}

fn bench_export(dir: &Path, rows: usize) {
    let file = CampaignFile {
        name: "bench".into(),
        description: String::new(),
        step_seconds: None,
        spec: spec(),
        novelty: NoveltySettings::default(),
    };
    std::fs::write(
        dir.join("campaign.json"),
        serde_json::to_vec(&file).expect("json"),
    )
    .expect("write campaign.json");
    let c = Campaign {
        root: dir.to_path_buf(),
        file,
        demonstrations: table(rows, 0.0),
        rounds: vec![Round {
            number: 1,
            steps: table(rows / 4, 0.5),
        }],
        inputs: Vec::new(),
    };
    let ledgers = [ledger(&c, "ana", 4, 0.1), ledger(&c, "ben", 5, 0.2)];
    let t0 = Instant::now();
    let t = tally(&c, &ledgers);
    let tally_s = t0.elapsed().as_secs_f64();
    let n = rows + t.steps.len();
    println!(
        "export, {rows} demonstration rows + {} consensus corrections, 12 features:",
        t.steps.len()
    );
    println!(
        "  tally of {} records                {:8.3} s",
        ledgers[0].records.len() + ledgers[1].records.len(),
        tally_s
    );
    for format in [Format::JsonLines, Format::Csv, Format::Npz] {
        let out = dir.join(format!("exports/merged.{}", format.extension()));
        let t0 = Instant::now();
        export(&c, &t, &ExportOptions::new(format), &out, &Progress::new()).expect("export");
        let s = t0.elapsed().as_secs_f64();
        let bytes = std::fs::metadata(&out).map(|m| m.len()).unwrap_or(0);
        println!(
            "  export {:<5}  {:>10.0} rows/s   {:6.3} s   {:6.1} MB (with hashing, fsync, manifest)",
            format.extension(),
            n as f64 / s,
            s,
            bytes as f64 / 1e6
        );
    }
    let spec = c.spec();
    let t0 = Instant::now();
    let f = std::fs::File::create(dir.join("plain.jsonl")).expect("create");
    countersteer::campaign::write::write_jsonl(
        &c.demonstrations,
        spec,
        "",
        std::io::BufWriter::new(f),
    )
    .expect("write");
    let s = t0.elapsed().as_secs_f64();
    println!(
        "  baseline campaign write_jsonl  {:>10.0} rows/s   {s:6.3} s (demonstrations only, no fsync)",
        rows as f64 / s
    );
    let t0 = Instant::now();
    let f = std::fs::File::create(dir.join("plain.npz")).expect("create");
    countersteer::campaign::write::write_npz(&c.demonstrations, std::io::BufWriter::new(f))
        .expect("write");
    let s = t0.elapsed().as_secs_f64();
    println!(
        "  baseline campaign write_npz    {:>10.0} rows/s   {s:6.3} s (demonstrations only, no fsync)",
        rows as f64 / s
    );
}

/// The `countersteer` binary built beside this benchmark.
fn countersteer_exe() -> Option<std::path::PathBuf> {
    let me = std::env::current_exe().ok()?;
    let exe = me.with_file_name(format!("countersteer{}", std::env::consts::EXE_SUFFIX));
    exe.is_file().then_some(exe)
}

/// Writes a campaign for the bulk benchmark: 12 features, channels `steer` and `gear`
/// (discrete), `rows` round-1 steps in episodes of 500; returns it loaded.
fn bulk_campaign(dir: &Path, rows: usize) -> Campaign {
    let mut s = spec();
    s.actions[1] = ActionChannel {
        name: "gear".into(),
        unit: String::new(),
        kind: ChannelKind::Discrete {
            choices: vec!["low".into(), "high".into()],
        },
    };
    let file = CampaignFile {
        name: "bulk".into(),
        description: String::new(),
        step_seconds: None,
        spec: s.clone(),
        novelty: NoveltySettings::default(),
    };
    std::fs::create_dir_all(dir.join("rounds/1")).expect("create campaign");
    std::fs::create_dir_all(dir.join("demonstrations")).expect("create campaign");
    std::fs::write(
        dir.join("campaign.json"),
        serde_json::to_vec(&file).expect("json"),
    )
    .expect("write campaign.json");
    let write = |rel: &str, t: &StepTable| {
        let mut t = t.clone();
        for i in 0..t.len() {
            t.actions[i * 2 + 1] = (i % 2) as f32;
        }
        let f = std::fs::File::create(dir.join(rel)).expect("create");
        countersteer::campaign::write::write_jsonl(&t, &s, "", std::io::BufWriter::new(f))
            .expect("write");
    };
    write("demonstrations/demo.jsonl", &table(2000, 0.0));
    write("rounds/1/steps.jsonl", &table(rows, 0.5));
    countersteer::campaign::load_campaign(dir, &Default::default(), &Progress::new())
        .expect("load bulk campaign")
}

/// The i-th correction of the benchmark's batch: (episode, t, steer, gear).
fn bulk_row(c: &Campaign, i: usize) -> (String, i64, f64, &'static str) {
    let steps = &c.rounds[0].steps;
    let row = i % steps.len();
    let ep = steps.episodes[steps.episode_of(row)].name.clone();
    let gear = if i.is_multiple_of(2) { "low" } else { "high" };
    (ep, steps.t[row], ((i % 200) as f64 - 100.0) * 0.01, gear)
}

fn median_ms(mut d: Vec<Duration>) -> f64 {
    d.sort();
    d[d.len() / 2].as_secs_f64() * 1e3
}

/// Median wall time of one `countersteer correct` process per correction, over `sample`
/// corrections appended to `who`'s ledger.
fn per_call_ms(exe: &Path, c: &Campaign, who: &str, sample: usize) -> f64 {
    let times = (0..sample)
        .map(|i| {
            let (ep, t, steer, gear) = bulk_row(c, i);
            let t0 = Instant::now();
            let out = std::process::Command::new(exe)
                .arg("correct")
                .arg(&c.root)
                .args(["--annotator", who, "--round", "1", "--episode", &ep])
                .args([
                    "--t",
                    &t.to_string(),
                    "--action",
                    &format!("{steer},{gear}"),
                ])
                .output()
                .expect("run countersteer");
            assert!(
                out.status.success(),
                "{}",
                String::from_utf8_lossy(&out.stderr)
            );
            t0.elapsed()
        })
        .collect();
    median_ms(times)
}

/// Bulk corrections: `n` verdicts applied by the library and by `correct --from`, against
/// one `correct` process per correction (a sample, extrapolated).
fn bench_bulk(dir: &Path, n: usize, sample: usize) {
    let c = bulk_campaign(dir, n.max(1000));
    let csv = dir.join("bulk.csv");
    let mut text = String::from("round,episode,t,steer,gear,verdict,note\n");
    for i in 0..n {
        let (ep, t, steer, gear) = bulk_row(&c, i);
        match i % 50 {
            7 => text.push_str(&format!("1,{ep},{t},,,skip,\n")),
            8 => text.push_str(&format!("1,{ep},{t},,,unrecoverable,far off\n")),
            _ => text.push_str(&format!("1,{ep},{t},{steer},{gear},,\n")),
        }
    }
    std::fs::write(&csv, text).expect("write batch");
    println!(
        "bulk corrections, {n} verdicts on a round of {} steps:",
        c.rounds[0].steps.len()
    );
    let t0 = Instant::now();
    let b = countersteer::ledger::read_batch(&csv, c.spec()).expect("read batch");
    let read_s = t0.elapsed().as_secs_f64();
    let t1 = Instant::now();
    let (mut l, _, _) = countersteer::ledger::batch::open(&c.root, "lib").expect("open");
    let done = countersteer::ledger::batch::apply(&c, &mut l, &b).expect("apply");
    let apply_s = t1.elapsed().as_secs_f64();
    assert_eq!(done.records.len(), n);
    drop(l);
    println!(
        "  library: read {read_s:6.3} s + check, append, fsync {apply_s:6.3} s = {:6.3} s",
        read_s + apply_s
    );
    let Some(exe) = countersteer_exe() else {
        println!("  (build the countersteer binary in the same profile to compare processes)");
        return;
    };
    let t0 = Instant::now();
    let out = std::process::Command::new(&exe)
        .arg("correct")
        .arg(&c.root)
        .args(["--annotator", "cli", "--from"])
        .arg(&csv)
        .output()
        .expect("run countersteer");
    let cli_s = t0.elapsed().as_secs_f64();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    println!(
        "  `correct --from` (one process, campaign load included)   {cli_s:8.3} s   target < 2 s"
    );
    let empty = per_call_ms(&exe, &c, "per-call", sample);
    // The same per-call cost on a ledger that already holds the whole batch: each call
    // reads its ledger, so the cost grows as the corrections accumulate.
    let full = per_call_ms(&exe, &c, "cli", sample);
    let total = n as f64 * (empty + full) / 2.0 / 1e3;
    println!(
        "  baseline: one `correct` process per correction, median {empty:.1} ms (empty ledger), \
         {full:.1} ms (ledger of {n}); {n} calls about {total:.0} s ({:.0}x)",
        total / cli_s
    );
}

fn main() {
    let appends = arg("--appends", 1000);
    let corrections = arg("--corrections", 20_000);
    let sample = arg("--sample", 40);
    let rows = arg("--rows", 200_000);
    // Under target/ (a real disk): /tmp may be a RAM file system where fsync costs nothing.
    let base = Path::new("target").join("bench-ledger");
    let _ = std::fs::remove_dir_all(&base);
    std::fs::create_dir_all(&base).expect("create bench folder");
    bench_appends(&base, appends);
    bench_bulk(&base.join("bulk"), corrections, sample);
    bench_export(&base, rows);
    let _ = std::fs::remove_dir_all(&base);
}
