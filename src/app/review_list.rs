//! The review list, a tab beside the episode shelf: progress (done / budget) with a bar, the
//! budget and re-planning, and every entry with its reasons and status. The list itself is
//! the library's [`crate::review::Sitting`], re-ranked after every verdict.

use super::commands::{Command, FocusTarget};
use super::workbench::Workbench;

/// Draws the review list tab.
pub fn review_list_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let Some(s) = &wb.desk.sitting else {
        ui.weak("The review list appears once the round is scored.");
        return;
    };
    let done = s.done();
    let budget = s.budget.max(1);
    ui.add(
        egui::ProgressBar::new((done as f32 / budget as f32).min(1.0))
            .text(format!("{done} / {budget} done")),
    );
    budget_ui(wb, ui, cmds);
    ui.separator();
    entries_ui(wb, ui, cmds);
}

fn budget_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    ui.horizontal(|ui| {
        let l = ui.label("Budget");
        let r = ui
            .add(egui::TextEdit::singleline(&mut wb.desk.budget_text).desired_width(50.0))
            .labelled_by(l.id);
        if wb.desk.focus == Some(FocusTarget::Budget) {
            r.request_focus();
            wb.desk.focus = None;
        }
        let enter = r.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
        if ui
            .button(super::keys::caption("Re-plan", &Command::Replan))
            .clicked()
            || enter
        {
            cmds.push(Command::Replan);
        }
        if ui
            .button(super::keys::caption("Next open", &Command::NextOpen))
            .clicked()
        {
            cmds.push(Command::NextOpen);
        }
    });
}

fn entries_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let (Some(s), Some(t)) = (&wb.desk.sitting, wb.table()) else {
        return;
    };
    let here = wb.current_row();
    let row_h = 34.0;
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show_rows(ui, row_h, s.entries.len(), |ui, range| {
            for (i, e) in s
                .entries
                .iter()
                .enumerate()
                .skip(range.start)
                .take(range.len())
            {
                let name = &t.episodes[e.episode].name;
                let reasons: Vec<&str> = e.reasons.iter().map(|r| r.as_str()).collect();
                let text = format!(
                    "{}. {name} t = {} · {}\n   {} · novelty {:.2}",
                    i + 1,
                    e.t,
                    e.status.as_str(),
                    if reasons.is_empty() {
                        "judged off the list".into()
                    } else {
                        reasons.join(", ")
                    },
                    e.novelty
                );
                let b = egui::Button::selectable(here == Some(e.row), text)
                    .min_size(egui::vec2(ui.available_width(), row_h - 4.0));
                if ui.add(b).clicked() {
                    cmds.push(Command::GoToRow(e.row));
                }
            }
        });
}
