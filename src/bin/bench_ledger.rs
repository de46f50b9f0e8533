//! Benchmark of the corrections path: ledger append latency with fsync (against the same
//! append without fsync), and merged-set export throughput (against the campaign's plain
//! table writers on the same rows). Run in release:
//! `cargo run --release --bin bench_ledger [-- --appends N --rows N]`.

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

fn main() {
    let appends = arg("--appends", 1000);
    let rows = arg("--rows", 200_000);
    // Under target/ (a real disk): /tmp may be a RAM file system where fsync costs nothing.
    let base = Path::new("target").join("bench-ledger");
    let _ = std::fs::remove_dir_all(&base);
    std::fs::create_dir_all(&base).expect("create bench folder");
    bench_appends(&base, appends);
    bench_export(&base, rows);
    let _ = std::fs::remove_dir_all(&base);
}
