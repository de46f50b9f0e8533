//! The novelty model: scales, the index over every demonstration, and the conformal
//! calibration made on held-out demonstration episodes.
//!
//! **Episode folds.** Demonstration episodes (never single steps: neighbouring steps are
//! near-copies, and a held-out step would find its own neighbours in the fit part, making every
//! threshold too small) are ordered by a hash of their name and dealt into
//! `min(`[`CALIBRATION_FOLDS`]`, episodes)` folds. The folds depend only on the episode names,
//! so they are the same on every run and do not change when files are renamed or reordered.
//!
//! **Calibration (cross-conformal).** Every episode calibrates: for each fold, an index over
//! the other folds' episodes scores the fold's steps (up to [`CALIBRATION_CAP`] steps in all,
//! taken at an even stride within each phase), and the novelties of all folds are pooled
//! (cross-conformal prediction, Vovk 2015, "Cross-conformal predictors", Annals of Mathematics
//! and Artificial Intelligence 74; its worst-case level is 2 alpha, Barber, Candès, Ramdas &
//! Tibshirani 2021, "Predictive inference with the jackknife+", and close to alpha in
//! practice). Steps within an episode are strongly correlated, so what sets the spread of the
//! realised flag rate is the number of calibrating *episodes*: a held-out fifth of ten
//! demonstrations left two, and fresh expert start states were flagged far above alpha; with
//! every episode calibrating the rate stays near alpha. A fresh expert episode is exchangeable
//! with each calibrating episode, and a uniformly chosen step of one phase of it (a range of
//! positions from the episode's start, see [`super::phase`]) with a calibration step of the
//! same phase, which is what the per-phase (Mondrian) conformal guarantee needs. The pooled
//! calibration (every phase together) is kept for comparison.
//!
//! **Scoring index.** Rollouts are scored against an index over ALL demonstrations (more
//! neighbours, better action estimates). Adding points to an index can only shrink a k-th
//! neighbour distance, so a state's novelty against the full index is at most its novelty
//! against the fit index, its p-value at least as large, and the flag rate on fresh expert
//! states stays at most alpha (conservative rather than exact).

use super::NoveltyError;
use super::conformal::{Conformal, smallest_alpha};
use super::index::{Hit, KnnIndex};
use super::phase::{PhasedConformal, phase_starts};
use super::query::seeded_knn;
use super::scale::{ScaleOrigin, scales_with_origin};
use crate::campaign::{Campaign, StepTable};
use crate::progress::Progress;

/// Folds of demonstration episodes for the cross-conformal calibration (fewer when there are
/// fewer episodes): each fold is scored against an index over the others.
pub const CALIBRATION_FOLDS: usize = 5;
/// Most calibration steps scored (more only sharpen p-values beyond their 1/(n+1) grain).
pub const CALIBRATION_CAP: usize = 20_000;

/// How demonstration episodes are dealt into calibration folds (see the module documentation).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EpisodeSplit {
    /// Episode indices of each fold, ascending within a fold.
    pub folds: Vec<Vec<usize>>,
    /// Episode indices that calibrate (every episode), ascending.
    pub calibration: Vec<usize>,
}

impl EpisodeSplit {
    /// The split from stored folds (the calibrating episodes are their union).
    pub fn from_folds(folds: Vec<Vec<usize>>) -> Self {
        let mut calibration: Vec<usize> = folds.iter().flatten().copied().collect();
        calibration.sort_unstable();
        EpisodeSplit { folds, calibration }
    }

    /// Episode indices outside fold `f` (the episodes its index is built over), ascending.
    pub fn fit_of(&self, f: usize) -> Vec<usize> {
        let mut fit: Vec<usize> = (0..self.folds.len())
            .filter(|&g| g != f)
            .flat_map(|g| self.folds[g].iter().copied())
            .collect();
        fit.sort_unstable();
        fit
    }
}

/// A built novelty model (see the module documentation for how it is made).
#[derive(Debug)]
pub struct NoveltyModel {
    scale: Vec<f32>,
    origin: Vec<ScaleOrigin>,
    inv_scale: Vec<f32>,
    index: KnnIndex,
    conformal: Conformal,
    phased: PhasedConformal,
    k: usize,
    split: EpisodeSplit,
}

/// FNV-1a, 64 bit (Fowler, Noll & Vo): a fixed, platform-independent hash for the split.
pub fn fnv1a(bytes: &[u8]) -> u64 {
    bytes.iter().fold(0xcbf2_9ce4_8422_2325, |h, &b| {
        (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3)
    })
}

/// Splits the episodes of a demonstration table (see the module documentation).
pub fn split_episodes(demos: &StepTable) -> Result<EpisodeSplit, NoveltyError> {
    let m = demos.episodes.len();
    if m < 2 {
        return Err(NoveltyError::TooFewEpisodes { found: m });
    }
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by_key(|&e| (fnv1a(demos.episodes[e].name.as_bytes()), e));
    let n_folds = CALIBRATION_FOLDS.min(m);
    let mut folds = vec![Vec::new(); n_folds];
    for (i, e) in order.into_iter().enumerate() {
        folds[i % n_folds].push(e);
    }
    for f in &mut folds {
        f.sort_unstable();
    }
    Ok(EpisodeSplit::from_folds(folds))
}

fn rows_of(demos: &StepTable, episodes: &[usize]) -> Vec<u32> {
    episodes
        .iter()
        .flat_map(|&e| demos.episodes[e].rows().map(|r| r as u32))
        .collect()
}

/// Builds the model for a campaign's demonstrations and novelty settings.
pub fn build_model(campaign: &Campaign, progress: &Progress) -> Result<NoveltyModel, NoveltyError> {
    let demos = &campaign.demonstrations;
    let settings = &campaign.file.novelty;
    let scales = scales_with_origin(campaign.spec(), demos);
    let model = build_model_from(
        demos,
        scales.iter().map(|s| s.scale as f32).collect(),
        settings.k,
        settings.alpha,
        progress,
    )?;
    Ok(model.with_origins(scales.iter().map(|s| s.origin).collect()))
}

/// Builds the model from parts: demonstrations, per-feature scales, k and alpha. The scales'
/// origin is recorded as [`ScaleOrigin::Spec`] (given by the caller); see
/// [`NoveltyModel::with_origins`].
pub fn build_model_from(
    demos: &StepTable,
    scale: Vec<f32>,
    k: usize,
    alpha: f64,
    progress: &Progress,
) -> Result<NoveltyModel, NoveltyError> {
    let d = demos.state_dim;
    if scale.len() != d || scale.iter().any(|s| !(s.is_finite() && *s > 0.0)) {
        return Err(NoveltyError::BadScale);
    }
    let split = split_episodes(demos)?;
    let starts = calibration_phases(demos, &split, alpha);
    let cal_rows = calibration_rows(demos, &split.calibration, &starts);
    check_phases(alpha, &phase_counts(demos, &cal_rows, &starts))?;
    let smallest_fit = (0..split.folds.len())
        .map(|f| rows_of(demos, &split.fit_of(f)).len())
        .min()
        .unwrap_or(0);
    if k == 0 || smallest_fit < k {
        return Err(NoveltyError::TooFewStates {
            k,
            states: smallest_fit,
        });
    }
    let inv_scale: Vec<f32> = scale.iter().map(|s| 1.0 / s).collect();
    let at = cross_calibrate(demos, &split, &cal_rows, &inv_scale, k, progress)?;
    let novelties: Vec<f32> = at.iter().map(|&(_, n)| n).collect();
    let phased = PhasedConformal::new(&at, starts, alpha);
    let all: Vec<u32> = (0..demos.len() as u32).collect();
    progress.stage("indexing", 1);
    let index = KnnIndex::build(&demos.states, d, &inv_scale, &all).map_err(NoveltyError::Index)?;
    progress.advance(1);
    Ok(NoveltyModel {
        origin: vec![ScaleOrigin::Spec; scale.len()],
        scale,
        inv_scale,
        index,
        conformal: Conformal::new(novelties, alpha),
        phased,
        k,
        split,
    })
}

/// Each fold's calibration rows scored against an index over the other folds: (position in
/// the episode, novelty) for every row of `cal_rows`, fold by fold.
fn cross_calibrate(
    demos: &StepTable,
    split: &EpisodeSplit,
    cal_rows: &[usize],
    inv_scale: &[f32],
    k: usize,
    progress: &Progress,
) -> Result<Vec<(usize, f32)>, NoveltyError> {
    let mut fold_of = vec![0usize; demos.episodes.len()];
    for (f, fold) in split.folds.iter().enumerate() {
        for &e in fold {
            fold_of[e] = f;
        }
    }
    let mut at = Vec::with_capacity(cal_rows.len());
    for f in 0..split.folds.len() {
        let rows: Vec<usize> = cal_rows
            .iter()
            .copied()
            .filter(|&r| fold_of[demos.episode_of(r)] == f)
            .collect();
        if rows.is_empty() {
            continue;
        }
        progress.stage("indexing", 1);
        let fit_rows = rows_of(demos, &split.fit_of(f));
        let fit = KnnIndex::build(&demos.states, demos.state_dim, inv_scale, &fit_rows)
            .map_err(NoveltyError::Index)?;
        progress.advance(1);
        let hits = seeded_knn(&fit, inv_scale, demos, &rows, k, "calibrating", progress)?;
        at.extend(
            rows.iter()
                .map(|&r| demos.position(r))
                .zip(hits.chunks_exact(k).map(kth_distance)),
        );
    }
    Ok(at)
}

/// The calibration phases' starts for a split and alpha (see [`super::phase`]).
fn calibration_phases(demos: &StepTable, split: &EpisodeSplit, alpha: f64) -> Vec<usize> {
    let lengths: Vec<usize> = split
        .calibration
        .iter()
        .map(|&e| demos.episodes[e].len)
        .collect();
    phase_starts(&lengths, alpha)
}

/// Calibration rows in each phase.
fn phase_counts(demos: &StepTable, rows: &[usize], starts: &[usize]) -> Vec<usize> {
    let mut n = vec![0; starts.len()];
    for &r in rows {
        let pos = demos.position(r);
        n[starts.partition_point(|&s| s <= pos).saturating_sub(1)] += 1;
    }
    n
}

/// How many calibration states each calibration phase gets at `alpha` (see the module
/// documentation): each phase is calibrated on its own, so the smallest reachable alpha is the
/// smallest phase's.
pub fn calibration_counts(demos: &StepTable, alpha: f64) -> Result<Vec<usize>, NoveltyError> {
    let split = split_episodes(demos)?;
    let starts = calibration_phases(demos, &split, alpha);
    let rows = calibration_rows(demos, &split.calibration, &starts);
    Ok(phase_counts(demos, &rows, &starts))
}

/// The calibration states of the smallest calibration phase at `alpha` (what
/// [`check_alpha`] needs; see [`calibration_counts`]).
pub fn calibration_count(demos: &StepTable, alpha: f64) -> Result<usize, NoveltyError> {
    Ok(calibration_counts(demos, alpha)?
        .into_iter()
        .min()
        .unwrap_or(0))
}

/// [`check_alpha`] for every phase's calibration count: the smallest phase decides.
pub fn check_phases(alpha: f64, counts: &[usize]) -> Result<(), NoveltyError> {
    check_alpha(alpha, counts.iter().copied().min().unwrap_or(0))
}

/// Refuses an `alpha` below what `n` calibration states can resolve
/// ([`smallest_alpha`]), naming the smallest reachable alpha.
pub fn check_alpha(alpha: f64, n: usize) -> Result<(), NoveltyError> {
    let floor = smallest_alpha(n);
    if alpha >= floor {
        return Ok(());
    }
    // Rounded up at the fourth significant digit, so that the value shown is reachable.
    let decimals = (3 - floor.log10().floor() as i32).max(0) as usize;
    let up = (floor * 10f64.powi(decimals as i32)).ceil() / 10f64.powi(decimals as i32);
    Err(NoveltyError::AlphaBelowFloor {
        alpha,
        n,
        smallest: format!("{up:.decimals$}"),
    })
}

/// True when every demonstration state is the same (no spread at all): every calibration
/// novelty is then 0, and any state that differs at all is flagged.
pub fn without_spread(demos: &StepTable) -> bool {
    let d = demos.state_dim.max(1);
    let mut rows = demos.states.chunks_exact(d);
    let first = rows.next();
    first.is_some_and(|f| rows.all(|r| r == f))
}

/// Fewest demonstration episodes for which the flag rate is dependable: below it, what
/// share of fresh expert steps is flagged depends much on which episodes were recorded.
/// Measured on a mountain car task at alpha 0.05 (`bench/tasks`, `fresh.py`): fresh expert
/// steps flagged 0.36 with 5 demonstration episodes, 0.017 with 10, 0.035 with 20.
pub const FEW_EPISODES: usize = 10;

/// A warning when fewer than [`FEW_EPISODES`] demonstration episodes calibrate.
pub fn few_episodes_warning(episodes: usize) -> Option<String> {
    (episodes < FEW_EPISODES).then(|| {
        format!(
            "only {episodes} demonstration episode(s) calibrate the flags: with fewer than \
             {FEW_EPISODES} the share of expert-like steps flagged can be far from alpha (on a \
             test task, 0.36 at alpha 0.05 with 5 episodes); record more demonstration episodes"
        )
    })
}

/// Distance (not squared) of the last hit of a sorted k-neighbour list.
pub fn kth_distance(hits: &[Hit]) -> f32 {
    hits.last().map_or(f32::INFINITY, |h| h.1.max(0.0).sqrt())
}

/// The calibration episodes' rows, phase by phase, each phase thinned at an even stride to at
/// most its share of [`CALIBRATION_CAP`] (early phases are short and kept whole).
fn calibration_rows(demos: &StepTable, episodes: &[usize], starts: &[usize]) -> Vec<usize> {
    let cap = (CALIBRATION_CAP / starts.len().max(1)).max(1);
    let mut out = Vec::new();
    for (i, &a) in starts.iter().enumerate() {
        let b = starts.get(i + 1).copied().unwrap_or(usize::MAX);
        let rows: Vec<usize> = episodes
            .iter()
            .flat_map(|&e| {
                let ep = &demos.episodes[e];
                let end = ep.len.min(b);
                (ep.start + a.min(end))..(ep.start + end)
            })
            .collect();
        let stride = rows.len().div_ceil(cap).max(1);
        out.extend(rows.into_iter().step_by(stride));
    }
    out.sort_unstable();
    out
}

impl NoveltyModel {
    /// A model from its saved parts (the pooled and the per-phase calibration) and an index rebuilt over every demonstration row (see
    /// [`super::saved`]): the same model [`build_model_from`] made, without calibrating again.
    pub fn from_parts(
        demos: &StepTable,
        scale: Vec<f32>,
        (conformal, phased): (Conformal, PhasedConformal),
        k: usize,
        split: EpisodeSplit,
    ) -> Result<Self, NoveltyError> {
        if scale.len() != demos.state_dim || scale.iter().any(|s| !(s.is_finite() && *s > 0.0)) {
            return Err(NoveltyError::BadScale);
        }
        let inv_scale: Vec<f32> = scale.iter().map(|s| 1.0 / s).collect();
        let all: Vec<u32> = (0..demos.len() as u32).collect();
        let index = KnnIndex::build(&demos.states, demos.state_dim, &inv_scale, &all)
            .map_err(NoveltyError::Index)?;
        Ok(NoveltyModel {
            origin: vec![ScaleOrigin::Spec; scale.len()],
            scale,
            inv_scale,
            index,
            conformal,
            phased,
            k,
            split,
        })
    }

    /// Per-feature scales (novelty divides each feature by its scale).
    pub fn scale(&self) -> &[f32] {
        &self.scale
    }

    /// Where each feature's scale came from.
    pub fn scale_origin(&self) -> &[ScaleOrigin] {
        &self.origin
    }

    /// The model with the scales' origins replaced (one per feature; ignored otherwise).
    pub fn with_origins(mut self, origin: Vec<ScaleOrigin>) -> Self {
        if origin.len() == self.scale.len() {
            self.origin = origin;
        }
        self
    }

    /// Reciprocals of the scales.
    pub fn inv_scale(&self) -> &[f32] {
        &self.inv_scale
    }

    /// Novelty above which a step of the last phase (the bulk of an episode) is flagged.
    pub fn threshold(&self) -> f32 {
        self.phased
            .parts()
            .last()
            .map_or(f32::INFINITY, Conformal::threshold)
    }

    /// The per-phase conformal p-value of a novelty score at a position in its episode
    /// (0 for the episode's first step).
    pub fn p_value(&self, score: f32, position: usize) -> f64 {
        self.phased.p_value(score, position)
    }

    /// The per-phase calibration.
    pub fn phased(&self) -> &PhasedConformal {
        &self.phased
    }

    /// The flag level.
    pub fn alpha(&self) -> f64 {
        self.conformal.alpha()
    }

    /// Which neighbour's distance is the novelty.
    pub fn k(&self) -> usize {
        self.k
    }

    /// The pooled calibration (every phase together).
    pub fn conformal(&self) -> &Conformal {
        &self.conformal
    }

    /// The episode split used for calibration.
    pub fn split(&self) -> &EpisodeSplit {
        &self.split
    }

    /// Warnings about the calibration, in words: the held-out demonstration states all lie
    /// at novelty 0 (the demonstrations repeat one state), so the threshold is 0 and every
    /// state that differs at all is flagged.
    pub fn warnings(&self) -> Vec<String> {
        let top = self.conformal.scores().last();
        if top.is_some_and(|&s| s <= 0.0) {
            return vec![format!(
                "every held-out demonstration state has {} exact copies among the others \
                 (the demonstrations show no spread): the flag threshold is 0 and every state \
                 that differs at all is flagged",
                self.k
            )];
        }
        few_episodes_warning(self.split.calibration.len())
            .into_iter()
            .collect()
    }

    /// The index over all demonstrations.
    pub fn index(&self) -> &KnnIndex {
        &self.index
    }

    /// Scales a raw state into `out`.
    pub fn scale_into(&self, state: &[f32], out: &mut Vec<f32>) {
        out.clear();
        out.extend(state.iter().zip(&self.inv_scale).map(|(x, i)| x * i));
    }

    /// The `k` nearest demonstration states to a raw (unscaled) state: demonstration rows
    /// and scaled distances (not squared), nearest first.
    pub fn nearest(&self, state: &[f32], k: usize) -> Vec<(usize, f32)> {
        let mut q = Vec::new();
        self.scale_into(state, &mut q);
        let mut hits = Vec::new();
        self.index.knn(&q, k, f32::INFINITY, &mut hits);
        hits.iter()
            .map(|&(r, d2)| (r as usize, d2.max(0.0).sqrt()))
            .collect()
    }

    /// Novelty of a raw state: the distance to its k-th nearest demonstration state.
    pub fn novelty(&self, state: &[f32]) -> f32 {
        self.nearest(state, self.k)
            .last()
            .map_or(f32::INFINITY, |h| h.1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_smallest_calibration_phase_decides_the_alpha_floor() {
        // 605 scores pooled would resolve alpha 0.01 (1/606), but a phase of 5 scores resolves
        // only 1/6 = 0.16667 (by hand), shown rounded up at the fourth digit as 0.1667.
        assert!(check_alpha(0.01, 605).is_ok());
        match check_phases(0.01, &[5, 600]) {
            Err(NoveltyError::AlphaBelowFloor { n, smallest, .. }) => {
                assert_eq!((n, smallest.as_str()), (5, "0.1667"));
            }
            other => panic!("{other:?}"),
        }
        assert!(check_phases(0.2, &[5, 600]).is_ok());
    }
}
