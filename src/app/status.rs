//! The status area along the bottom edge: the latest message, and every problem found in the
//! campaign as `file:line: field: message`.

use crate::campaign::{Problem, Severity};

use super::commands::Command;
use super::workbench::Workbench;

/// What the status area shows.
#[derive(Debug, Clone, Default)]
pub struct Status {
    /// The latest message.
    pub message: String,
    /// Whether the latest message is an error.
    pub is_error: bool,
    /// Problems of the last campaign loaded.
    pub problems: Vec<Problem>,
    /// Problems beyond the per-file cap.
    pub more: usize,
}

impl Status {
    /// Shows an ordinary message.
    pub fn info(&mut self, message: String) {
        self.message = message;
        self.is_error = false;
    }

    /// Shows an error message.
    pub fn error(&mut self, message: String) {
        self.message = message;
        self.is_error = true;
    }

    /// Replaces the problem list.
    pub fn set_problems(&mut self, problems: Vec<Problem>, more: usize) {
        self.problems = problems;
        self.more = more;
    }

    /// Number of kept errors.
    pub fn error_count(&self) -> usize {
        self.problems
            .iter()
            .filter(|p| p.severity == Severity::Error)
            .count()
    }
}

/// Draws the status area.
pub fn status_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let s = &wb.status;
    egui::Panel::bottom("status")
        .resizable(false)
        .show(ui, |ui| {
            ui.horizontal(|ui| {
                if ui
                    .button(super::keys::caption("Keys", &Command::ToggleHelp))
                    .clicked()
                {
                    cmds.push(Command::ToggleHelp);
                }
                let text = egui::RichText::new(&s.message);
                let text = if s.is_error {
                    text.color(ui.visuals().error_fg_color)
                } else {
                    text
                };
                ui.label(text);
            });
            if s.problems.is_empty() {
                return;
            }
            let title = format!(
                "{} problem(s) in the campaign files{}",
                s.problems.len() + s.more,
                if s.more > 0 {
                    " (first ones shown)"
                } else {
                    ""
                }
            );
            egui::CollapsingHeader::new(title)
                .id_salt("problems")
                .default_open(s.error_count() > 0)
                .show(ui, |ui| {
                    egui::ScrollArea::vertical()
                        .max_height(140.0)
                        .show(ui, |ui| {
                            for p in &s.problems {
                                let colour = match p.severity {
                                    Severity::Error => ui.visuals().error_fg_color,
                                    Severity::Warning => ui.visuals().warn_fg_color,
                                };
                                ui.label(
                                    egui::RichText::new(p.to_string()).color(colour).monospace(),
                                );
                            }
                        });
                });
        });
}
