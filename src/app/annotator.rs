//! The annotator's name, asked once: the first time a campaign opens without a name, a
//! prompt asks for it; the window remembers it (eframe storage) and opens that annotator's
//! ledger. "Change annotator" in the desk asks again.

use super::commands::Command;
use super::workbench::Workbench;

/// Draws the name prompt when it is open.
pub fn name_prompt_ui(wb: &mut Workbench, ctx: &egui::Context, cmds: &mut Vec<Command>) {
    if !wb.desk.asking_name {
        return;
    }
    egui::Window::new("Who is reviewing?")
        .collapsible(false)
        .resizable(false)
        .anchor(egui::Align2::CENTER_CENTER, egui::Vec2::ZERO)
        .show(ctx, |ui| {
            ui.label(
                "Your corrections are kept in a ledger under your name (letters, digits, _ - .).",
            );
            let l = ui.label("Annotator name");
            let r = ui
                .add(egui::TextEdit::singleline(&mut wb.desk.name_draft).desired_width(200.0))
                .labelled_by(l.id);
            if !r.has_focus() && !r.lost_focus() {
                r.request_focus();
            }
            let enter = r.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
            ui.horizontal(|ui| {
                if ui.button("Use this name").clicked() || enter {
                    cmds.push(Command::SetAnnotator(wb.desk.name_draft.clone()));
                }
                if ui.button("Later").clicked() {
                    wb.desk.asking_name = false;
                }
            });
        });
}
