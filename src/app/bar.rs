//! The campaign bar along the top: open and recent campaigns, the campaign's name, the round,
//! counts, the annotator's name, and the progress of background work with a cancel button.

use std::path::PathBuf;

use super::commands::Command;
use super::workbench::Workbench;

/// Draws the campaign bar.
pub fn bar_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    egui::Panel::top("campaign-bar").show(ui, |ui| {
        ui.horizontal_wrapped(|ui| {
            open_ui(wb, ui, cmds);
            ui.separator();
            campaign_ui(wb, ui, cmds);
            ui.separator();
            let who = if wb.ui.annotator.is_empty() {
                "no annotator".to_string()
            } else {
                format!("annotator {}", wb.ui.annotator)
            };
            if ui
                .button(who)
                .on_hover_text("Your name, recorded with your corrections; click to change")
                .clicked()
            {
                cmds.push(Command::AskAnnotator);
            }
            if ui
                .button(super::keys::caption("Export...", &Command::ToggleExport))
                .clicked()
            {
                cmds.push(Command::ToggleExport);
            }
            if ui
                .button("Rounds...")
                .on_hover_text("The trend across rounds: flagged share, excursions, interventions, failures, labels")
                .clicked()
            {
                cmds.push(Command::ToggleTrend);
            }
        });
        agreement_ui(wb, ui);
        work_ui(wb, ui, cmds);
    });
}

fn open_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    if ui.button("Open folder...").clicked() {
        cmds.push(Command::PickFolder);
    }
    ui.menu_button("Recent", |ui| {
        for p in &wb.ui.recent {
            if ui.button(p.display().to_string()).clicked() {
                cmds.push(Command::Open(p.clone()));
                ui.close();
            }
        }
        if wb.ui.recent.is_empty() {
            ui.label("nothing opened yet");
        }
    });
    let edit = egui::TextEdit::singleline(&mut wb.typed_path)
        .desired_width(130.0)
        .hint_text("or type a folder path");
    let r = ui.add(edit).accessible_name("Campaign folder path");
    if std::mem::take(&mut wb.focus_path) {
        r.request_focus();
    }
    let enter = r.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
    if (ui.button("Open path").clicked() || enter) && !wb.typed_path.trim().is_empty() {
        cmds.push(Command::Open(PathBuf::from(wb.typed_path.trim())));
    }
}

fn campaign_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let Some(c) = wb.campaign() else {
        ui.label("no campaign open");
        return;
    };
    ui.strong(&c.file.name)
        .on_hover_text(c.root.display().to_string());
    let current = wb.ui.round.map_or("none".to_string(), |r| r.to_string());
    let label = ui.label("Round");
    let combo = egui::ComboBox::from_id_salt("round")
        .selected_text(current)
        .show_ui(ui, |ui| {
            for r in &c.rounds {
                if ui
                    .selectable_label(wb.ui.round == Some(r.number), r.number.to_string())
                    .clicked()
                {
                    cmds.push(Command::SelectRound(r.number));
                }
            }
        });
    combo.response.labelled_by(label.id);
    ui.label(counts(wb));
}

fn counts(wb: &Workbench) -> String {
    let Some(t) = wb.table() else {
        return String::new();
    };
    let mut s = format!("{} episodes · {} steps", t.episodes.len(), t.len());
    // From the shelf summaries: no pass over every row in each frame.
    let flagged: Option<f32> = wb.ui.round.and_then(|r| wb.signals.for_round(r)).map(|_| {
        let per = wb
            .summaries
            .iter()
            .map(|e| e.flagged_share.unwrap_or(0.0) * e.steps as f32);
        per.sum()
    });
    match flagged {
        Some(f) => {
            s += &format!(
                " · {:.1}% flagged",
                100.0 * f as f64 / t.len().max(1) as f64
            )
        }
        None => s += " · not scored yet",
    }
    if let Some(r) = wb.ui.round {
        let n = wb.corrected_rows(r, 0..t.len()).len();
        s += &format!(" · {n} corrected");
    }
    s
}

fn work_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let w = &wb.work;
    let running: Vec<(&str, crate::progress::Snapshot)> = [
        w.load.running().map(|j| (j.label.as_str(), j.snapshot())),
        w.demo.running().map(|j| (j.label.as_str(), j.snapshot())),
        w.round.running().map(|j| (j.label.as_str(), j.snapshot())),
        w.score.running().map(|j| (j.label.as_str(), j.snapshot())),
        w.export.running().map(|j| (j.label.as_str(), j.snapshot())),
    ]
    .into_iter()
    .flatten()
    .collect();
    let Some((label, snap)) = running.first() else {
        return;
    };
    ui.horizontal(|ui| {
        let text = format!("{label}: {}", snap.stage);
        let bar = egui::ProgressBar::new(snap.fraction())
            .desired_width(280.0)
            .text(text);
        ui.add(if snap.total == 0 {
            bar.animate(true)
        } else {
            bar
        });
        if running.len() > 1 {
            ui.label(format!("and {} more", running.len() - 1));
        }
        if ui.button("Cancel").clicked() {
            cmds.push(Command::CancelWork);
        }
    });
}

/// The tally of agreement: annotators, steps judged by two or more, and Krippendorff's alpha
/// per action channel and for the verdict kind (from [`crate::consensus`]).
fn agreement_ui(wb: &Workbench, ui: &mut egui::Ui) {
    let Some(t) = wb.tally.as_ref().map(|t| &t.tally) else {
        return;
    };
    let annotators = t.ledgers.iter().filter(|l| l.records > 0).count();
    if annotators == 0 {
        return;
    }
    let multi: usize = t.rounds.iter().map(|r| r.multi).sum();
    let alpha = |a: Option<f64>| a.map_or("–".to_string(), |a| format!("{a:.2}"));
    let mut parts: Vec<String> = t
        .channels
        .iter()
        .map(|c| format!("{} {}", c.channel, alpha(c.alpha)))
        .collect();
    parts.push(format!("verdict {}", alpha(t.verdicts.alpha)));
    ui.label(format!(
        "tally: {} annotator(s) · {multi} step(s) judged by two or more · agreement α: {}",
        annotators,
        parts.join(", ")
    ));
}
