//! Summaries of loaded data: counts and per-feature ranges, as `check` prints them.

use super::{Campaign, StepTable};

/// Range and mean of one column.
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnRange {
    /// Column name.
    pub name: String,
    /// Unit.
    pub unit: String,
    /// Smallest value.
    pub min: f32,
    /// Largest value.
    pub max: f32,
    /// Mean value.
    pub mean: f64,
}

/// Counts and ranges of one step table.
#[derive(Debug, Clone, PartialEq)]
pub struct TableSummary {
    /// What the table is ("demonstrations", "round 1").
    pub label: String,
    /// Number of episodes.
    pub episodes: usize,
    /// Number of steps.
    pub steps: usize,
    /// Steps with the intervention flag set.
    pub interventions: usize,
    /// Steps with a frame image.
    pub frames: usize,
    /// Steps with ensemble samples.
    pub with_samples: usize,
    /// Per-feature ranges.
    pub features: Vec<ColumnRange>,
}

fn ranges(
    values: &[f32],
    dim: usize,
    names: impl Iterator<Item = (String, String)>,
) -> Vec<ColumnRange> {
    let mut out: Vec<ColumnRange> = names
        .map(|(name, unit)| ColumnRange {
            name,
            unit,
            min: f32::INFINITY,
            max: f32::NEG_INFINITY,
            mean: 0.0,
        })
        .collect();
    let n = values.len() / dim.max(1);
    for row in values.chunks_exact(dim.max(1)) {
        for (c, &v) in out.iter_mut().zip(row) {
            c.min = c.min.min(v);
            c.max = c.max.max(v);
            c.mean += f64::from(v);
        }
    }
    for c in &mut out {
        c.mean /= n.max(1) as f64;
    }
    out
}

/// Summarises one table under the campaign's spec.
pub fn summarize(label: &str, c: &Campaign, t: &StepTable) -> TableSummary {
    let names = c
        .spec()
        .features
        .iter()
        .map(|f| (f.name.clone(), f.unit.clone()));
    TableSummary {
        label: label.to_string(),
        episodes: t.episodes.len(),
        steps: t.len(),
        interventions: t.interventions.iter().filter(|&&b| b).count(),
        frames: t.frames.len(),
        with_samples: (0..t.len()).filter(|&r| t.samples(r).is_some()).count(),
        features: ranges(&t.states, t.state_dim, names),
    }
}

/// Summaries of the demonstrations and every round.
pub fn summarize_campaign(c: &Campaign) -> Vec<TableSummary> {
    let mut out = vec![summarize("demonstrations", c, &c.demonstrations)];
    for r in &c.rounds {
        out.push(summarize(&format!("round {}", r.number), c, &r.steps));
    }
    out
}
