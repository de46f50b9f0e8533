//! The workbench window driven headless (egui_kittest), shared by the window tests.

use std::path::Path;
use std::time::{Duration, Instant};

use countersteer::app::{UiState, Workbench};
use egui_kittest::Harness;

/// The workbench at 1280 x 800 with `dir` open and its background work done. A non-empty
/// `annotator` is remembered, so no name prompt takes the keyboard.
pub fn harness(dir: &Path, annotator: &str) -> Harness<'static, Workbench> {
    let ui = UiState {
        annotator: annotator.into(),
        ..UiState::default()
    };
    let mut wb = Workbench::new(ui);
    wb.open(dir);
    let mut h = Harness::builder()
        .with_size(egui::vec2(1280.0, 800.0))
        .with_step_dt(0.1)
        .build_ui_state(|ui, wb: &mut Workbench| wb.show(ui), wb);
    settle(&mut h);
    h
}

/// Steps frames until no background work is left (or 15 s pass).
pub fn settle(h: &mut Harness<'static, Workbench>) {
    let until = Instant::now() + Duration::from_secs(15);
    loop {
        h.step();
        if !h.state().busy() || Instant::now() > until {
            break;
        }
        std::thread::sleep(Duration::from_millis(5));
    }
    h.step();
}
