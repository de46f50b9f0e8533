//! Export from the window writes the same bytes as `countersteer export` with the same
//! options, and shows the manifest's summary with the safety caution.
#![allow(clippy::unwrap_used)] // test helpers may panic on a broken fixture

use crate::common;
use crate::window_kit::settle;

use std::path::Path;
use std::process::Command;

use countersteer::app::{UiState, Workbench};
use countersteer::export::{Format, Weighting};
use egui::Key;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;

fn cli(args: &[&str]) {
    let out = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn window_export_writes_the_same_bytes_as_the_command_line() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let d = dir.path().to_str().unwrap();
    for (who, t, action) in [
        ("ana", "12", "0.1,slow"),
        ("ben", "12", "0.3,slow"),
        ("ana", "30", "-0.2,cruise"),
    ] {
        cli(&[
            "correct",
            d,
            "--round",
            "1",
            "--episode",
            "r1-b",
            "--t",
            t,
            "--action",
            action,
            "--annotator",
            who,
        ]);
    }
    let out = tempfile::tempdir().unwrap();
    let (win, line) = (
        out.path().join("w/merged.npz"),
        out.path().join("c/merged.npz"),
    );

    // The desk's caution is put away for today, so the one shown is the export window's.
    let ui = UiState {
        annotator: "cy".into(),
        caution_read: [("cy".into(), countersteer::app::state::today())].into(),
        ..UiState::default()
    };
    let mut wb = Workbench::new(ui);
    wb.open(dir.path());
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .build_ui_state(|ui, wb: &mut Workbench| wb.show(ui), wb);
    settle(&mut h);
    h.key_press_modifiers(egui::Modifiers::COMMAND, Key::E);
    h.step();
    {
        let f = &mut h.state_mut().export;
        assert!(f.open);
        f.format = Format::Npz;
        f.weighting = Weighting::Agreement;
        f.correction_weight = 2.0;
        f.target = win.display().to_string();
    }
    h.step();
    h.get_by_label("Export").click();
    h.step();
    settle(&mut h);
    h.get_by_label_contains("2 correction");
    h.get_by_label(countersteer::SAFETY_CAUTION);

    cli(&[
        "export",
        d,
        "--out",
        line.to_str().unwrap(),
        "--format",
        "npz",
        "--weighting",
        "agreement",
        "--correction-weight",
        "2",
    ]);
    assert_eq!(std::fs::read(&win).unwrap(), std::fs::read(&line).unwrap());
    let manifest = |p: &Path| std::fs::read(countersteer::export::manifest_path(p)).unwrap();
    assert_eq!(manifest(&win), manifest(&line));
}
