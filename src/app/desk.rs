//! The correction desk on the right: the step's features and their share of the novelty, the
//! learner's action beside the experts' nearby with the suggested value, an entry per action
//! channel (slider and exact number, a button per choice, a 2-D pad for two continuous
//! channels), the verdict buttons with their keys, a note, and the other annotators' verdicts.

use egui::{Sense, Stroke, pos2, vec2};

use crate::campaign::ChannelKind;
use crate::review::brief::{ChannelLine, StepBrief, bounds};

use super::commands::{Command, FocusTarget};
use super::desk_state::exact_text;
use super::keys::caption;
use super::workbench::Workbench;

use super::theme::{ACCENT as ACTIVE, EXPERT, LEARNER, STALE};

/// Draws the desk.
pub fn desk_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    egui::Panel::right("desk")
        .resizable(true)
        .default_size(360.0)
        .size_range(280.0..=560.0)
        .show(ui, |ui| {
            egui::ScrollArea::vertical()
                .auto_shrink([false, false])
                .show(ui, |ui| body_ui(wb, ui, cmds));
        });
}

fn body_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    ui.heading("Correction desk");
    who_ui(wb, ui, cmds);
    caution_ui(wb, ui, cmds);
    let Some(b) = wb.desk.brief.clone() else {
        ui.weak("no step selected");
        return;
    };
    ui.separator();
    step_ui(wb, &b, ui);
    ui.separator();
    features_ui(&b, ui);
    ui.separator();
    for (i, ch) in b.channels.iter().enumerate() {
        channel_ui(wb, i, ch, ui, cmds);
    }
    verdict_ui(wb, ui, cmds);
    // The pad enters two channels at once: it follows the verdicts, above the other
    // annotators' verdicts, so that on a short screen it is the first thing to scroll.
    pad_ui(wb, &b, ui, cmds);
    ui.separator();
    others_ui(wb, &b, ui);
}

fn who_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    ui.horizontal_wrapped(|ui| {
        match (&wb.desk.ledger, &wb.desk.ledger_error) {
            (Some(l), _) => {
                ui.label(format!("{} · {} records", l.annotator(), l.records().len()))
                    .on_hover_text(l.path().display().to_string());
            }
            (None, Some(e)) => {
                ui.colored_label(STALE, "read only").on_hover_text(e);
            }
            (None, None) => {
                ui.weak("no annotator yet");
            }
        }
        if ui.small_button("Change annotator").clicked() {
            cmds.push(Command::AskAnnotator);
        }
    });
}

/// The safety caution, once per annotator and day, until it is put away.
fn caution_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    if !wb.ui.caution_due(&wb.ui.annotator, &super::state::today()) {
        return;
    }
    egui::Frame::group(ui.style())
        .stroke(Stroke::new(1.0, super::theme::CAUTION))
        .show(ui, |ui| {
            ui.colored_label(super::theme::CAUTION, "Safety caution");
            ui.label(crate::SAFETY_CAUTION);
            if ui.button("Read: hide until tomorrow").clicked() {
                cmds.push(Command::PutCautionAway);
            }
        });
}

fn step_ui(wb: &Workbench, b: &StepBrief, ui: &mut egui::Ui) {
    ui.strong(format!("{} · t = {}", b.episode, b.t));
    let mut line = match b.novelty {
        Some((n, p, f)) => format!(
            "novelty {n:.3} · p {p:.3}{}",
            if f { " · flagged" } else { "" }
        ),
        None => "not scored yet".into(),
    };
    if let Some(g) = b.action_gap {
        line += &format!(" · action gap {g:.2}");
    }
    ui.label(line);
    if let Some(e) = wb.desk.sitting.as_ref().and_then(|s| s.entry_at(b.row)) {
        let reasons: Vec<&str> = e.reasons.iter().map(|r| r.as_str()).collect();
        let why = if reasons.is_empty() {
            "judged off the list".to_string()
        } else {
            reasons.join(", ")
        };
        ui.label(format!("review list: {} · {why}", e.status.as_str()));
    }
    own_verdict_ui(wb, b, ui);
}

fn own_verdict_ui(wb: &Workbench, b: &StepBrief, ui: &mut egui::Ui) {
    let Some(l) = &wb.desk.ledger else { return };
    let Some(r) = l.standing(b.round, &b.episode, b.t) else {
        return;
    };
    let Some(c) = r.correction() else { return };
    let spec = wb.campaign().map(|c| c.spec());
    let what = match (&c.verdict, spec) {
        (v @ crate::ledger::Verdict::Action(_), Some(spec)) => match v.action_vector(spec) {
            Some(Ok(a)) => format!("action {}", format_action(spec, &a)),
            _ => "action".into(),
        },
        (v, _) => v.kind_name().to_string(),
    };
    ui.label(format!("your verdict #{}: {what}", r.seq));
    if b.is_stale(&c.fingerprint) {
        ui.colored_label(
            STALE,
            format!(
                "stale: the step's data changed since this verdict (recorded {}, now {})",
                c.fingerprint, b.fingerprint
            ),
        );
    }
}

fn format_action(spec: &crate::campaign::Spec, a: &[f32]) -> String {
    spec.actions
        .iter()
        .zip(a)
        .map(|(ch, &v)| format!("{} {}", ch.name, value_text(ch, v)))
        .collect::<Vec<_>>()
        .join(", ")
}

fn value_text(ch: &crate::campaign::ActionChannel, v: f32) -> String {
    match ch.kind {
        ChannelKind::Continuous { .. } => format!("{v:.3}"),
        ChannelKind::Discrete { .. } => ch.format_value(v),
    }
}

fn features_ui(b: &StepBrief, ui: &mut egui::Ui) {
    ui.label("State (share of the novelty)");
    egui::Grid::new("desk-features")
        .num_columns(3)
        .striped(true)
        .show(ui, |ui| {
            for f in &b.features {
                ui.label(&f.name);
                ui.monospace(format!("{:.3} {}", f.value, f.unit));
                if f.share.is_finite() {
                    ui.add(
                        egui::ProgressBar::new(f.share)
                            .desired_width(90.0)
                            .text(format!("{:.0}%", f.share * 100.0)),
                    );
                } else {
                    ui.weak("–");
                }
                ui.end_row();
            }
        });
}

fn channel_ui(
    wb: &mut Workbench,
    i: usize,
    line: &ChannelLine,
    ui: &mut egui::Ui,
    cmds: &mut Vec<Command>,
) {
    let ch = &line.channel;
    let active = wb.desk.active == i;
    let stroke = if active {
        Stroke::new(1.5, ACTIVE)
    } else {
        Stroke::new(0.5, ui.visuals().weak_text_color())
    };
    egui::Frame::group(ui.style())
        .stroke(stroke)
        .show(ui, |ui| {
            ui.set_width(ui.available_width());
            let unit = if ch.unit.is_empty() {
                String::new()
            } else {
                format!(" ({})", ch.unit)
            };
            let (lo, hi) = bounds(ch);
            let range = match ch.kind {
                ChannelKind::Continuous { .. } => format!(" · {lo} to {hi}"),
                ChannelKind::Discrete { .. } => String::new(),
            };
            let name = ui.strong(format!("{}{unit}{range}", ch.name));
            ui.horizontal_wrapped(|ui| {
                ui.colored_label(LEARNER, format!("learner {}", value_text(ch, line.learner)));
                ui.colored_label(
                    EXPERT,
                    format!("suggested {}", value_text(ch, line.suggested)),
                );
            });
            if !line.neighbours.is_empty() {
                let near: Vec<String> =
                    line.neighbours.iter().map(|&v| value_text(ch, v)).collect();
                ui.small(format!("experts nearby: {}", near.join(", ")));
            }
            let v = wb.desk.draft.get(i).copied().unwrap_or(line.suggested);
            match &ch.kind {
                ChannelKind::Continuous { .. } => {
                    continuous_ui(wb, i, v, (lo, hi), name.id, ui, cmds)
                }
                ChannelKind::Discrete { choices } => {
                    ui.horizontal_wrapped(|ui| {
                        for (k, c) in choices.iter().enumerate() {
                            if ui.selectable_label(v as usize == k, c).clicked() {
                                cmds.push(Command::SetValue(i, k as f32));
                            }
                        }
                    });
                }
            }
        });
}

fn continuous_ui(
    wb: &mut Workbench,
    i: usize,
    v: f32,
    (lo, hi): (f32, f32),
    label: egui::Id,
    ui: &mut egui::Ui,
    cmds: &mut Vec<Command>,
) {
    let mut x = v;
    ui.spacing_mut().slider_width = (ui.available_width() - 16.0).max(80.0);
    let r = ui.add(egui::Slider::new(&mut x, lo..=hi).show_value(false));
    if r.labelled_by(label).changed() {
        cmds.push(Command::SetValue(i, x));
    }
    ui.horizontal(|ui| {
        let l = ui.label("exact");
        let Some(text) = wb.desk.exact.get_mut(i) else {
            return;
        };
        let r = ui
            .add(egui::TextEdit::singleline(text).desired_width(90.0))
            .labelled_by(l.id);
        if wb.desk.focus == Some(FocusTarget::Exact) && wb.desk.active == i {
            r.request_focus();
            wb.desk.focus = None;
        }
        if r.lost_focus() {
            match text.trim().parse::<f32>() {
                _ if text.trim().is_empty() => *text = exact_text(v),
                Ok(n) if n.is_finite() && (lo..=hi).contains(&n) => {
                    cmds.push(Command::SetValue(i, n))
                }
                _ => {
                    wb.status.error(format!(
                        "`{}` is not a number from {lo} to {hi}",
                        text.trim()
                    ));
                    *text = exact_text(v);
                }
            }
        }
    });
}

/// A square pad for two continuous channels: the learner (blue), the experts nearby and the
/// suggestion (orange), and the value being entered (ring); click or drag to set both.
fn pad_ui(wb: &Workbench, b: &StepBrief, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let [a, c] = b.channels.as_slice() else {
        return;
    };
    let both = matches!(a.channel.kind, ChannelKind::Continuous { .. })
        && matches!(c.channel.kind, ChannelKind::Continuous { .. });
    if !both {
        return;
    }
    let ((x0, x1), (y0, y1)) = (bounds(&a.channel), bounds(&c.channel));
    ui.separator();
    let side = ui.available_width().min(170.0);
    ui.label(format!(
        "pad: {} across, {} up",
        a.channel.name, c.channel.name
    ));
    let (rect, r) = ui.allocate_exact_size(vec2(side, side), Sense::click_and_drag());
    let to = |x: f32, y: f32| {
        pos2(
            rect.left() + (x - x0) / (x1 - x0) * rect.width(),
            rect.bottom() - (y - y0) / (y1 - y0) * rect.height(),
        )
    };
    let p = ui.painter_at(rect);
    p.rect_filled(rect, 2.0, ui.visuals().extreme_bg_color);
    let weak = Stroke::new(0.5, ui.visuals().weak_text_color());
    let zero = to(0.0f32.clamp(x0, x1), 0.0f32.clamp(y0, y1));
    p.line_segment(
        [pos2(rect.left(), zero.y), pos2(rect.right(), zero.y)],
        weak,
    );
    p.line_segment(
        [pos2(zero.x, rect.top()), pos2(zero.x, rect.bottom())],
        weak,
    );
    for (x, y) in a.neighbours.iter().zip(&c.neighbours) {
        p.circle_filled(to(*x, *y), 2.5, EXPERT.gamma_multiply(0.6));
    }
    p.circle_filled(to(a.suggested, c.suggested), 4.5, EXPERT);
    p.circle_filled(to(a.learner, c.learner), 4.5, LEARNER);
    let d = (
        wb.desk.draft.first().copied().unwrap_or(a.suggested),
        wb.desk.draft.get(1).copied().unwrap_or(c.suggested),
    );
    p.circle_stroke(
        to(d.0, d.1),
        6.0,
        Stroke::new(2.0, ui.visuals().strong_text_color()),
    );
    if let Some(pos) = r
        .interact_pointer_pos()
        .filter(|_| r.clicked() || r.dragged())
    {
        let x = x0 + (pos.x - rect.left()) / rect.width() * (x1 - x0);
        let y = y0 + (rect.bottom() - pos.y) / rect.height() * (y1 - y0);
        cmds.push(Command::SetValue(0, x));
        cmds.push(Command::SetValue(1, y));
    }
}

fn verdict_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    ui.horizontal(|ui| {
        let l = ui.label("Note");
        let r = ui
            .add(
                egui::TextEdit::singleline(&mut wb.desk.note)
                    .hint_text(caption("optional", &Command::Focus(FocusTarget::Note)))
                    .desired_width(f32::INFINITY),
            )
            .labelled_by(l.id);
        if wb.desk.focus == Some(FocusTarget::Note) {
            r.request_focus();
            wb.desk.focus = None;
        }
    });
    ui.horizontal_wrapped(|ui| {
        let buttons = [
            ("Save correction", Command::SaveAction),
            ("Skip", Command::Skip),
            ("Unrecoverable", Command::Unrecoverable),
        ];
        for (label, c) in buttons {
            if ui.button(caption(label, &c)).clicked() {
                cmds.push(c);
            }
        }
    });
    ui.horizontal_wrapped(|ui| {
        let buttons = [
            ("Undo", Command::Undo),
            ("Next open", Command::NextOpen),
            ("Suggested", Command::TakeSuggestion),
            ("Learner's", Command::TakeLearner),
            ("Save suggested", Command::SaveSuggestion),
        ];
        for (label, c) in buttons {
            if ui.button(caption(label, &c)).clicked() {
                cmds.push(c);
            }
        }
    });
}

fn others_ui(wb: &Workbench, b: &StepBrief, ui: &mut egui::Ui) {
    ui.label("Verdicts on this step");
    let Some(t) = wb.tally.as_ref().map(|t| &t.tally) else {
        ui.weak("ledgers not read");
        return;
    };
    let Some(s) = t.step(b.round, b.row) else {
        ui.weak("none yet");
        return;
    };
    let Some(c) = wb.campaign() else { return };
    for v in &s.votes {
        let what = match &v.judged {
            crate::consensus::Judged::Action(a) => format_action(c.spec(), a),
            crate::consensus::Judged::Skip => "skip".into(),
            crate::consensus::Judged::Unrecoverable => "unrecoverable".into(),
        };
        ui.label(format!("{}: {what}", v.annotator));
    }
    if let Some(sp) = &s.spread {
        let parts: Vec<String> = c
            .spec()
            .actions
            .iter()
            .zip(sp)
            .map(|(ch, x)| format!("{} {:.0}%", ch.name, x * 100.0))
            .collect();
        ui.small(format!(
            "spread {} · agreement {:.2}",
            parts.join(", "),
            s.agreement.unwrap_or(f64::NAN)
        ));
    }
    let stale = t
        .mismatches
        .iter()
        .filter(|m| m.round == b.round && m.episode == b.episode && m.t == b.t)
        .count();
    if stale > 0 {
        ui.colored_label(
            STALE,
            format!("{stale} verdict(s) given for older data of this step"),
        );
    }
}
