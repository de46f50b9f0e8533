//! The help overlay: every key of the workbench (from the one key table) and what the map,
//! the strip, the correction desk and the review list show.

use super::commands::Command;
use super::keys::BINDINGS;
use super::workbench::Workbench;

/// The key table, as the handler reads it.
fn keys_ui(ui: &mut egui::Ui) {
    egui::Grid::new("keys")
        .num_columns(2)
        .striped(true)
        .show(ui, |ui| {
            for b in BINDINGS.iter().filter(|b| !b.keys.is_empty()) {
                ui.monospace(b.keys);
                ui.label(b.does);
                ui.end_row();
            }
        });
}

/// What the regions show, the safety caution, and the way to the licence notices.
fn views_ui(ui: &mut egui::Ui) {
    for text in super::texts::HELP_VIEWS {
        ui.label(*text);
    }
    ui.separator();
    ui.small(crate::SAFETY_CAUTION);
    ui.separator();
    if ui.button("Licences").clicked() {
        ui.ctx().data_mut(|d| d.insert_temp(notices_id(), true));
    }
}

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
        .max_width(1040.0)
        .show(ctx, |ui| {
            let tall = (ctx.content_rect().height() - 160.0).max(200.0);
            ui.columns(2, |cols| {
                egui::ScrollArea::vertical()
                    .id_salt("help-keys")
                    .max_height(tall)
                    .show(&mut cols[0], keys_ui);
                views_ui(&mut cols[1]);
            });
        });
    notices_ui(ctx);
    if !open {
        cmds.push(Command::ToggleHelp);
    }
    if ctx.input(|i| i.key_pressed(egui::Key::Escape)) {
        cmds.push(Command::ToggleHelp);
    }
}

fn notices_id() -> egui::Id {
    egui::Id::unique("third-party-notices")
}

/// The licence notices of the works built into the program, in their own window (opened from
/// the help overlay; a passing view, so its state lives in egui's memory, not the workbench).
fn notices_ui(ctx: &egui::Context) {
    let mut open = ctx.data(|d| d.get_temp::<bool>(notices_id()).unwrap_or(false));
    if !open {
        return;
    }
    egui::Window::new("Licences")
        .open(&mut open)
        .collapsible(false)
        .default_size([640.0, 520.0])
        .show(ctx, |ui| {
            ui.label(format!(
                "countersteer {}: MIT or Apache-2.0, at your choice. Works by others built into it:",
                crate::VERSION
            ));
            egui::ScrollArea::vertical()
                .auto_shrink([false, false])
                .show(ui, |ui| ui.monospace(crate::THIRD_PARTY_NOTICES));
        });
    ctx.data_mut(|d| d.insert_temp(notices_id(), open));
}
