//! The workbench's look, chosen for long review sittings and applied once at startup
//! ([`apply`]): a low-glare dark ground with a slight green-grey cast (the orchard at dusk),
//! warm off-white text a step below pure white, one moss-green accent for what is selected
//! and active, and DejaVu Sans (already shipped for the study's figure) at a size that reads
//! without leaning in. Every region takes its colours from the palette below, so a colour
//! means the same thing everywhere: the learner is always [`LEARNER`], the experts always
//! [`EXPERT`].

use egui::{Color32, FontData, FontDefinitions, FontFamily, FontId, Stroke, TextStyle};

/// The deepest ground: plots, pads and text fields.
pub const GROUND: Color32 = Color32::from_rgb(22, 25, 23);
/// Panels.
pub const PANEL: Color32 = Color32::from_rgb(32, 36, 33);
/// Floating windows (help, export, the name prompt).
pub const WINDOW: Color32 = Color32::from_rgb(38, 43, 39);
/// Resting widgets.
pub const WIDGET: Color32 = Color32::from_rgb(48, 54, 49);
/// Widgets under the pointer.
pub const WIDGET_HOVER: Color32 = Color32::from_rgb(62, 70, 63);
/// Text: warm off-white, below full white to keep glare down over hours.
pub const TEXT: Color32 = Color32::from_rgb(221, 216, 202);
/// Secondary text and thin rules.
pub const TEXT_WEAK: Color32 = Color32::from_rgb(150, 150, 138);
/// Edges of panels and frames.
pub const EDGE: Color32 = Color32::from_rgb(62, 68, 62);
/// The accent: selection, the active channel, the focused field.
pub const ACCENT: Color32 = Color32::from_rgb(138, 176, 112);
/// The learner's actions and values.
pub const LEARNER: Color32 = Color32::from_rgb(126, 174, 214);
/// The experts' actions nearby and the suggestion.
pub const EXPERT: Color32 = Color32::from_rgb(226, 166, 84);
/// The novelty curve and excursion marks.
pub const NOVELTY: Color32 = Color32::from_rgb(214, 196, 110);
/// The flag threshold and the nearest demonstration states on the map.
pub const FLAG: Color32 = Color32::from_rgb(206, 104, 86);
/// Steps already corrected, and the active channel's marker.
pub const CORRECTED: Color32 = ACCENT;
/// A standing verdict whose step changed, errors in forms.
pub const STALE: Color32 = Color32::from_rgb(224, 128, 96);
/// The safety caution's frame and title.
pub const CAUTION: Color32 = Color32::from_rgb(232, 186, 72);
/// The playhead line.
pub const PLAYHEAD: Color32 = Color32::from_rgb(236, 232, 220);
/// Excursions shaded in the strip.
pub const EXCURSION_FILL: Color32 = Color32::from_rgba_premultiplied(58, 52, 20, 44);
/// Expert control shaded in the strip.
pub const INTERVENTION_FILL: Color32 = Color32::from_rgba_premultiplied(26, 50, 72, 56);

/// Name under which DejaVu Sans is registered.
const FONT_NAME: &str = "dejavu-sans";
/// DejaVu Sans (see THIRD-PARTY-NOTICES), the same file the study's figure uses.
const FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// Applies the look to `ctx`: fonts, text sizes, spacing and colours. Call once at startup.
pub fn apply(ctx: &egui::Context) {
    ctx.set_fonts(fonts());
    ctx.set_theme(egui::Theme::Dark);
    ctx.style_mut_of(egui::Theme::Dark, style);
}

/// DejaVu Sans first for proportional text; egui's own fonts stay as fallbacks (symbols) and
/// for monospace.
pub fn fonts() -> FontDefinitions {
    let mut fonts = FontDefinitions::default();
    fonts.font_data.insert(
        FONT_NAME.into(),
        std::sync::Arc::new(FontData::from_static(FONT)),
    );
    if let Some(list) = fonts.families.get_mut(&FontFamily::Proportional) {
        list.insert(0, FONT_NAME.into());
    }
    fonts
}

/// Text sizes, spacing and colours on top of egui's dark style.
pub fn style(style: &mut egui::Style) {
    use FontFamily::{Monospace, Proportional};
    style.text_styles = [
        (TextStyle::Heading, FontId::new(16.5, Proportional)),
        (TextStyle::Body, FontId::new(13.0, Proportional)),
        (TextStyle::Button, FontId::new(13.0, Proportional)),
        (TextStyle::Small, FontId::new(11.0, Proportional)),
        (TextStyle::Monospace, FontId::new(12.5, Monospace)),
    ]
    .into();
    let s = &mut style.spacing;
    s.item_spacing = egui::vec2(8.0, 5.0);
    s.button_padding = egui::vec2(8.0, 3.0);
    s.window_margin = egui::Margin::same(12);
    s.interact_size.y = 22.0;
    visuals(&mut style.visuals);
}

fn visuals(v: &mut egui::Visuals) {
    v.dark_mode = true;
    v.weak_text_color = Some(TEXT_WEAK);
    v.panel_fill = PANEL;
    v.window_fill = WINDOW;
    v.extreme_bg_color = GROUND;
    v.faint_bg_color = Color32::from_rgb(36, 41, 37);
    v.code_bg_color = GROUND;
    v.window_stroke = Stroke::new(1.0, EDGE);
    v.hyperlink_color = EXPERT;
    v.warn_fg_color = CAUTION;
    v.error_fg_color = STALE;
    v.selection.bg_fill = Color32::from_rgb(72, 96, 60);
    v.selection.stroke = Stroke::new(1.0, ACCENT);
    let r = egui::CornerRadius::same(3);
    v.window_corner_radius = egui::CornerRadius::same(5);
    let w = &mut v.widgets;
    w.noninteractive.bg_fill = PANEL;
    w.noninteractive.bg_stroke = Stroke::new(1.0, EDGE);
    w.noninteractive.fg_stroke = Stroke::new(1.0, TEXT);
    for (state, fill) in [
        (&mut w.inactive, WIDGET),
        (&mut w.hovered, WIDGET_HOVER),
        (&mut w.active, Color32::from_rgb(74, 84, 74)),
        (&mut w.open, WIDGET),
    ] {
        state.bg_fill = fill;
        state.weak_bg_fill = fill;
        state.corner_radius = r;
    }
    w.inactive.fg_stroke = Stroke::new(1.0, TEXT);
    w.hovered.bg_stroke = Stroke::new(1.0, ACCENT);
    w.active.bg_stroke = Stroke::new(1.0, ACCENT);
}

#[cfg(test)]
mod tests {
    use super::*;

    /// WCAG 2.1 contrast ratio (success criterion 1.4.3 and its "contrast ratio" definition):
    /// relative luminance of linearised sRGB, (L1 + 0.05) / (L2 + 0.05).
    fn contrast(a: Color32, b: Color32) -> f32 {
        let lum = |c: Color32| {
            let lin = |u: u8| {
                let x = f32::from(u) / 255.0;
                if x <= 0.04045 {
                    x / 12.92
                } else {
                    ((x + 0.055) / 1.055).powf(2.4)
                }
            };
            0.2126 * lin(c.r()) + 0.7152 * lin(c.g()) + 0.0722 * lin(c.b())
        };
        let (x, y) = (lum(a), lum(b));
        (x.max(y) + 0.05) / (x.min(y) + 0.05)
    }

    /// Text reads at the WCAG 2.1 AA level (4.5:1 for body text, 3:1 for weak text, which
    /// WCAG treats like large text) on every ground it is drawn on; body text stays below
    /// the 21:1 of pure white on black (our own choice against glare).
    #[test]
    fn text_contrast_meets_wcag_aa_on_every_ground() {
        // Hand check of the formula: white on black is 21:1 (WCAG 2.1's stated maximum).
        assert!((contrast(Color32::WHITE, Color32::BLACK) - 21.0).abs() < 1e-3);
        for ground in [GROUND, PANEL, WINDOW, WIDGET] {
            assert!(contrast(TEXT, ground) >= 4.5, "{ground:?}");
            assert!(contrast(TEXT, ground) < 15.0, "{ground:?}");
            assert!(contrast(TEXT_WEAK, ground) >= 3.0, "{ground:?}");
        }
        for mark in [LEARNER, EXPERT, NOVELTY, FLAG, CORRECTED, CAUTION] {
            assert!(contrast(mark, GROUND) >= 3.0, "{mark:?}");
        }
    }

    #[test]
    fn the_style_takes_the_palette_and_dejavu_sans_leads() {
        let mut s = egui::Style::default();
        style(&mut s);
        assert_eq!(s.visuals.panel_fill, PANEL);
        assert_eq!(s.visuals.widgets.noninteractive.fg_stroke.color, TEXT);
        let f = fonts();
        assert_eq!(f.families[&FontFamily::Proportional][0], FONT_NAME);
    }
}
