//! The drift strip along the bottom: novelty over time with the flag threshold, excursions
//! shaded and interventions marked; below it, per action channel, the learner's action against
//! the neighbours' expert action. A playhead that follows clicks and drags, and the playback
//! controls.

use egui::Color32;
use egui_plot::{HLine, Line, Plot, PlotResponse, PlotUi, Span, VLine};

use crate::campaign::ChannelKind;

use super::commands::Command;
use super::texts;
use super::workbench::Workbench;

use super::theme::{
    CORRECTED, EXCURSION_FILL, EXPERT, FLAG, INTERVENTION_FILL, LEARNER, NOVELTY, PLAYHEAD,
};

impl Workbench {
    /// What the strip reports about the step under the playhead, in one line.
    pub fn readout(&self) -> String {
        let (Some((ep, e)), Some(row), Some(t)) =
            (self.episode(), self.current_row(), self.table())
        else {
            return "no step selected".into();
        };
        let mut s = format!(
            "{} · t = {} · step {} of {}",
            e.name,
            t.t[row],
            row - e.start + 1,
            e.len
        );
        if let Some(sig) = self.ui.round.and_then(|r| self.signals.for_round(r))
            && let Some(v) = sig.novelty(row)
        {
            let p = sig.p_value.get(row).copied().unwrap_or(f32::NAN);
            s += &format!(
                " · novelty {v:.3} (p {p:.3}{})",
                if sig.flagged(row) { ", flagged" } else { "" }
            );
            if sig
                .excursions_of(ep)
                .any(|x| (x.onset..=x.end).contains(&row))
            {
                s += " · in excursion";
            }
            if let Some(why) = self.novel_features(sig, row) {
                s += &format!(" · unusual in {why}");
            }
        }
        if t.intervention(row) {
            s += " · expert in control";
        }
        s
    }

    /// The features holding most of a row's novelty ("heading 61%, y 30%"), from the
    /// per-feature shares of the squared distance to the nearest demonstration state.
    fn novel_features(&self, sig: &super::signals::RoundSignals, row: usize) -> Option<String> {
        let spec = self.campaign()?.spec();
        let d = spec.state_dim();
        let shares = sig.contributions.get(row * d..(row + 1) * d)?;
        let names: Vec<&str> = spec.features.iter().map(|f| f.name.as_str()).collect();
        let top = crate::novelty::explain::top_features(shares, 2, 0.1);
        (!top.is_empty()).then(|| crate::novelty::explain::describe(&names, &top))
    }

    fn channel_readout(&self, c: usize) -> String {
        let (Some(row), Some(t), Some(camp)) = (self.current_row(), self.table(), self.campaign())
        else {
            return String::new();
        };
        let ch = &camp.spec().actions[c];
        let show = |v: f32| match ch.kind {
            ChannelKind::Continuous { .. } => format!("{v:.3}"),
            ChannelKind::Discrete { .. } => ch.format_value(v),
        };
        let mut s = format!("{}: learner {}", ch.name, show(t.action(row)[c]));
        let expert = self
            .ui
            .round
            .and_then(|r| self.signals.for_round(r))
            .and_then(|sig| sig.neighbour_action(row, t.action_dim));
        if let Some(a) = expert {
            s += &format!(" · demonstrations nearby {}", show(a[c]));
        }
        if !ch.unit.is_empty() {
            s += &format!(" [{}]", ch.unit);
        }
        s
    }
}

/// Draws the drift strip.
pub fn strip_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let r = egui::Panel::bottom("drift-strip")
        .resizable(true)
        .default_size(wb.ui.layout.strip_height)
        .size_range(160.0..=700.0)
        .show(ui, |ui| {
            // Fill the panel: egui keeps a panel at the size of its contents.
            ui.set_min_height(ui.available_height());
            let width = ui.available_width();
            controls_ui(wb, ui, cmds);
            if wb.campaign().is_none() {
                ui.weak(texts::NOTHING_OPEN);
                return;
            }
            if wb.episode().is_none() {
                ui.weak(texts::NO_EPISODES);
                return;
            }
            wb.strip_width = width;
            wb.ensure_series();
            plots_ui(wb, ui, cmds);
        });
    wb.ui.layout.strip_height = r.response.rect.height();
}

fn controls_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    ui.horizontal(|ui| {
        let play = if wb.playing() { "Hold" } else { "Play" };
        if ui.button(play).clicked() {
            cmds.push(Command::TogglePlay);
        }
        if ui.button("Step back").clicked() {
            cmds.push(Command::StepBy(-1));
        }
        if ui.button("Step forward").clicked() {
            cmds.push(Command::StepBy(1));
        }
        if ui.button("Slower").clicked() {
            cmds.push(Command::Speed(false));
        }
        ui.label(format!("speed ×{}", wb.ui.speed));
        if ui.button("Faster").clicked() {
            cmds.push(Command::Speed(true));
        }
        ui.separator();
        // Cut to the panel: an overlong line would widen the panel's contents, and the plots
        // below would then run on under the desk (their last steps hidden).
        ui.add(egui::Label::new(wb.readout()).truncate());
    });
}

fn plots_ui(wb: &Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let (Some((_, e)), Some(table), Some(row)) = (wb.episode(), wb.table(), wb.current_row())
    else {
        return;
    };
    let ts = &table.t[e.rows()];
    let (t0, t1) = (ts[0] as f64, ts[ts.len() - 1] as f64);
    let now = table.t[row] as f64;
    let channels = table.action_dim;
    let h = ui.available_height();
    let signals = wb.ui.round.and_then(|r| wb.signals.for_round(r));
    let novelty_h = (h * if signals.is_some() { 0.42 } else { 0.22 }).max(50.0);
    // What is not a plot, from the style: the legend row, and a caption line above each
    // channel plot, each with the spacing after it (one pixel spare against rounding: a
    // panel grows to whatever its contents need, frame after frame).
    let gap = ui.spacing().item_spacing.y;
    let line = ui.text_style_height(&egui::TextStyle::Small);
    // A horizontal row is at least one widget tall.
    let legend = line.max(ui.spacing().interact_size.y) + gap;
    let per_channel = line + 2.0 * gap;
    let rest = h - novelty_h - legend - gap - 1.0;
    let channel_h = (rest / channels.max(1) as f32 - per_channel).max(36.0);
    let s = &wb.series;
    legend_ui(ui);
    // Bounds by `include_y`, never by setting them: set bounds would switch auto-bounds off for
    // good in the plot's memory, and the scores that arrive later would be cut off.
    let resp = base_plot("novelty", t0, t1, novelty_h, wb.strip_width)
        .y_axis_label("novelty")
        .include_y(0.0)
        .include_y(signals.map_or(1.0, |s| 2.0 * s.threshold as f64))
        .show(ui, |p| {
            spans_ui(p, &s.interventions, "expert in control", INTERVENTION_FILL);
            spans_ui(p, &s.excursions, "excursion", EXCURSION_FILL);
            if let Some(sig) = signals {
                p.line(Line::new("novelty", s.novelty.as_slice()).color(NOVELTY));
                p.hline(HLine::new("flag threshold", sig.threshold as f64).color(FLAG));
            } else {
                p.text(egui_plot::Text::new(
                    "hint",
                    egui_plot::PlotPoint::new((t0 + t1) / 2.0, 0.5),
                    texts::NOT_SCORED,
                ));
            }
            if let Some(r) = wb.ui.round {
                for c in wb.corrected_rows(r, e.rows()) {
                    let t = table.t[c.row] as f64;
                    p.vline(VLine::new("corrected", t).color(CORRECTED).width(1.0));
                }
            }
            p.vline(VLine::new("playhead", now).color(PLAYHEAD).width(1.5));
        });
    scrub(&resp, ts, cmds);
    let Some(camp) = wb.campaign() else { return };
    for (c, ch) in camp.spec().actions.iter().enumerate() {
        ui.small(wb.channel_readout(c));
        let mut plot = base_plot(format!("channel-{c}"), t0, t1, channel_h, wb.strip_width);
        match &ch.kind {
            ChannelKind::Continuous { low, high } => plot = plot.include_y(*low).include_y(*high),
            ChannelKind::Discrete { choices } => {
                let names = choices.clone();
                plot = plot
                    .include_y(0.0)
                    .include_y((choices.len().max(2) - 1) as f64)
                    .y_axis_formatter(move |m, _| {
                        let i = m.value.round();
                        match names.get(i as usize) {
                            Some(n) if (m.value - i).abs() < 1e-9 && i >= 0.0 => n.clone(),
                            _ => String::new(),
                        }
                    });
            }
        }
        let resp = plot.show(ui, |p| {
            spans_ui(p, &s.interventions, "expert in control", INTERVENTION_FILL);
            if let Some(l) = s.learner.get(c) {
                p.line(Line::new("learner", l.as_slice()).color(LEARNER));
            }
            if let Some(ex) = s.expert.get(c) {
                p.line(Line::new("demonstrations nearby", ex.as_slice()).color(EXPERT));
            }
            p.vline(VLine::new("playhead", now).color(PLAYHEAD).width(1.5));
        });
        scrub(&resp, ts, cmds);
    }
}

fn legend_ui(ui: &mut egui::Ui) {
    ui.horizontal(|ui| {
        let key = |ui: &mut egui::Ui, c: Color32, text: &str| {
            let (r, _) = ui.allocate_exact_size(egui::vec2(10.0, 10.0), egui::Sense::hover());
            ui.painter().rect_filled(r, 2.0, c);
            ui.small(text);
        };
        key(ui, NOVELTY, "novelty");
        key(ui, FLAG, "flag threshold");
        key(ui, EXCURSION_FILL.to_opaque(), "excursion");
        key(ui, INTERVENTION_FILL.to_opaque(), "expert in control");
        key(ui, CORRECTED, "corrected");
        key(ui, LEARNER, "learner action");
        key(ui, EXPERT, "demonstrations nearby");
    });
}

fn base_plot<'a>(id: impl egui::AsIdSalt, t0: f64, t1: f64, height: f32, width: f32) -> Plot<'a> {
    Plot::new(id)
        .height(height)
        .width(width)
        .include_x(t0)
        .include_x(t1)
        .allow_drag(false)
        .allow_zoom(false)
        .allow_scroll(false)
        .allow_boxed_zoom(false)
        .allow_double_click_reset(false)
        .show_x(false)
        // One axis width for every strip plot, so their time axes line up under each other.
        .y_axis_min_width(52.0)
        .set_margin_fraction(egui::vec2(0.0, 0.08))
}

fn spans_ui(p: &mut PlotUi<'_>, spans: &[(f64, f64)], name: &str, fill: Color32) {
    for &(a, b) in spans {
        p.span(Span::new(name, a..=b + 0.5).fill(fill));
    }
}

/// A press or drag inside a strip plot moves the playhead to the step nearest the pointer.
fn scrub(resp: &PlotResponse<()>, ts: &[i64], cmds: &mut Vec<Command>) {
    let r = &resp.response;
    if !(r.is_pointer_button_down_on() || r.clicked()) {
        return;
    }
    let Some(pos) = r.interact_pointer_pos() else {
        return;
    };
    let t = resp.transform.value_from_position(pos).x.round() as i64;
    let i = ts.partition_point(|&x| x < t).min(ts.len() - 1);
    cmds.push(Command::SetStep(i));
}
