//! Export from the window: format, filters and weighting, the target chosen with the system
//! save dialog (or typed), the export running in the background with progress, and the
//! manifest's summary (with the safety caution) when it is done. The export is the library's
//! [`crate::export::export`], called exactly as `countersteer export` calls it.

use std::path::PathBuf;
use std::sync::mpsc::Receiver;

use crate::export::{ExportOptions, Format, Manifest, Weighting, manifest_path};

use super::commands::Command;
use super::workbench::Workbench;

/// The export window's fields (not persisted).
pub struct ExportForm {
    /// Whether the window is open.
    pub open: bool,
    /// File format.
    pub format: Format,
    /// Whether the agreement filter is on.
    pub filter_agreement: bool,
    /// Least step agreement kept (when the filter is on).
    pub min_agreement: f64,
    /// Fewest annotators giving an action.
    pub min_annotators: usize,
    /// Correction weighting.
    pub weighting: Weighting,
    /// Factor on correction rows' weight.
    pub correction_weight: f64,
    /// The merged-set file to write.
    pub target: String,
    /// A save dialog waiting for an answer.
    pub dialog: Option<Receiver<Option<PathBuf>>>,
    /// The last export's file and manifest, or why it failed.
    pub done: Option<Result<(PathBuf, Manifest), String>>,
}

impl Default for ExportForm {
    fn default() -> Self {
        ExportForm {
            open: false,
            format: Format::Npz,
            filter_agreement: false,
            min_agreement: 0.5,
            min_annotators: 1,
            weighting: Weighting::Uniform,
            correction_weight: 1.0,
            target: String::new(),
            dialog: None,
            done: None,
        }
    }
}

impl ExportForm {
    /// The library options the fields stand for.
    pub fn options(&self) -> ExportOptions {
        ExportOptions {
            format: self.format,
            min_agreement: self.filter_agreement.then_some(self.min_agreement),
            min_annotators: self.min_annotators.max(1),
            weighting: self.weighting,
            correction_weight: self.correction_weight,
        }
    }
}

impl Workbench {
    /// Starts the export with the window's options to its target, in the background.
    pub(super) fn run_export(&mut self) {
        let Some(c) = self.campaign_arc() else {
            self.status.error("no campaign open".into());
            return;
        };
        let target = self.export.target.trim();
        if target.is_empty() {
            self.status
                .error("choose where to write the merged set first".into());
            return;
        }
        let mut out = PathBuf::from(target);
        if out.extension().is_none() {
            out.set_extension(self.export.format.extension());
        }
        let opts = self.export.options();
        self.export.done = None;
        self.work.export.start("export", "exporting", move |p| {
            let t = crate::workflow::tally_campaign(&c).map_err(|e| e.to_string())?;
            crate::export::export(&c, &t.tally, &opts, &out, p)
                .map(|m| (out, m))
                .map_err(|e| e.to_string())
        });
    }

    /// Asks for the export target with the system save dialog (on its own thread).
    pub(super) fn pick_export_target(&mut self) {
        let (tx, rx) = std::sync::mpsc::channel();
        let ext = self.export.format.extension();
        let dir = self.campaign_arc().map(|c| c.root.join("exports"));
        let spawned = std::thread::Builder::new()
            .name("countersteer-save-dialog".into())
            .spawn(move || {
                let mut d = rfd::FileDialog::new()
                    .set_title("Export the merged set")
                    .set_file_name(format!("merged.{ext}"))
                    .add_filter(ext, &[ext]);
                if let Some(dir) = dir {
                    d = d.set_directory(dir);
                }
                let _ = tx.send(d.save_file());
            });
        match spawned {
            Ok(_) => self.export.dialog = Some(rx),
            Err(e) => self.status.error(format!(
                "cannot open the save dialog: {e}; type the path instead"
            )),
        }
    }

    /// Takes the save dialog's answer and the export's result when they arrive.
    pub(super) fn poll_export(&mut self) {
        if let Some(rx) = &self.export.dialog {
            match rx.try_recv() {
                Ok(p) => {
                    if let Some(p) = p {
                        self.export.target = p.display().to_string();
                    }
                    self.export.dialog = None;
                }
                Err(std::sync::mpsc::TryRecvError::Disconnected) => self.export.dialog = None,
                Err(std::sync::mpsc::TryRecvError::Empty) => {}
            }
        }
        if let Some(r) = self.work.export.take_result() {
            let r = r.unwrap_or_else(|()| Err("the export stopped without a result".into()));
            match &r {
                Ok((out, m)) => self.status.info(format!(
                    "exported {} rows to {}",
                    m.rows.total,
                    out.display()
                )),
                Err(e) => self.status.error(format!("export failed: {e}")),
            }
            self.export.done = Some(r);
        }
    }
}

/// Draws the export window when it is open.
pub fn export_ui(wb: &mut Workbench, ctx: &egui::Context, cmds: &mut Vec<Command>) {
    if !wb.export.open {
        return;
    }
    let mut open = true;
    egui::Window::new("Export the merged set")
        .open(&mut open)
        .collapsible(false)
        .default_width(420.0)
        .show(ctx, |ui| {
            options_ui(wb, ui);
            target_ui(wb, ui, cmds);
            ui.separator();
            result_ui(wb, ui);
        });
    if !open {
        cmds.push(Command::ToggleExport);
    }
}

fn options_ui(wb: &mut Workbench, ui: &mut egui::Ui) {
    let f = &mut wb.export;
    ui.horizontal(|ui| {
        ui.label("Format");
        for fmt in [Format::Npz, Format::JsonLines, Format::Csv] {
            ui.selectable_value(&mut f.format, fmt, fmt.extension());
        }
    });
    ui.horizontal(|ui| {
        ui.checkbox(&mut f.filter_agreement, "Least step agreement");
        let l = ui.label("value");
        ui.add_enabled(
            f.filter_agreement,
            egui::DragValue::new(&mut f.min_agreement)
                .range(0.0..=1.0)
                .speed(0.01),
        )
        .labelled_by(l.id);
    });
    ui.horizontal(|ui| {
        let l = ui.label("Fewest annotators giving an action");
        ui.add(egui::DragValue::new(&mut f.min_annotators).range(1..=64))
            .labelled_by(l.id);
    });
    ui.horizontal(|ui| {
        ui.label("Weighting");
        for w in [Weighting::Uniform, Weighting::Agreement] {
            ui.selectable_value(&mut f.weighting, w, w.name());
        }
        let l = ui.label("correction weight");
        ui.add(
            egui::DragValue::new(&mut f.correction_weight)
                .range(0.0..=100.0)
                .speed(0.05),
        )
        .labelled_by(l.id);
    });
}

fn target_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    ui.horizontal(|ui| {
        let l = ui.label("Write to");
        ui.add(
            egui::TextEdit::singleline(&mut wb.export.target)
                .hint_text("merged-set file")
                .desired_width(220.0),
        )
        .labelled_by(l.id);
        if ui.button("Choose...").clicked() {
            cmds.push(Command::PickExportTarget);
        }
    });
    ui.horizontal(|ui| {
        let running = wb.work.export.running();
        if ui
            .add_enabled(running.is_none(), egui::Button::new("Export"))
            .clicked()
        {
            cmds.push(Command::RunExport);
        }
        if let Some(j) = running {
            let s = j.snapshot();
            ui.add(
                egui::ProgressBar::new(s.fraction())
                    .desired_width(200.0)
                    .text(s.stage),
            );
        }
    });
}

fn result_ui(wb: &Workbench, ui: &mut egui::Ui) {
    match &wb.export.done {
        None => {
            ui.small(crate::SAFETY_CAUTION);
        }
        Some(Err(e)) => {
            ui.colored_label(super::theme::STALE, e);
        }
        Some(Ok((out, m))) => {
            ui.strong(format!("wrote {}", out.display()));
            ui.label(format!(
                "{} rows: {} demonstration, {} correction",
                m.rows.total, m.rows.demonstration, m.rows.correction
            ));
            let x = &m.excluded;
            ui.label(format!(
                "left out: {} without a consensus action, {} below the agreement, {} with too few annotators",
                x.no_consensus_action, x.below_agreement, x.too_few_annotators
            ));
            let not: usize = m.not_applied.values().sum();
            if not > 0 {
                ui.label(format!(
                    "{not} correction(s) not applied (step data changed or no such step)"
                ));
            }
            ui.label(format!("manifest: {}", manifest_path(out).display()));
            ui.separator();
            ui.strong("Caution");
            ui.label(&m.safety);
        }
    }
}
