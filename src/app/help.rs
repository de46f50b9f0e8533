//! The help overlay: every key of the workbench (from the one key table) and what the map,
//! the strip, the correction desk and the review list show.

use super::commands::Command;
use super::keys::BINDINGS;
use super::workbench::Workbench;

/// Draws the overlay when it is open.
pub fn help_ui(wb: &mut Workbench, ctx: &egui::Context, cmds: &mut Vec<Command>) {
    if !wb.show_help {
        return;
    }
    let mut open = true;
    egui::Window::new("Keys and views")
        .open(&mut open)
        .collapsible(false)
        .resizable(false)
        .anchor(egui::Align2::CENTER_CENTER, egui::Vec2::ZERO)
        .show(ctx, |ui| {
            egui::Grid::new("keys").num_columns(2).striped(true).show(ui, |ui| {
                for b in BINDINGS.iter().filter(|b| !b.keys.is_empty()) {
                    ui.monospace(b.keys);
                    ui.label(b.does);
                    ui.end_row();
                }
            });
            ui.separator();
            ui.label("Map: demonstrations as a grey density; the episode's path coloured with the cividis scale; the current step as a ring; its nearest demonstration states as diamonds.");
            ui.label("Drift strip: novelty against time with the flag threshold; excursions shaded yellow, expert control shaded blue; below, each action channel: learner (blue) and the demonstrations nearby (orange). Click or drag in the strip to move the playhead.");
            ui.label("Correction desk (right): the step's state with each feature's share of the novelty; per action channel the learner's value (blue), the experts' values nearby and the suggestion (orange), and the value you enter. Enter saves it to your ledger and moves to the next open entry of the review list; S skips, U marks the step unrecoverable, Ctrl Z retracts your latest verdict. Nothing is ever rewritten: undo appends a retraction.");
            ui.label("Review list (F2, beside the episodes): the steps planned for you with their reasons and status; it is planned again after every verdict so ground already covered is not asked twice.");
            ui.separator();
            ui.small(crate::SAFETY_CAUTION);
        });
    if !open {
        cmds.push(Command::ToggleHelp);
    }
    if ctx.input(|i| i.key_pressed(egui::Key::Escape)) {
        cmds.push(Command::ToggleHelp);
    }
}
