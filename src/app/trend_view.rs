//! The trend window: per round, the share of flagged steps and the excursions, interventions
//! and failures per episode, beside the labels spent (`countersteer rounds` as a small plot).
//! A user sees whether aggregation converges. The figures are computed off the UI thread
//! (rounds without saved scores are scored and their scores saved, as `rounds` does).

use std::sync::Arc;

use egui_plot::{Legend, Line, Plot, PlotPoints, Points};

use super::jobs::Job;
use crate::campaign::Campaign;
use crate::progress::Progress;
use crate::trend::{RoundTrend, campaign_trend};

/// The trend window's state: open or not, the figures, the job computing them.
#[derive(Default)]
pub struct TrendView {
    /// Whether the window is open.
    pub open: bool,
    figures: Option<Result<Vec<RoundTrend>, String>>,
    job: Option<Job<Result<Vec<RoundTrend>, String>>>,
    for_campaign: Option<std::path::PathBuf>,
}

impl TrendView {
    /// Opens or closes the window; opening computes the figures again.
    pub fn toggle(&mut self) {
        self.open = !self.open;
        self.figures = None;
        self.for_campaign = None;
    }

    fn poll(&mut self, campaign: Option<&Arc<Campaign>>) {
        let Some(c) = campaign else { return };
        if self.for_campaign.as_deref() != Some(c.root.as_path()) {
            self.for_campaign = Some(c.root.clone());
            self.figures = None;
            let c = Arc::clone(c);
            self.job = Some(Job::spawn(
                "trend",
                "computing the trend",
                move |p: &Progress| campaign_trend(&c, false, p).map_err(|e| e.to_string()),
            ));
        }
        if let Some(job) = &self.job
            && let Some(out) = job.poll()
        {
            self.figures = Some(out.unwrap_or_else(|()| Err("the trend job stopped".into())));
            self.job = None;
        }
    }
}

/// Draws the window when it is open.
pub fn trend_ui(view: &mut TrendView, campaign: Option<&Arc<Campaign>>, ctx: &egui::Context) {
    if !view.open {
        return;
    }
    view.poll(campaign);
    let mut open = true;
    egui::Window::new("Rounds: did aggregation pay off?")
        .open(&mut open)
        .default_width(460.0)
        .show(ctx, |ui| match &view.figures {
            None => {
                ui.label("computing the trend...");
                ctx.request_repaint_after(std::time::Duration::from_millis(100));
            }
            Some(Err(e)) => {
                ui.label(format!("no trend: {e}"));
            }
            Some(Ok(t)) => figures_ui(ui, t),
        });
    if !open {
        view.open = false;
    }
}

fn series(t: &[RoundTrend], f: impl Fn(&RoundTrend) -> Option<f64>) -> Vec<[f64; 2]> {
    t.iter()
        .filter_map(|r| Some([f64::from(r.round), f(r)?]))
        .collect()
}

fn figures_ui(ui: &mut egui::Ui, t: &[RoundTrend]) {
    if t.is_empty() {
        ui.label("the campaign has no rounds yet");
        return;
    }
    let lines: [(&str, Vec<[f64; 2]>); 4] = [
        ("flagged share", series(t, |r| Some(r.flagged_share()))),
        (
            "excursions / episode",
            series(t, |r| Some(r.per_episode(r.excursions))),
        ),
        (
            "interventions / episode",
            series(t, |r| Some(r.per_episode(r.interventions))),
        ),
        (
            "failures / episode",
            series(t, |r| r.failures.map(|f| r.per_episode(f))),
        ),
    ];
    Plot::new("trend")
        .height(200.0)
        .legend(Legend::default())
        .x_axis_label("round")
        .allow_drag(false)
        .allow_zoom(false)
        .allow_scroll(false)
        .show(ui, |p| {
            for (name, pts) in lines.into_iter().filter(|(_, p)| !p.is_empty()) {
                p.line(Line::new(name, PlotPoints::from(pts.clone())));
                p.points(Points::new(name, PlotPoints::from(pts)).radius(3.0));
            }
        });
    egui::Grid::new("trend-table").striped(true).show(ui, |ui| {
        for h in ["round", "episodes", "flagged", "median novelty", "labels"] {
            ui.strong(h);
        }
        ui.end_row();
        for r in t {
            ui.label(r.round.to_string());
            ui.label(r.episodes.to_string());
            ui.label(format!("{:.1}%", 100.0 * r.flagged_share()));
            ui.label(format!(
                "{:.3}",
                r.novelty_quantiles.first().copied().unwrap_or(f32::NAN)
            ));
            ui.label(r.labels.to_string());
            ui.end_row();
        }
    });
}
