//! Drawing data for the selected episode, built once per selection and plot width: the map
//! path split into colour runs, the novelty and action series for the drift strip, and the
//! spans of interventions and excursions. Long series are thinned with LTTB (see
//! [`crate::plotting::decimate`]) unless decimation is switched off.

use egui_plot::PlotPoint;

use crate::campaign::StepTable;
use crate::plotting::lttb_indices;

use super::signals::RoundSignals;

/// Number of colour classes the map path is split into.
pub const PATH_CLASSES: usize = 24;
/// Points kept of the map path when decimating.
pub const PATH_POINTS: usize = 4000;

/// What identifies a built [`EpisodeSeries`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SeriesKey {
    /// Round number.
    pub round: u32,
    /// Episode index.
    pub episode: usize,
    /// Points kept per strip series (0 when not decimating).
    pub strip_points: usize,
    /// Whether the round's scores were used.
    pub scored: bool,
}

/// Drawing data of one episode.
#[derive(Debug, Clone, Default)]
pub struct EpisodeSeries {
    /// What it was built for.
    pub key: Option<SeriesKey>,
    /// Map path as runs of one colour class: (class, points); consecutive runs share an end point.
    pub path_runs: Vec<(u8, Vec<PlotPoint>)>,
    /// Novelty against t (empty when unscored).
    pub novelty: Vec<PlotPoint>,
    /// Learner action against t, per channel.
    pub learner: Vec<Vec<PlotPoint>>,
    /// Neighbours' expert action against t, per channel (empty when unscored).
    pub expert: Vec<Vec<PlotPoint>>,
    /// Runs of intervention steps as (first t, last t).
    pub interventions: Vec<(f64, f64)>,
    /// Excursions as (onset t, end t).
    pub excursions: Vec<(f64, f64)>,
}

/// Inputs of [`EpisodeSeries::build`].
pub struct SeriesInput<'a> {
    /// The round's table.
    pub table: &'a StepTable,
    /// Map coordinates of the round's rows.
    pub points: &'a [[f32; 2]],
    /// The round's scores, if any.
    pub signals: Option<&'a RoundSignals>,
    /// What to build.
    pub key: SeriesKey,
}

fn thin(n: usize, keep: usize, point: impl Fn(usize) -> [f64; 2]) -> Vec<PlotPoint> {
    let idx: Vec<usize> = if keep == 0 {
        (0..n).collect()
    } else {
        lttb_indices(n, keep, &point)
    };
    idx.into_iter().map(|i| PlotPoint::from(point(i))).collect()
}

impl EpisodeSeries {
    /// Builds the drawing data of one episode.
    pub fn build(input: &SeriesInput<'_>) -> EpisodeSeries {
        let SeriesInput {
            table,
            points,
            signals,
            key,
        } = *input;
        let e = &table.episodes[key.episode];
        let rows = e.rows();
        let ts = &table.t[rows.clone()];
        let time = |i: usize| ts[i] as f64;
        let keep = key.strip_points;
        let scored = signals.filter(|s| s.novelty.len() >= rows.end && key.scored);
        let ad = table.action_dim;
        let learner = (0..ad)
            .map(|c| {
                thin(e.len, keep, |i| {
                    [time(i), table.actions[(e.start + i) * ad + c] as f64]
                })
            })
            .collect();
        let (novelty, expert) = match scored {
            Some(s) => (
                thin(e.len, keep, |i| [time(i), s.novelty[e.start + i] as f64]),
                (0..ad)
                    .filter(|_| s.neighbour_action.len() >= rows.end * ad)
                    .map(|c| {
                        thin(e.len, keep, |i| {
                            [time(i), s.neighbour_action[(e.start + i) * ad + c] as f64]
                        })
                    })
                    .collect(),
            ),
            None => (Vec::new(), Vec::new()),
        };
        EpisodeSeries {
            key: Some(key),
            path_runs: path_runs(e.start, e.len, points, scored, keep != 0),
            novelty,
            learner,
            expert,
            interventions: intervention_runs(table, e.start, e.len),
            excursions: scored
                .map(|s| {
                    s.excursions_of(key.episode)
                        .map(|x| (table.t[x.onset] as f64, table.t[x.end] as f64))
                        .collect()
                })
                .unwrap_or_default(),
        }
    }
}

/// The colour value in `0..=1` of each step: novelty relative to twice the flag threshold when
/// scored (so the threshold sits mid-scale), else the step's share of the episode's time.
fn colour_value(
    start: usize,
    len: usize,
    signals: Option<&RoundSignals>,
) -> impl Fn(usize) -> f32 + '_ {
    let scale = signals.map(|s| {
        if s.threshold > 0.0 {
            2.0 * s.threshold
        } else {
            s.novelty[start..start + len]
                .iter()
                .copied()
                .fold(f32::MIN_POSITIVE, f32::max)
        }
    });
    move |i| match (signals, scale) {
        (Some(s), Some(sc)) => (s.novelty[start + i] / sc).clamp(0.0, 1.0),
        _ => i as f32 / (len.max(2) - 1) as f32,
    }
}

fn path_runs(
    start: usize,
    len: usize,
    points: &[[f32; 2]],
    signals: Option<&RoundSignals>,
    decimate: bool,
) -> Vec<(u8, Vec<PlotPoint>)> {
    if points.len() < start + len || len == 0 {
        return Vec::new();
    }
    let p = |i: usize| [points[start + i][0] as f64, points[start + i][1] as f64];
    let idx: Vec<usize> = if decimate {
        lttb_indices(len, PATH_POINTS, p)
    } else {
        (0..len).collect()
    };
    let value = colour_value(start, len, signals);
    let class = |i: usize| ((value(i) * PATH_CLASSES as f32) as usize).min(PATH_CLASSES - 1) as u8;
    let mut runs: Vec<(u8, Vec<PlotPoint>)> = Vec::new();
    for &i in &idx {
        let (c, pt) = (class(i), PlotPoint::from(p(i)));
        match runs.last_mut() {
            Some((rc, pts)) if *rc == c => pts.push(pt),
            Some((_, pts)) => {
                pts.push(pt);
                runs.push((c, vec![pt]));
            }
            None => runs.push((c, vec![pt])),
        }
    }
    runs
}

fn intervention_runs(table: &StepTable, start: usize, len: usize) -> Vec<(f64, f64)> {
    if table.interventions.is_empty() {
        return Vec::new();
    }
    let mut out: Vec<(f64, f64)> = Vec::new();
    let mut open: Option<f64> = None;
    for i in start..start + len {
        let t = table.t[i] as f64;
        match (table.interventions[i], open) {
            (true, None) => open = Some(t),
            (false, Some(a)) => {
                out.push((a, table.t[i - 1] as f64));
                open = None;
            }
            _ => {}
        }
    }
    if let Some(a) = open {
        out.push((a, table.t[start + len - 1] as f64));
    }
    out
}
