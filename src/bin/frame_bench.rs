//! Frame-time benchmark of the workbench: CPU time per frame (layout and tessellation,
//! headless, 1280x800) for a 1,000,000-step episode over 1,000,000 demonstration states,
//! with plot decimation on and, as the baseline in the same run, off.
//!
//! Run: `cargo run --release --features bench --bin frame_bench [-- --steps N --demos N --frames N]`.
//! Each frame is timed twice: the CPU time of the UI thread (from `/proc/thread-self/schedstat`,
//! Linux; robust when other processes share the cores) and the wall-clock time. Medians and
//! 90th percentiles over the measured frames are printed.

use std::path::PathBuf;
use std::time::{Duration, Instant};

use countersteer::app::signals::RoundSignals;
use countersteer::app::{UiState, Workbench};
use countersteer::campaign::{
    ActionChannel, Campaign, CampaignFile, ChannelKind, Episode, Feature, NoveltySettings, Round,
    Spec, StepTable,
};
use countersteer::novelty::RoundScores;
use countersteer::review::Excursion;

const STATE_DIM: usize = 8;

fn spec() -> Spec {
    let features = (0..STATE_DIM)
        .map(|i| Feature {
            name: format!("s{i}"),
            unit: String::new(),
            scale: None,
            kind: Default::default(),
        })
        .collect();
    let channel = |name: &str| ActionChannel {
        name: name.into(),
        unit: "rad".into(),
        kind: ChannelKind::Continuous {
            low: -1.0,
            high: 1.0,
        },
    };
    Spec {
        features,
        actions: vec![channel("steer"), channel("throttle")],
        position: None,
        outcomes: Vec::new(),
    }
}

/// A wandering trajectory: deterministic, smooth, different per `seed`.
fn table(steps: usize, episodes: usize, seed: f32, drift: f32) -> StepTable {
    let mut t = StepTable::new(STATE_DIM, 2);
    t.states.reserve(steps * STATE_DIM);
    let per = steps / episodes;
    for e in 0..episodes {
        let start = t.len();
        for i in 0..per {
            let s = i as f32 * 0.001 + seed * (e as f32 + 1.0);
            let d = drift * (i as f32 / per as f32);
            t.states.extend(
                (0..STATE_DIM).map(|k| (s * (1.0 + k as f32 * 0.3)).sin() * (k as f32 + 1.0) + d),
            );
            t.actions
                .extend([(s * 3.0).sin() * 0.5 + d * 0.1, (s * 0.7).cos() * 0.5]);
            t.t.push(i as i64);
            t.origins.push(i as u64 + 1);
            t.interventions.push(i % 50_000 > 49_000);
        }
        t.episodes.push(Episode {
            name: format!("ep-{e}"),
            start,
            len: per,
            source: 0,
        });
    }
    t.sources.push(PathBuf::from("synthetic.jsonl"));
    t
}

fn signals(n: usize) -> RoundSignals {
    let novelty: Vec<f32> = (0..n)
        .map(|i| 0.5 + ((i as f32) * 0.0007).sin().abs() * 1.5 + ((i * 7919) % 101) as f32 * 0.002)
        .collect();
    let flagged: Vec<bool> = novelty.iter().map(|&v| v > 1.6).collect();
    let excursions = (0..n / 20_000)
        .map(|j| Excursion {
            episode: 0,
            onset: j * 20_000,
            peak: j * 20_000 + 100,
            end: j * 20_000 + 400,
        })
        .collect();
    RoundSignals {
        round: 1,
        source: Default::default(),
        scores: RoundScores {
            k: 5,
            p_value: novelty.iter().map(|&v| (2.0 - v).clamp(0.0, 1.0)).collect(),
            neighbour_action: (0..n * 2)
                .map(|i| ((i as f32) * 0.0003).sin() * 0.4)
                .collect(),
            neighbours: (0..n * 5).map(|i| (i * 13 % n) as u32).collect(),
            threshold: 1.6,
            alpha: 0.05,
            flagged,
            novelty,
            ..Default::default()
        },
        excursions,
    }
}

fn campaign(steps: usize, demos: usize) -> Campaign {
    Campaign {
        root: PathBuf::from("."),
        file: CampaignFile {
            name: "frame benchmark".into(),
            description: String::new(),
            step_seconds: Some(0.02),
            spec: spec(),
            novelty: NoveltySettings::default(),
        },
        demonstrations: table(demos, 10, 0.37, 0.0),
        rounds: vec![Round {
            number: 1,
            steps: table(steps, 1, 0.41, 1.5),
        }],
        inputs: Vec::new(),
    }
}

fn raw_input(frame: usize) -> egui::RawInput {
    egui::RawInput {
        screen_rect: Some(egui::Rect::from_min_size(
            egui::Pos2::ZERO,
            egui::vec2(1280.0, 800.0),
        )),
        time: Some(frame as f64 / 60.0),
        predicted_dt: 1.0 / 60.0,
        ..Default::default()
    }
}

/// CPU time of the calling thread in nanoseconds (Linux), if it can be read.
fn thread_cpu_ns() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    text.split_whitespace().next()?.parse().ok()
}

/// One frame: layout and tessellation. Returns (CPU ms, wall ms); CPU is NaN when unreadable.
fn frame(ctx: &egui::Context, wb: &mut Workbench, i: usize) -> (f64, f64) {
    let (cpu0, start) = (thread_cpu_ns(), Instant::now());
    let mut out = ctx.run_ui(raw_input(i), |ui| wb.show(ui));
    let _meshes = ctx.tessellate(std::mem::take(&mut out.shapes), out.pixels_per_point);
    let wall = start.elapsed().as_secs_f64() * 1e3;
    let cpu = match (cpu0, thread_cpu_ns()) {
        (Some(a), Some(b)) => b.saturating_sub(a) as f64 / 1e6,
        _ => f64::NAN,
    };
    out.textures_delta.clear();
    (cpu, wall)
}

fn settle(ctx: &egui::Context, wb: &mut Workbench) -> usize {
    let mut i = 0;
    while wb.busy() || i < 3 {
        let _ = frame(ctx, wb, i);
        std::thread::sleep(Duration::from_millis(5));
        i += 1;
    }
    i
}

/// Frame times of one mode: [first frame CPU, CPU median, CPU p90, wall median, wall p90] in ms.
fn measure(
    ctx: &egui::Context,
    wb: &mut Workbench,
    decimate: bool,
    frames: usize,
    from: usize,
) -> [f64; 5] {
    wb.draw.decimate = decimate;
    let first = frame(ctx, wb, from).0;
    let (mut cpu, mut wall): (Vec<f64>, Vec<f64>) = (0..frames)
        .map(|k| {
            // Scrub: the playhead moves every frame, as during playback.
            wb.ui.step = (wb.ui.step + 997) % 1_000_000;
            frame(ctx, wb, from + 1 + k)
        })
        .unzip();
    cpu.sort_by(f64::total_cmp);
    wall.sort_by(f64::total_cmp);
    let q = |v: &[f64], f: f64| v[((v.len() - 1) as f64 * f).round() as usize];
    [
        first,
        q(&cpu, 0.5),
        q(&cpu, 0.9),
        q(&wall, 0.5),
        q(&wall, 0.9),
    ]
}

fn arg(name: &str, default: usize) -> usize {
    let args: Vec<String> = std::env::args().collect();
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

fn main() {
    let (steps, demos, frames) = (
        arg("--steps", 1_000_000),
        arg("--demos", 1_000_000),
        arg("--frames", 30),
    );
    let built = Instant::now();
    let c = campaign(steps, demos);
    println!(
        "synthetic campaign: {demos} demonstration states, one episode of {steps} steps, {STATE_DIM} features ({:.1} s to build)",
        built.elapsed().as_secs_f64()
    );
    let ctx = egui::Context::default();
    let mut wb = Workbench::new(UiState::default());
    wb.install(c);
    // The benchmark brings its own scores: no k-d tree over a million states is needed here.
    wb.cancel_scoring();
    let t = Instant::now();
    let mut i = settle(&ctx, &mut wb);
    println!(
        "projection and density in the background: {:.2} s",
        t.elapsed().as_secs_f64()
    );
    wb.set_signals(signals(steps));
    i += settle(&ctx, &mut wb);
    println!("frame time, {frames} frames per mode, playhead moving, 1280x800; milliseconds");
    println!("(the first frame after a switch builds the episode's drawing data)");
    println!(
        "{:<22} {:>11} {:>10} {:>8} {:>11} {:>9}",
        "mode", "first (cpu)", "cpu median", "cpu p90", "wall median", "wall p90"
    );
    let modes = [
        ("decimation on (LTTB)", true),
        ("decimation off", false),
        ("decimation on (LTTB)", true),
    ];
    for (name, on) in modes {
        let [first, cm, c90, wm, w90] = measure(&ctx, &mut wb, on, frames, i);
        i += frames + 1;
        println!("{name:<22} {first:>11.1} {cm:>10.2} {c90:>8.2} {wm:>11.2} {w90:>9.2}");
    }
}
