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
