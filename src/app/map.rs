//! The centre: the map of where the episode went relative to the demonstrations, and the
//! step's frame image beside it when it has one.

use egui::{Color32, ColorImage, TextureOptions};
use egui_plot::{Line, MarkerShape, Plot, PlotImage, PlotPoint, Points};

use crate::plotting::{Density, cividis};

use super::commands::Command;
use super::frame_view::FrameShow;
use super::series::PATH_CLASSES;
use super::texts;
use super::workbench::Workbench;

/// Draws the centre region.
pub fn centre_ui(wb: &mut Workbench, ui: &mut egui::Ui, cmds: &mut Vec<Command>) {
    let _ = cmds;
    if wb.campaign().is_none() {
        ui.centered_and_justified(|ui| ui.label(texts::NOTHING_OPEN));
        return;
    }
    wb.ensure_series();
    let frame = wb
        .current_row()
        .and_then(|r| wb.table()?.frame(r).map(str::to_string));
    match frame.filter(|_| wb.ui.layout.show_frame) {
        Some(rel) => {
            let w = ui.available_width() * wb.ui.layout.frame_share;
            egui::Panel::right("frame")
                .resizable(true)
                .default_size(w)
                .show(ui, |ui| frame_ui(wb, ui, &rel));
            egui::CentralPanel::default().show(ui, |ui| map_ui(wb, ui));
        }
        None => map_ui(wb, ui),
    }
}

fn frame_ui(wb: &mut Workbench, ui: &mut egui::Ui, rel: &str) {
    ui.set_min_width(ui.available_width());
    ui.small(format!("frame {rel}"));
    let Some(root) = wb.campaign().map(|c| c.root.clone()) else {
        return;
    };
    let ctx = ui.ctx().clone();
    let show = |ui: &mut egui::Ui, t: &egui::TextureHandle| {
        let size = t.size_vec2();
        let scale = (ui.available_width() / size.x)
            .min(ui.available_height() / size.y)
            .min(4.0);
        ui.image((t.id(), size * scale));
    };
    match wb.frames.request(&ctx, &root, rel) {
        FrameShow::Ready(t) => show(ui, t),
        FrameShow::Loading(Some(t)) => show(ui, t),
        FrameShow::Loading(None) => {
            ui.spinner();
        }
        FrameShow::Failed(e) => {
            ui.colored_label(ui.visuals().error_fg_color, e);
        }
    }
}

/// The density as an image: transparent where empty, rising opacity with log count.
pub fn density_image(d: &Density, dark: bool) -> ColorImage {
    let peak = (d.peak() as f32 + 1.0).ln().max(f32::MIN_POSITIVE);
    let base = if dark {
        [200u8, 205, 215]
    } else {
        [60u8, 70, 90]
    };
    let mut pixels = Vec::with_capacity(d.width * d.height);
    for row in (0..d.height).rev() {
        for col in 0..d.width {
            let c = d.counts[row * d.width + col];
            let a = if c == 0 {
                0.0
            } else {
                0.12 + 0.68 * ((c as f32 + 1.0).ln() / peak)
            };
            pixels.push(Color32::from_rgba_unmultiplied(
                base[0],
                base[1],
                base[2],
                (a * 255.0) as u8,
            ));
        }
    }
    ColorImage::new([d.width, d.height], pixels)
}

fn class_colour(class: u8) -> Color32 {
    let [r, g, b] = cividis((class as f32 + 0.5) / PATH_CLASSES as f32);
    Color32::from_rgb(r, g, b)
}

fn map_ui(wb: &mut Workbench, ui: &mut egui::Ui) {
    let Some(demo) = wb.demo.clone() else {
        ui.centered_and_justified(|ui| ui.spinner());
        return;
    };
    let dark = ui.visuals().dark_mode;
    let tex = wb
        .density_texture
        .get_or_insert_with(|| {
            ui.ctx().load_texture(
                "density",
                density_image(&demo.density, dark),
                TextureOptions::NEAREST,
            )
        })
        .clone();
    let d = &demo.density;
    let centre = PlotPoint::new(
        (d.min[0] + d.max[0]) as f64 / 2.0,
        (d.min[1] + d.max[1]) as f64 / 2.0,
    );
    let size = egui::vec2(d.max[0] - d.min[0], d.max[1] - d.min[1]);
    let row = wb.current_row();
    let here = row.and_then(|r| wb.round_view.as_ref()?.points.get(r).copied());
    let neighbours: Vec<[f64; 2]> = match (row, wb.ui.round.and_then(|r| wb.signals.for_round(r))) {
        (Some(r), Some(s)) => s
            .neighbours(r)
            .iter()
            .filter_map(|&n| demo.points.get(n as usize))
            .map(|p| [p[0] as f64, p[1] as f64])
            .collect(),
        _ => Vec::new(),
    };
    let scored = wb.series.key.is_some_and(|k| k.scored);
    let [xl, yl] = demo.projection.labels.clone();
    let casing = if dark {
        Color32::from_gray(150)
    } else {
        Color32::from_gray(60)
    };
    let halo = if dark {
        Color32::from_gray(235)
    } else {
        Color32::from_gray(30)
    };
    let series = &wb.series;
    Plot::new("map")
        .data_aspect(1.0)
        .x_axis_label(xl)
        .y_axis_label(yl)
        .legend(egui_plot::Legend::default())
        .show(ui, |p| {
            p.image(PlotImage::new(texts::DENSITY, tex.id(), centre, size));
            let path_name = if scored {
                texts::PATH_BY_NOVELTY
            } else {
                texts::PATH_BY_TIME
            };
            // A pale casing under the path keeps the scale's dark end visible on a dark plot.
            for (_, pts) in &series.path_runs {
                p.line(
                    Line::new(path_name, pts.as_slice())
                        .color(casing)
                        .width(4.0),
                );
            }
            for (class, pts) in &series.path_runs {
                p.line(
                    Line::new(path_name, pts.as_slice())
                        .color(class_colour(*class))
                        .width(2.0),
                );
            }
            if !neighbours.is_empty() {
                p.points(
                    Points::new(texts::NEIGHBOURS, neighbours)
                        .shape(MarkerShape::Diamond)
                        .radius(4.0)
                        .color(super::theme::FLAG),
                );
            }
            if let Some(h) = here {
                let pt = [h[0] as f64, h[1] as f64];
                p.points(
                    Points::new(texts::CURRENT_STEP, vec![pt])
                        .shape(MarkerShape::Circle)
                        .radius(7.0)
                        .filled(false)
                        .color(halo),
                );
                p.points(
                    Points::new(texts::CURRENT_STEP, vec![pt])
                        .shape(MarkerShape::Circle)
                        .radius(3.0)
                        .color(halo),
                );
            }
        });
}
