//! The episode shelf on the left: the round's episodes with a novelty sparkline, flagged
//! share and interventions; sort and filter. A tab beside it shows the review list.

use egui::{Sense, Stroke, pos2, vec2};

use super::commands::Command;
use super::state::ShelfSort;
use super::views::EpisodeSummary;
use super::workbench::Workbench;

/// Draws the shelf.
pub fn shelf_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let r = egui::Panel::left("shelf")
        .resizable(true)
        .default_size(wb.ui.layout.shelf_width)
        .size_range(180.0..=520.0)
        .show(ui, |ui| {
            ui.horizontal(|ui| {
                let review = wb.ui.review_tab;
                if ui.selectable_label(!review, "Episodes").clicked() {
                    cmds.push(Command::ShowReviewList(false));
                }
                if ui.selectable_label(review, "Review list").clicked() {
                    cmds.push(Command::ShowReviewList(true));
                }
                ui.weak("(F2)");
            });
            ui.separator();
            if wb.ui.review_tab {
                super::review_list::review_list_ui(wb, ui, cmds);
                return;
            }
            controls_ui(wb, ui);
            ui.separator();
            list_ui(wb, ui, cmds);
        });
    wb.ui.layout.shelf_width = r.response.rect.width();
}

fn controls_ui(wb: &mut Workbench, ui: &mut egui::Ui) {
    ui.horizontal(|ui| {
        let label = ui.label("Filter");
        ui.add(
            egui::TextEdit::singleline(&mut wb.ui.filter)
                .hint_text("episode name")
                .desired_width(f32::INFINITY),
        )
        .labelled_by(label.id);
    });
    ui.horizontal(|ui| {
        let label = ui.label("Sort by");
        let combo = egui::ComboBox::from_id_salt("shelf-sort")
            .selected_text(wb.ui.sort.caption())
            .show_ui(ui, |ui| {
                for s in ShelfSort::ALL {
                    ui.selectable_value(&mut wb.ui.sort, s, s.caption());
                }
            });
        combo.response.labelled_by(label.id);
    });
}

fn list_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    if wb.table().is_none() {
        ui.weak("no round selected");
        return;
    }
    let order = wb.shelf_order();
    if order.is_empty() {
        ui.weak("no episode matches");
        return;
    }
    let selected = wb.episode().map(|(i, _)| i);
    let threshold = wb
        .ui
        .round
        .and_then(|r| wb.signals.for_round(r))
        .map(|s| s.threshold);
    let row_h = 38.0;
    egui::ScrollArea::vertical()
        .auto_shrink([false, false])
        .show_rows(ui, row_h, order.len(), |ui, range| {
            for &i in &order[range] {
                let s = &wb.summaries[i];
                let corrected = corrected_in(wb, i);
                if row_ui(ui, s, corrected, selected == Some(i), threshold, row_h).clicked() {
                    cmds.push(Command::SelectEpisode(i));
                }
            }
        });
}

/// Steps of episode `i` of the current round with a standing verdict.
fn corrected_in(wb: &Workbench, i: usize) -> usize {
    match (wb.ui.round, wb.table()) {
        (Some(r), Some(t)) => t
            .episodes
            .get(i)
            .map_or(0, |e| wb.corrected_rows(r, e.rows()).len()),
        _ => 0,
    }
}

fn row_ui(
    ui: &mut egui::Ui,
    s: &EpisodeSummary,
    corrected: usize,
    selected: bool,
    threshold: Option<f32>,
    h: f32,
) -> egui::Response {
    ui.horizontal(|ui| {
        ui.set_height(h);
        let r = ui.add(egui::Button::selectable(selected, &s.name).min_size(vec2(96.0, 0.0)));
        sparkline_ui(ui, &s.sparkline, threshold);
        ui.vertical(|ui| {
            let flagged = s.flagged_share.map_or("not scored".into(), |f| {
                format!("{:.0}% flagged", f * 100.0)
            });
            ui.small(flagged);
            ui.small(format!(
                "{} steps · {} interventions · {corrected} corrected",
                s.steps, s.interventions
            ));
        });
        r
    })
    .inner
}

fn sparkline_ui(ui: &mut egui::Ui, values: &[f32], threshold: Option<f32>) {
    let (rect, _) = ui.allocate_exact_size(vec2(64.0, 22.0), Sense::hover());
    let p = ui.painter_at(rect);
    p.rect_filled(rect, 2.0, ui.visuals().extreme_bg_color);
    let top = values
        .iter()
        .copied()
        .fold(threshold.unwrap_or(0.0) * 1.5, f32::max);
    if values.is_empty() || top <= 0.0 {
        return;
    }
    let y = |v: f32| rect.bottom() - (v / top).clamp(0.0, 1.0) * rect.height();
    if let Some(t) = threshold {
        let c = ui.visuals().weak_text_color();
        p.line_segment(
            [pos2(rect.left(), y(t)), pos2(rect.right(), y(t))],
            Stroke::new(0.5, c),
        );
    }
    let n = values.len().max(2) - 1;
    let pts: Vec<_> = values
        .iter()
        .enumerate()
        .map(|(i, &v)| pos2(rect.left() + rect.width() * i as f32 / n as f32, y(v)))
        .collect();
    p.add(egui::Shape::line(
        pts,
        Stroke::new(1.2, super::theme::NOVELTY),
    ));
}
