//! Dependencies point down: no library module outside `src/app/` (and the benchmark binaries,
//! which drive the window headless) names egui, eframe or egui_plot.
#![allow(clippy::unwrap_used)] // test helpers may panic on a broken fixture

use std::path::Path;

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn only_the_app_knows_about_the_window() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let offenders: Vec<_> = files
        .iter()
        .filter(|p| !p.starts_with(src.join("app")) && !p.starts_with(src.join("bin")))
        .filter(|p| {
            let text = std::fs::read_to_string(p).unwrap();
            ["egui", "eframe"].iter().any(|w| {
                text.lines()
                    .filter(|l| !l.trim_start().starts_with("//"))
                    .any(|l| l.contains(&format!("{w}::")) || l.contains(&format!("use {w}")))
            })
        })
        .collect();
    assert!(offenders.is_empty(), "{offenders:?}");
    assert!(files.len() > 20, "found only {} source files", files.len());
}

/// Lines of `files` that name any of `words`, comments left out.
fn naming(files: &[std::path::PathBuf], words: &[&str]) -> Vec<String> {
    let mut out = Vec::new();
    for p in files {
        let text = std::fs::read_to_string(p).unwrap();
        for (i, l) in text.lines().enumerate() {
            let code = l.trim_start();
            if code.starts_with("//") {
                continue;
            }
            if let Some(w) = words.iter().find(|w| code.contains(*w)) {
                out.push(format!("{}:{}: {w}", p.display(), i + 1));
            }
        }
    }
    out
}

/// The window holds no pipeline rule of its own: it reads the ledgers, tallies, reuses or
/// makes scores, plans the list and decides what stands only through `workflow` (and the
/// ledger's own methods), never by calling the layers below directly.
#[test]
fn the_window_reaches_the_pipeline_only_through_the_workflow() {
    let app = Path::new(env!("CARGO_MANIFEST_DIR")).join("src/app");
    let mut files = Vec::new();
    rust_files(&app, &mut files);
    let words = [
        "read_ledgers",
        "consensus::tally",
        "novelty::store",
        "load_scores",
        "score_round",
        "build_model",
        "Planner",
        "review::plan",
        "ledger::store",
        "Entry::Retraction",
        "retracted(",
    ];
    let offenders = naming(&files, &words);
    assert!(offenders.is_empty(), "{offenders:#?}");
    assert!(
        files.len() > 10,
        "found only {} files in src/app",
        files.len()
    );
}

/// The command line is the binary's (src/main.rs declares it): the library's public API does
/// not hold it, and the library never names it.
#[test]
fn the_command_line_is_not_part_of_the_library() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let lib = std::fs::read_to_string(src.join("lib.rs")).unwrap();
    let declares = |text: &str| {
        text.lines()
            .map(str::trim)
            .any(|l| l == "mod cli;" || l == "pub mod cli;" || l.starts_with("pub(crate) mod cli"))
    };
    assert!(!declares(&lib), "src/lib.rs declares the cli module");
    let main = std::fs::read_to_string(src.join("main.rs")).unwrap();
    assert!(
        declares(&main),
        "src/main.rs does not declare the cli module"
    );
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let library: Vec<_> = files
        .into_iter()
        .filter(|p| !p.starts_with(src.join("cli")) && !p.starts_with(src.join("bin")))
        .filter(|p| !p.ends_with("main.rs"))
        .collect();
    let offenders = naming(&library, &["crate::cli", "countersteer::cli"]);
    assert!(offenders.is_empty(), "{offenders:#?}");
}

/// `cargo install --path .` installs exactly one program: every binary target but
/// `countersteer` needs the `bench` feature (asked of `cargo metadata`, which also lists
/// binaries found in `src/bin/` without a `[[bin]]` entry).
#[test]
fn installing_puts_one_program_on_path() {
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".into());
    let out = std::process::Command::new(cargo)
        .args([
            "metadata",
            "--no-deps",
            "--offline",
            "--format-version",
            "1",
        ])
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let meta: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let pkg = meta["packages"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["name"] == "countersteer")
        .unwrap();
    let mut installed = Vec::new();
    let mut benches = Vec::new();
    for t in pkg["targets"].as_array().unwrap() {
        if !t["kind"].as_array().unwrap().iter().any(|k| k == "bin") {
            continue;
        }
        let name = t["name"].as_str().unwrap().to_string();
        let needs_bench = t["required-features"]
            .as_array()
            .is_some_and(|f| f.iter().any(|x| x == "bench"));
        if needs_bench {
            benches.push(name);
        } else {
            installed.push(name);
        }
    }
    benches.sort();
    assert_eq!(installed, ["countersteer"]);
    assert_eq!(
        benches,
        ["bench", "bench_ledger", "desk_bench", "frame_bench"]
    );
}
