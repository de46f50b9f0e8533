//! Latency of a verdict in the workbench: from pressing Enter (save the desk's action) to the
//! next open entry of the review list being drawn on the desk, with the ledger's fsync, the
//! re-plan of the list, and two frames of layout and tessellation (the frame that handles the
//! key and the frame that shows the next entry), headless at 1280x800.
//!
//! Run: `cargo run --release --features bench --bin desk_bench [-- DIR --verdicts N]`. DIR (default
//! `demo-data`) is copied to `target/desk-bench/` so the campaign's own ledgers are not
//! touched; the last round is reviewed by an annotator named `bench`. Printed: median and p99
//! of the whole latency, of the save itself (append with fsync, re-plan, move), of the append
//! with fsync alone, and, as the
//! baseline from the same run, of two idle frames.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use countersteer::app::{UiState, Workbench};

fn copy_dir(from: &Path, to: &Path) -> std::io::Result<()> {
    std::fs::create_dir_all(to)?;
    for e in std::fs::read_dir(from)? {
        let e = e?;
        let target = to.join(e.file_name());
        if e.file_type()?.is_dir() {
            copy_dir(&e.path(), &target)?;
        } else {
            std::fs::copy(e.path(), target)?;
        }
    }
    Ok(())
}

fn raw_input(frame: usize, events: Vec<egui::Event>) -> egui::RawInput {
    egui::RawInput {
        screen_rect: Some(egui::Rect::from_min_size(
            egui::Pos2::ZERO,
            egui::vec2(1280.0, 800.0),
        )),
        time: Some(frame as f64 / 60.0),
        predicted_dt: 1.0 / 60.0,
        events,
        ..Default::default()
    }
}

fn enter() -> Vec<egui::Event> {
    vec![egui::Event::Key {
        key: egui::Key::Enter,
        physical_key: None,
        pressed: true,
        repeat: false,
        modifiers: egui::Modifiers::NONE,
    }]
}

fn frame(ctx: &egui::Context, wb: &mut Workbench, i: usize, events: Vec<egui::Event>) {
    let mut out = ctx.run_ui(raw_input(i, events), |ui| wb.show(ui));
    let _meshes = ctx.tessellate(std::mem::take(&mut out.shapes), out.pixels_per_point);
    out.textures_delta.clear();
}

fn quantiles(mut v: Vec<f64>) -> (f64, f64) {
    v.sort_by(f64::total_cmp);
    let q = |f: f64| v[((v.len() - 1) as f64 * f).round() as usize];
    (q(0.5), q(0.99))
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let dir = args
        .iter()
        .find(|a| !a.starts_with("--") && a.parse::<usize>().is_err())
        .map_or(PathBuf::from("demo-data"), PathBuf::from);
    let verdicts: usize = args
        .iter()
        .position(|a| a == "--verdicts")
        .and_then(|i| args.get(i + 1)?.parse().ok())
        .unwrap_or(200);
    let work = PathBuf::from("target/desk-bench");
    let _ = std::fs::remove_dir_all(&work);
    if let Err(e) = copy_dir(&dir, &work) {
        eprintln!("cannot copy {} to {}: {e}", dir.display(), work.display());
        std::process::exit(2);
    }
    let ui = UiState {
        annotator: "bench".into(),
        budget: verdicts + 10,
        ..UiState::default()
    };
    let ctx = egui::Context::default();
    let mut wb = Workbench::new(ui);
    wb.open(&work);
    let mut i = 0;
    let until = Instant::now() + Duration::from_secs(600);
    while (wb.busy() || wb.desk.sitting.is_none() || i < 3) && Instant::now() < until {
        frame(&ctx, &mut wb, i, Vec::new());
        std::thread::sleep(Duration::from_millis(5));
        i += 1;
    }
    let Some(s) = &wb.desk.sitting else {
        eprintln!("the round was not scored in time");
        std::process::exit(2);
    };
    println!(
        "campaign {}: round {}, review list of {} entries",
        dir.display(),
        s.round,
        s.entries.len()
    );
    frame(
        &ctx,
        &mut wb,
        i,
        vec![egui::Event::Key {
            key: egui::Key::N,
            physical_key: None,
            pressed: true,
            repeat: false,
            modifiers: egui::Modifiers::NONE,
        }],
    );
    i += 1;
    let (mut total, mut save, mut idle) = (Vec::new(), Vec::new(), Vec::new());
    let mut append = Vec::new();
    for _ in 0..verdicts {
        let before = wb.current_row();
        let t = Instant::now();
        frame(&ctx, &mut wb, i, enter());
        frame(&ctx, &mut wb, i + 1, Vec::new());
        total.push(t.elapsed().as_secs_f64() * 1e3);
        if wb.current_row() == before {
            eprintln!("the desk did not move on; stopping");
            break;
        }
        let ms = |d: Option<Duration>| d.map_or(f64::NAN, |d| d.as_secs_f64() * 1e3);
        save.push(ms(wb.desk.last_save));
        append.push(ms(wb.desk.last_append));
        let t = Instant::now();
        frame(&ctx, &mut wb, i + 2, Vec::new());
        frame(&ctx, &mut wb, i + 3, Vec::new());
        idle.push(t.elapsed().as_secs_f64() * 1e3);
        i += 4;
    }
    let n = total.len();
    let ((tm, t99), (sm, s99), (im, i99)) = (quantiles(total), quantiles(save), quantiles(idle));
    let (am, a99) = quantiles(append);
    println!("{n} verdicts; milliseconds");
    println!("{:<58} {:>8} {:>8}", "", "median", "p99");
    println!(
        "{:<58} {tm:>8.2} {t99:>8.2}",
        "Enter to next entry drawn (2 frames, fsync, re-plan)"
    );
    println!(
        "{:<58} {sm:>8.2} {s99:>8.2}",
        "  of which the save (append + fsync, re-plan, move)"
    );
    println!(
        "{:<58} {am:>8.2} {a99:>8.2}",
        "    of which the ledger append with fsync"
    );
    println!("{:<58} {im:>8.2} {i99:>8.2}", "baseline: two idle frames");
}
