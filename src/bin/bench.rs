//! Benchmark of novelty scoring and review planning on synthetic smooth trajectories, each
//! figure beside a baseline measured in the same run. Run in release:
//!
//! ```text
//! cargo run --release --features bench --bin bench -- [--runs 3] [--only w1,w2,w3,wide,load,plan] [--npy DIR]
//! ```
//!
//! * W1: 1M demonstration states, 100k rollout steps, D = 16: build + calibrate + score.
//!   Baselines: plain (unseeded) per-step kiddo queries; brute force on a subset.
//! * W2: 1M x 1M k-NN at D = 16, seeded queries vs. plain queries. With `--npy DIR` the scaled
//!   data is written as .npy and `python3 bench/scipy_knn.py DIR` times scipy's cKDTree on it.
//! * W3: D = 64, 200k demonstrations, 100k steps: the principal-subspace path, with its
//!   accuracy against brute force.
//! * wide: 80 demonstration states and 80 steps of D = 1,000 and D = 10,000 features (the
//!   leading axes by randomized subspace iteration); baseline: brute-force k-NN of the same
//!   steps. `--only widejacobi` also times the former full Jacobi eigen-solver at D = 500 and
//!   1,000 (minutes at 1,000).
//! * load: peak memory of loading 2M demonstration steps (D = 16) from .npz beside the same
//!   steps from JSON Lines (the baseline; target: within 1.5x).
//! * plan: a 500-step review list from 1M scored steps; baseline: k-center over every candidate.
//! * w1parts (only when asked for by name): W1 stage by stage, to see where the time goes.
//!
//! Timings are medians of `--runs` runs. Peak memory is the process's resident high-water
//! mark (reset per stage through /proc/self/clear_refs on Linux).

use std::time::Instant;

use countersteer::campaign::StepTable;
use countersteer::novelty::eigen::jacobi_eigen;
use countersteer::novelty::index::KnnIndex;
use countersteer::novelty::model::build_model_from;
use countersteer::novelty::query::{brute_knn, knn_rows};
use countersteer::novelty::scale::robust_scale;
use countersteer::novelty::score_steps;
use countersteer::novelty::subspace::principal_axes;
use countersteer::novelty::synth::{SynthSpec, spec, trajectories};
use countersteer::progress::Progress;
use countersteer::review::{PlanSettings, Planner, states_of_rows};

const K: usize = 5;
const ALPHA: f64 = 0.05;

struct Args {
    runs: usize,
    only: Vec<String>,
    npy: Option<std::path::PathBuf>,
}

fn args() -> Args {
    let mut a = Args {
        runs: 3,
        only: Vec::new(),
        npy: None,
    };
    let mut it = std::env::args().skip(1);
    while let Some(x) = it.next() {
        match x.as_str() {
            "--runs" => a.runs = it.next().and_then(|v| v.parse().ok()).unwrap_or(3),
            "--only" => {
                a.only = it
                    .next()
                    .unwrap_or_default()
                    .split(',')
                    .map(String::from)
                    .collect()
            }
            "--npy" => a.npy = it.next().map(Into::into),
            _ => eprintln!("ignored argument {x}"),
        }
    }
    a
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

fn time<T>(f: impl FnOnce() -> T) -> (T, f64) {
    let t = Instant::now();
    let out = f();
    (out, t.elapsed().as_secs_f64())
}

/// CPU seconds (user + system) this process has used so far, from /proc/self/stat: less
/// disturbed than wall time when other programs share the machine.
fn cpu_secs() -> f64 {
    let s = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    // Fields after the parenthesised command name; utime and stime are fields 14 and 15.
    let rest = s.rsplit_once(')').map_or("", |(_, r)| r);
    let f: Vec<f64> = rest
        .split_whitespace()
        .skip(11)
        .take(2)
        .filter_map(|v| v.parse().ok())
        .collect();
    f.iter().sum::<f64>() / 100.0
}

/// Wall and CPU seconds of `f`.
fn time_cpu<T>(f: impl FnOnce() -> T) -> (T, f64, f64) {
    let c = cpu_secs();
    let (out, wall) = time(f);
    (out, wall, cpu_secs() - c)
}

fn status_kb(key: &str) -> f64 {
    let s = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    s.lines()
        .find(|l| l.starts_with(key))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(f64::NAN)
}

fn reset_peak() -> f64 {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
    status_kb("VmRSS:")
}

fn mb(kb: f64) -> f64 {
    kb / 1024.0
}

fn scales(t: &StepTable) -> Vec<f32> {
    (0..t.state_dim)
        .map(|j| robust_scale(t, j) as f32)
        .collect()
}

fn rollouts(episodes: usize, dim: usize, seed: u64) -> StepTable {
    let mut s = SynthSpec::expert(episodes, 500, dim, seed);
    s.drift = 0.01;
    s.prefix = "roll".into();
    trajectories(&s)
}

fn all_rows(t: &StepTable) -> Vec<usize> {
    (0..t.len()).collect()
}

fn brute_per_query(demos: &StepTable, inv: &[f32], queries: &StepTable, n: usize) -> f64 {
    let stride = (queries.len() / n).max(1);
    let (_, secs) = time(|| {
        (0..queries.len()).step_by(stride).take(n).for_each(|r| {
            let q: Vec<f32> = queries
                .state(r)
                .iter()
                .zip(inv)
                .map(|(x, i)| x * i)
                .collect();
            std::hint::black_box(brute_knn(&demos.states, demos.state_dim, inv, &q, K));
        })
    });
    secs / n as f64
}

fn w1(a: &Args) {
    println!("\n== W1: 1M demonstration states, 100k rollout steps, D = 16, k = {K}");
    let demos = trajectories(&SynthSpec::expert(2000, 500, 16, 1));
    let steps = rollouts(200, 16, 2);
    let channels = spec(16, 2).actions;
    let p = Progress::new();
    let (mut build, mut score, mut plain, mut cpu) = (vec![], vec![], vec![], vec![]);
    let mut peak = 0.0f64;
    for _ in 0..a.runs {
        let before = reset_peak();
        let (model, b) =
            time(|| build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model"));
        let (_scores, s, s_cpu) =
            time_cpu(|| score_steps(&model, &demos, &channels, &steps, &p).expect("score"));
        peak = peak.max(status_kb("VmHWM:") - before);
        let rows = all_rows(&steps);
        let ids: Vec<u32> = (0..demos.len() as u32).collect();
        let tree =
            KnnIndex::build_plain(&demos.states, 16, model.inv_scale(), &ids).expect("plain tree");
        let (_h, q, q_cpu) =
            time_cpu(|| knn_rows(&tree, model.inv_scale(), &steps, &rows, K, false, "", &p));
        cpu.push((s_cpu, q_cpu));
        build.push(b);
        score.push(s);
        plain.push(q);
    }
    let (b, s, q) = (median(build), median(score), median(plain));
    let s_cpu = median(cpu.iter().map(|c| c.0).collect());
    let q_cpu = median(cpu.iter().map(|c| c.1).collect());
    let model = build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model");
    let brute = brute_per_query(&demos, model.inv_scale(), &steps, 100);
    let raw = (demos.states.len() + steps.states.len()) as f64 * 4.0 / 1e6;
    println!("search path                 {}", model.index().path());
    println!(
        "index build + calibration   {b:8.3} s  ({} calibration states)",
        model.conformal().len()
    );
    println!("scoring 100k steps          {s:8.3} s  (all signals; {s_cpu:.2} CPU s)");
    println!(
        "end to end                  {:8.3} s  target < 3 s: {}",
        b + s,
        verdict(b + s < 3.0)
    );
    println!(
        "baseline plain queries      {q:8.3} s  for the same 100k steps (plain 16-d tree, k-NN only; {q_cpu:.2} CPU s); scoring is {:.1}x faster",
        q / s
    );
    println!("baseline plain end to end   {:8.3} s", b + q);
    println!(
        "baseline brute force        {:8.3} s  estimated for 100k steps ({:.0} us/query, 1 thread)",
        brute * 1e5,
        brute * 1e6
    );
    println!(
        "peak memory above start     {:8.1} MB (raw f32 states {raw:.1} MB)",
        mb(peak)
    );
}

/// W1 stage by stage (only with `--only w1parts`): where the end-to-end time goes.
fn w1_parts(a: &Args) {
    use countersteer::novelty::model::split_episodes;
    println!("\n== W1 stage by stage (medians of {} runs)", a.runs);
    let demos = trajectories(&SynthSpec::expert(2000, 500, 16, 1));
    let steps = rollouts(200, 16, 2);
    let channels = spec(16, 2).actions;
    let p = Progress::new();
    let inv: Vec<f32> = scales(&demos).iter().map(|s| 1.0 / s).collect();
    let split = split_episodes(&demos).expect("split");
    let fit_rows: Vec<u32> = split
        .fit_of(0)
        .iter()
        .flat_map(|&e| demos.episodes[e].rows().map(|r| r as u32))
        .collect();
    let cal: Vec<usize> = split.folds[0]
        .iter()
        .flat_map(|&e| demos.episodes[e].rows().step_by(10))
        .collect();
    let all: Vec<u32> = (0..demos.len() as u32).collect();
    let rows = all_rows(&steps);
    let mut t: Vec<[f64; 6]> = Vec::new();
    for _ in 0..a.runs {
        let (fit, t0) = time(|| KnnIndex::build(&demos.states, 16, &inv, &fit_rows).expect("fit"));
        let (_c, t1) = time(|| knn_rows(&fit, &inv, &demos, &cal, K, true, "", &p));
        drop(fit);
        let before = reset_peak();
        let (full, t2) = time(|| KnnIndex::build(&demos.states, 16, &inv, &all).expect("full"));
        println!(
            "scoring index: resident {:.1} MB above start, peak {:.1} MB above start",
            mb(status_kb("VmRSS:") - before),
            mb(status_kb("VmHWM:") - before)
        );
        let (_h, t3) = time(|| knn_rows(&full, &inv, &steps, &rows, K, true, "", &p));
        let (model, t4) =
            time(|| build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model"));
        let (_s, t5) = time(|| score_steps(&model, &demos, &channels, &steps, &p).expect("score"));
        t.push([t0, t1, t2, t3, t4, t5]);
    }
    let m = |i: usize| median(t.iter().map(|r| r[i]).collect());
    println!("fit index ({} rows)        {:8.3} s", fit_rows.len(), m(0));
    println!("calibration ({} queries)  {:8.3} s", cal.len(), m(1));
    println!("scoring index (1M)          {:8.3} s", m(2));
    println!("seeded k-NN, 100k steps     {:8.3} s", m(3));
    println!("build_model_from            {:8.3} s", m(4));
    println!(
        "score_steps                 {:8.3} s  (signals {:.3} s)",
        m(5),
        m(5) - m(3)
    );
}

fn verdict(ok: bool) -> &'static str {
    if ok { "met" } else { "NOT met" }
}

fn w2(a: &Args) {
    println!("\n== W2: 1M x 1M k-NN, D = 16, k = {K}");
    let demos = trajectories(&SynthSpec::expert(2000, 500, 16, 1));
    let queries = rollouts(2000, 16, 3);
    let p = Progress::new();
    let inv: Vec<f32> = scales(&demos).iter().map(|s| 1.0 / s).collect();
    let ids: Vec<u32> = (0..demos.len() as u32).collect();
    let (index, build) = time(|| KnnIndex::build(&demos.states, 16, &inv, &ids).expect("index"));
    let tree = KnnIndex::build_plain(&demos.states, 16, &inv, &ids).expect("plain tree");
    let rows = all_rows(&queries);
    let sub: Vec<usize> = rows.iter().copied().take(100_000).collect();
    let (mut seeded, mut plain) = (vec![], vec![]);
    let mut mean_kth = 0.0f64;
    for _ in 0..a.runs {
        let (hits, t) =
            time(|| knn_rows(&index, &inv, &queries, &rows, K, true, "", &p).expect("knn"));
        seeded.push(t);
        mean_kth = hits
            .chunks_exact(K)
            .map(|h| f64::from(h[K - 1].1).sqrt())
            .sum::<f64>()
            / rows.len() as f64;
        plain.push(time(|| knn_rows(&tree, &inv, &queries, &sub, K, false, "", &p)).1);
    }
    let s = rows.len() as f64 / median(seeded);
    let q = sub.len() as f64 / median(plain);
    println!("search path                 {}", index.path());
    println!("index build                 {build:8.3} s");
    println!(
        "seeded queries              {s:10.0} queries/s ({:.2} us/query)",
        1e6 / s
    );
    println!(
        "baseline plain queries      {q:10.0} queries/s ({:.2} us/query, plain 16-d tree, first 100k)",
        1e6 / q
    );
    println!("seeded / plain              {:8.2}x", s / q);
    println!(
        "mean k-th distance          {mean_kth:.6} (compare with the scipy script's last line)"
    );
    if let Some(dir) = &a.npy {
        write_npy(dir, &demos, &queries, &inv, s);
        println!(
            "wrote {} ; run: python3 bench/scipy_knn.py {}",
            dir.display(),
            dir.display()
        );
    }
}

fn write_npy(dir: &std::path::Path, demos: &StepTable, queries: &StepTable, inv: &[f32], qps: f64) {
    use npyz::WriterBuilder;
    let _ = std::fs::create_dir_all(dir);
    for (name, t) in [("demos", demos), ("queries", queries)] {
        let f = std::fs::File::create(dir.join(format!("{name}.npy"))).expect("create npy");
        let mut w = npyz::WriteOptions::new()
            .default_dtype()
            .shape(&[t.len() as u64, t.state_dim as u64])
            .writer(std::io::BufWriter::new(f))
            .begin_nd()
            .expect("npy");
        let scaled = t
            .states
            .chunks_exact(t.state_dim)
            .flat_map(|s| s.iter().zip(inv).map(|(x, i)| x * i));
        w.extend(scaled).expect("write npy");
        w.finish().expect("finish npy");
    }
    let _ = std::fs::write(
        dir.join("countersteer.json"),
        format!("{{\"queries_per_second\": {qps}, \"k\": {K}}}\n"),
    );
}

fn w3(a: &Args) {
    println!("\n== W3: D = 64, 200k demonstration states, 100k steps, k = {K}");
    let demos = trajectories(&SynthSpec::expert(400, 500, 64, 1));
    let steps = rollouts(200, 64, 2);
    let channels = spec(64, 2).actions;
    let p = Progress::new();
    let mut totals = vec![];
    for _ in 0..a.runs {
        let (_, t) = time(|| {
            let model = build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model");
            score_steps(&model, &demos, &channels, &steps, &p).expect("score")
        });
        totals.push(t);
    }
    let model = build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model");
    let scores = score_steps(&model, &demos, &channels, &steps, &p).expect("score");
    let inv = model.inv_scale();
    let (mut worst, mut n) = (0.0f64, 0);
    let (_, brute) = time(|| {
        for r in (0..steps.len()).step_by(steps.len() / 200) {
            let q: Vec<f32> = steps.state(r).iter().zip(inv).map(|(x, i)| x * i).collect();
            let exact = brute_knn(&demos.states, 64, inv, &q, K)[K - 1].1.sqrt();
            let rel = (f64::from(scores.novelty[r]) - f64::from(exact)).abs()
                / f64::from(exact).max(1e-12);
            worst = worst.max(rel);
            n += 1;
        }
    });
    let t = median(totals);
    println!("search path                 {}", model.index().path());
    println!(
        "build + calibrate + score   {t:8.3} s  target < 10 s: {}",
        verdict(t < 10.0)
    );
    println!(
        "accuracy vs brute force     max relative error of the k-th distance {worst:.2e} over {n} steps"
    );
    println!(
        "baseline brute force        {:8.3} s  estimated for 100k steps ({:.0} us/query, 1 thread)",
        brute / n as f64 * 1e5,
        brute / n as f64 * 1e6
    );
}

fn wide_data(dim: usize) -> (StepTable, StepTable) {
    let mut s = SynthSpec::expert(8, 10, dim, 11);
    s.latent = 6;
    let demos = trajectories(&s);
    let mut r = SynthSpec::expert(8, 10, dim, 12);
    (r.drift, r.prefix) = (0.05, "roll".into());
    (demos, trajectories(&r))
}

fn wide(a: &Args) {
    for dim in [1_000, 10_000] {
        println!("\n== wide: D = {dim}, 80 demonstration states, 80 steps, k = {K}");
        let (demos, steps) = wide_data(dim);
        let channels = spec(dim, 2).actions;
        let p = Progress::new();
        let (mut totals, mut eig, mut base) = (vec![], vec![], vec![]);
        let inv: Vec<f32> = scales(&demos).iter().map(|s| 1.0 / s).collect();
        let rows: Vec<u32> = (0..demos.len() as u32).collect();
        for _ in 0..a.runs {
            let (_, t) = time(|| {
                let model = build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model");
                score_steps(&model, &demos, &channels, &steps, &p).expect("score")
            });
            totals.push(t);
            let (_, te) = time(|| principal_axes(&demos.states, dim, &inv, &rows));
            eig.push(te);
            base.push(brute_per_query(&demos, &inv, &steps, steps.len()) * steps.len() as f64);
        }
        let model = build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model");
        println!("search path                 {}", model.index().path());
        let t = median(totals);
        println!(
            "build + calibrate + score   {t:8.3} s  target < 10 s: {}",
            verdict(t < 10.0)
        );
        println!(
            "  of which leading axes     {:8.3} s (per principal_axes call)",
            median(eig)
        );
        println!(
            "baseline brute force k-NN   {:8.3} s  (the 80 steps, 1 thread)",
            median(base)
        );
    }
}

/// The former full Jacobi eigen-solver on the covariance (only with `--only widejacobi`).
fn wide_jacobi() {
    for dim in [500, 1_000] {
        let (demos, _) = wide_data(dim);
        let inv: Vec<f32> = scales(&demos).iter().map(|s| 1.0 / s).collect();
        let rows: Vec<u32> = (0..demos.len() as u32).collect();
        let (_, tn) = time(|| principal_axes(&demos.states, dim, &inv, &rows));
        let x: Vec<f64> = demos.states.iter().map(|&v| f64::from(v)).collect();
        let mut cov = vec![0.0f64; dim * dim];
        for p in x.chunks_exact(dim) {
            for i in 0..dim {
                for j in 0..dim {
                    cov[i * dim + j] += p[i] * p[j];
                }
            }
        }
        let (_, tj) = time(|| jacobi_eigen(cov, dim));
        println!(
            "\n== widejacobi: D = {dim}: leading axes {tn:8.3} s, baseline full Jacobi {tj:8.3} s"
        );
    }
}

/// Writes a campaign folder holding only `demos`, in JSON Lines or .npz.
fn write_load_campaign(root: &std::path::Path, demos: &StepTable, npz: bool) {
    use countersteer::campaign::write::{write_jsonl, write_npz};
    let c = countersteer::novelty::synth::campaign(demos.clone(), StepTable::new(16, 2), K, ALPHA);
    std::fs::create_dir_all(root.join("demonstrations")).expect("folder");
    let spec = serde_json::to_vec_pretty(&c.file).expect("spec");
    std::fs::write(root.join("campaign.json"), spec).expect("campaign.json");
    let name = if npz { "d.npz" } else { "d.jsonl" };
    let f = std::fs::File::create(root.join("demonstrations").join(name)).expect("create");
    let w = std::io::BufWriter::new(f);
    if npz {
        write_npz(demos, w).expect("npz");
    } else {
        write_jsonl(demos, c.spec(), "demonstrations", w).expect("jsonl");
    }
}

fn load_bench(a: &Args) {
    use countersteer::campaign::{LoadOptions, load_campaign};
    println!("\n== load: 2M demonstration steps, D = 16, A = 2: peak memory of loading");
    let dir = std::env::temp_dir().join(format!("countersteer-load-{}", std::process::id()));
    {
        let demos = trajectories(&SynthSpec::expert(4000, 500, 16, 1));
        write_load_campaign(&dir.join("jsonl"), &demos, false);
        write_load_campaign(&dir.join("npz"), &demos, true);
    }
    let mut peaks = [0.0f64; 2];
    let mut secs = [vec![], vec![]];
    for _ in 0..a.runs {
        for (i, kind) in ["jsonl", "npz"].iter().enumerate() {
            let before = reset_peak();
            let (c, t) = time(|| {
                load_campaign(&dir.join(kind), &LoadOptions::default(), &Progress::new())
                    .expect("load")
            });
            peaks[i] = peaks[i].max(status_kb("VmHWM:") - before);
            secs[i].push(t);
            drop(c);
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
    let [j, n] = [mb(peaks[0]), mb(peaks[1])];
    println!(
        "baseline JSON Lines          {j:8.1} MB peak  {:8.3} s",
        median(secs[0].clone())
    );
    println!(
        ".npz (streamed arrays)       {n:8.1} MB peak  {:8.3} s  ratio {:.2}: target <= 1.5: {}",
        median(secs[1].clone()),
        n / j,
        verdict(n <= 1.5 * j)
    );
}

fn plan_bench(a: &Args) {
    println!("\n== plan: 500-step review list from 1M scored steps (D = 16)");
    let demos = trajectories(&SynthSpec::expert(400, 500, 16, 1));
    let steps = rollouts(2000, 16, 4);
    let channels = spec(16, 2).actions;
    let p = Progress::new();
    let model = build_model_from(&demos, scales(&demos), K, ALPHA, &p).expect("model");
    let scores = score_steps(&model, &demos, &channels, &steps, &p).expect("score");
    let settings = PlanSettings {
        budget: 500,
        ..Default::default()
    };
    let all = PlanSettings {
        pool_factor: usize::MAX / 1024,
        ..settings.clone()
    };
    let (mut first, mut again, mut base) = (vec![], vec![], vec![]);
    let mut peak = 0.0f64;
    let mut last = None;
    for _ in 0..a.runs {
        let before = reset_peak();
        let ((planner, list), t) = time(|| {
            let planner = Planner::new(&steps, &scores, &settings);
            let list = planner.plan(&steps, &scores, &[]);
            (planner, list)
        });
        peak = peak.max(status_kb("VmHWM:") - before);
        let corrected: Vec<usize> = list.entries.iter().take(100).map(|e| e.row).collect();
        let states = states_of_rows(&steps, &corrected);
        let (_, t2) = time(|| planner.plan(&steps, &scores, &states));
        let (_, t3) = time(|| Planner::new(&steps, &scores, &all).plan(&steps, &scores, &[]));
        first.push(t);
        again.push(t2);
        base.push(t3);
        last = Some(list);
    }
    let raw = (steps.states.len() + steps.actions.len()) as f64 * 4.0 / 1e6;
    let list = last.unwrap_or_default();
    let t = median(first);
    println!(
        "candidates / pool / entries {} / {} / {}",
        list.candidates,
        list.pool,
        list.entries.len()
    );
    println!(
        "plan from scores            {:8.1} ms target < 1 s: {}",
        t * 1e3,
        verdict(t < 1.0)
    );
    println!("re-plan with 100 corrections{:8.1} ms", median(again) * 1e3);
    println!("baseline k-center, no pool  {:8.1} ms", median(base) * 1e3);
    println!(
        "peak memory of planning     {:8.1} MB (raw f32 step data {raw:.1} MB): target < 2x: {}",
        mb(peak),
        verdict(mb(peak) < 2.0 * raw)
    );
}

fn main() {
    let a = args();
    let want = |s: &str| a.only.is_empty() || a.only.iter().any(|o| o == s);
    println!(
        "countersteer bench: {} run(s) per figure, {} threads",
        a.runs,
        rayon::current_num_threads()
    );
    if want("w1") {
        w1(&a);
    }
    if a.only.iter().any(|o| o == "w1parts") {
        w1_parts(&a);
    }
    if want("w2") {
        w2(&a);
    }
    if want("w3") {
        w3(&a);
    }
    if want("wide") {
        wide(&a);
    }
    if a.only.iter().any(|o| o == "widejacobi") {
        wide_jacobi();
    }
    if want("load") {
        load_bench(&a);
    }
    if want("plan") {
        plan_bench(&a);
    }
}
