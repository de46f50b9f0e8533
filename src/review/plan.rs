//! The review list: which steps the expert should see, under a budget.
//!
//! **Candidates.** A step becomes a candidate for one or more [`Reason`]s: it is an excursion
//! onset (the first step out of expert territory, where a correction can still recover), an
//! excursion peak, one of the `pre_intervention` steps before the expert took over (the
//! learner's last decisions), or its action gap is at least `action_gap_min` (at most
//! `pool_factor * budget` of those, largest first). Every other flagged step inside an
//! excursion is a *filler* candidate (unless `fill` is off): it is only chosen once the
//! candidates above are spent (see Diversity), so a budget larger than the excursions' onsets
//! and peaks is spent on the excursions' least covered steps instead of being left unused.
//!
//! **Priority.** `priority = sum of the reasons' weights + 0.25 * min(novelty / threshold, 4) / 4`,
//! with weights onset 1.0, before intervention 0.7, peak 0.4, action gap 0.3, before a failure
//! 0.2 (at most a quarter of the budget, see [`super::failure`]), inside an excursion 0.1: an onset outranks
//! any single other reason however novel, then come the moments before a takeover, and among
//! equals the more novel step.
//!
//! **Diversity.** The `pool_factor * budget` highest-priority candidates enter a greedy
//! k-center selection in scaled state space ([`super::kcenter`]) seeded with the states that
//! already have corrections. With no correction the first pick is the top-priority candidate;
//! each later pick is the candidate farthest from every correction and earlier pick, fillers
//! only once no other candidate is left (then they are picked by the same rule). A pick
//! removes every candidate of the same episode less than `min_gap` steps away. Selection stops
//! at the budget, when no candidate is left, or when the farthest candidate is no more than
//! `min_distance` from a correction or pick. The chosen entries are listed by priority
//! (highest first); each keeps its pick order in [`ReviewEntry::pick`], and the first picks
//! of that order are themselves a diverse selection.
//!
//! **Sampled part.** The focused part above gets the budget less `sample_share` of it; the
//! rest, and whatever the focused part cannot spend, is drawn uniformly from the round's other
//! visited steps (those not picked and not yet judged) by systematic sampling in episode and
//! time order ([`super::sampling`]), so the labels also cover where the learner actually goes
//! and the list has `budget` entries whenever the round has that many steps left. Each entry
//! keeps its inclusion probability ([`ReviewEntry::inclusion`]: 1 for a focused pick); a
//! trainer weighting a label by its inverse keeps its loss an unbiased estimate over the
//! visited steps (importance-weighted active learning, Beygelzimer, Dasgupta & Langford 2009).
//! [`ReviewList::notes`] says when the focused part or the whole list came out short, and why.
//!
//! **Re-planning.** [`Planner::new`] does the work that depends on the scores only (`O(n)` in
//! the round's steps plus sorting the candidates). [`Planner::plan`] then costs
//! `O((corrections + budget) * pool * dim)`: a few milliseconds for a 500-step budget, cheap
//! enough to run after every correction.

use std::collections::BTreeMap;

use super::excursions::{ExcursionSettings, excursions};
use super::failure::failure_candidates;
use super::kcenter::Cover;
use crate::campaign::StepTable;
use crate::novelty::RoundScores;

/// Why a step is on the review list.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Reason {
    /// First step of an excursion.
    ExcursionOnset,
    /// Most novel step of an excursion.
    ExcursionPeak,
    /// One of the steps just before the expert took over.
    BeforeIntervention,
    /// The learner's action differs much from the experts' nearby.
    ActionGap,
    /// A flagged step inside an excursion (a filler: chosen only when the others are spent).
    InsideExcursion,
    /// One of the steps before an episode ended in a failure (see [`super::failure`]).
    BeforeFailure,
    /// Drawn uniformly from the visited steps (the sampled part of the list).
    Sampled,
}

impl Reason {
    /// The reason's weight in the priority.
    pub fn weight(self) -> f32 {
        match self {
            Reason::ExcursionOnset => 1.0,
            Reason::BeforeIntervention => 0.7,
            Reason::ExcursionPeak => 0.4,
            Reason::ActionGap => 0.3,
            Reason::InsideExcursion => 0.1,
            Reason::BeforeFailure => 0.2,
            Reason::Sampled => 0.0,
        }
    }

    /// Short name used in files and printouts.
    pub fn as_str(self) -> &'static str {
        match self {
            Reason::ExcursionOnset => "onset",
            Reason::ExcursionPeak => "peak",
            Reason::BeforeIntervention => "before-intervention",
            Reason::ActionGap => "action-gap",
            Reason::InsideExcursion => "inside-excursion",
            Reason::BeforeFailure => "before-failure",
            Reason::Sampled => "sampled",
        }
    }

    /// Every reason, in order.
    pub const ALL: [Reason; 7] = [
        Reason::ExcursionOnset,
        Reason::ExcursionPeak,
        Reason::BeforeIntervention,
        Reason::ActionGap,
        Reason::InsideExcursion,
        Reason::BeforeFailure,
        Reason::Sampled,
    ];

    /// The reason with a short name ([`Reason::as_str`]).
    pub fn named(name: &str) -> Option<Reason> {
        Reason::ALL.into_iter().find(|r| r.as_str() == name)
    }
}

/// The share of the budget drawn from the visited steps unless one is given (see the module
/// documentation, "Sampled part").
pub const DEFAULT_SAMPLE_SHARE: f32 = 0.0;

/// How a list came out, when it is not simply the budget's worth of focused picks.
#[derive(Debug, Clone, PartialEq)]
pub enum PlanNote {
    /// The focused part chose `planned` of its `share` entries. With `drawn`, no candidate
    /// was left and the rest was drawn from the visited steps; without, the rest is left
    /// unspent (filling is off, or every candidate left is within `min_distance` of a
    /// correction or pick).
    FocusedShort {
        /// Focused entries chosen.
        planned: usize,
        /// The focused part's share of the budget.
        share: usize,
        /// Whether the rest was drawn from the visited steps.
        drawn: bool,
    },
    /// The list has `planned` of `budget` entries: the round has no other step that is not
    /// yet judged or on the list.
    RoundShort {
        /// Entries on the list.
        planned: usize,
        /// Entries asked for.
        budget: usize,
    },
}

impl std::fmt::Display for PlanNote {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            PlanNote::FocusedShort {
                planned,
                share,
                drawn: true,
            } => write!(
                f,
                "{planned} of the focused part's {share} entries found (no other candidate \
                 left); the rest drawn uniformly from the visited steps"
            ),
            PlanNote::FocusedShort {
                planned,
                share,
                drawn: false,
            } => write!(
                f,
                "{planned} of the focused part's {share} entries chosen; the rest left unspent \
                 (filling is off, or every candidate left is near a correction or pick)"
            ),
            PlanNote::RoundShort { planned, budget } => write!(
                f,
                "{planned} of {budget} entries: the round has no other step not yet judged"
            ),
        }
    }
}

/// The budget of a review list unless one is given: the one default of the command line,
/// the window and the library.
pub const DEFAULT_BUDGET: usize = 50;

/// How the review list is made.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanSettings {
    /// Most entries.
    pub budget: usize,
    /// Fewest steps between two entries of one episode.
    pub min_gap: usize,
    /// Steps before an intervention that are candidates.
    pub pre_intervention: usize,
    /// Action gap (range units) from which a step is a candidate.
    pub action_gap_min: f32,
    /// Candidates entering the diversity selection, as a multiple of the budget.
    pub pool_factor: usize,
    /// Stop when the farthest candidate is within this scaled distance of a correction or pick.
    pub min_distance: f32,
    /// Spend what the other candidates leave of the budget on filler candidates (flagged steps
    /// inside excursions).
    pub fill: bool,
    /// How excursions are found.
    pub excursion: ExcursionSettings,
    /// Outcomes (indices into the spec's outcome list) that are failures; empty: none.
    pub failures: Vec<u32>,
    /// Steps before a failed episode's end that are candidates (see [`super::failure`]); 0
    /// (the default) leaves them out: on the orchard study a window of 20 cost departures.
    pub before_failure: usize,
    /// Share of the budget drawn uniformly from the visited steps (0..=1; see the module
    /// documentation, "Sampled part").
    pub sample_share: f32,
    /// Seed of the sampled part's draw: the same inputs give the same list.
    pub seed: u64,
}

impl Default for PlanSettings {
    fn default() -> Self {
        PlanSettings {
            budget: DEFAULT_BUDGET,
            min_gap: 10,
            pre_intervention: 10,
            action_gap_min: 0.25,
            pool_factor: 8,
            min_distance: 0.0,
            fill: true,
            excursion: ExcursionSettings::default(),
            failures: Vec::new(),
            before_failure: 0,
            sample_share: DEFAULT_SAMPLE_SHARE,
            seed: 0,
        }
    }
}

/// One step on the review list.
#[derive(Debug, Clone, PartialEq)]
pub struct ReviewEntry {
    /// When the diversity selection picked it (0 first).
    pub pick: usize,
    /// Row of the round's step table.
    pub row: usize,
    /// Episode index.
    pub episode: usize,
    /// Time index.
    pub t: i64,
    /// Why it is on the list (sorted).
    pub reasons: Vec<Reason>,
    /// Priority (see the module documentation).
    pub priority: f32,
    /// Novelty.
    pub novelty: f32,
    /// Conformal p-value.
    pub p_value: f32,
    /// Action gap.
    pub action_gap: f32,
    /// Scaled distance to the nearest correction or earlier entry when it was picked
    /// (infinite for a first pick with no correction; NaN for a sampled entry).
    pub distance: f32,
    /// Probability that the step was on the list: 1 for a focused pick, the draw's
    /// probability for a sampled one (its inverse is the label's weight).
    pub inclusion: f64,
}

/// The review list.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ReviewList {
    /// Entries by priority, highest first (ties by row).
    pub entries: Vec<ReviewEntry>,
    /// Largest distance from a remaining pool candidate to its nearest correction or entry.
    pub covering_radius: f32,
    /// Candidates found before pooling.
    pub candidates: usize,
    /// Candidates in the diversity pool.
    pub pool: usize,
    /// Why the list or its focused part came out short (empty when neither did).
    pub notes: Vec<PlanNote>,
}

#[derive(Debug, Clone)]
struct Candidate {
    row: usize,
    reasons: Vec<Reason>,
    priority: f32,
}

impl Candidate {
    /// A filler: only inside an excursion, for no other reason.
    fn is_filler(&self) -> bool {
        self.reasons == [Reason::InsideExcursion]
    }
}

/// The scores-only part of planning, kept to re-plan cheaply as corrections arrive.
#[derive(Debug, Clone)]
pub struct Planner {
    pool: Vec<Candidate>,
    points: Vec<f32>,
    dim: usize,
    inv_scale: Vec<f32>,
    candidates: usize,
    settings: PlanSettings,
}

fn priority(reasons: &[Reason], novelty: f32, threshold: f32) -> f32 {
    let ratio = if threshold.is_finite() && threshold > 0.0 {
        0.25 * (novelty / threshold).clamp(0.0, 4.0) / 4.0
    } else {
        0.0
    };
    reasons.iter().map(|r| r.weight()).sum::<f32>() + ratio
}

fn candidate_reasons(
    steps: &StepTable,
    scores: &RoundScores,
    s: &PlanSettings,
) -> BTreeMap<usize, Vec<Reason>> {
    let mut m: BTreeMap<usize, Vec<Reason>> = BTreeMap::new();
    let alpha = s.excursion.alpha.unwrap_or(scores.alpha) as f32;
    for x in excursions(steps, scores, &s.excursion) {
        m.entry(x.onset).or_default().push(Reason::ExcursionOnset);
        m.entry(x.peak).or_default().push(Reason::ExcursionPeak);
        for r in (x.onset + 1..x.end + 1).filter(|&r| r != x.peak) {
            if scores.p_value[r] <= alpha {
                m.entry(r).or_default().push(Reason::InsideExcursion);
            }
        }
    }
    if !steps.interventions.is_empty() {
        for ep in &steps.episodes {
            for row in ep.rows().filter(|&r| r > ep.start) {
                if steps.intervention(row) && !steps.intervention(row - 1) {
                    for r in row.saturating_sub(s.pre_intervention).max(ep.start)..row {
                        m.entry(r).or_default().push(Reason::BeforeIntervention);
                    }
                }
            }
        }
    }
    let mut gaps: Vec<usize> = (0..scores.len())
        .filter(|&r| scores.action_gap[r] >= s.action_gap_min)
        .collect();
    let cap = s.pool_factor.max(1) * s.budget.max(1);
    if gaps.len() > cap {
        gaps.select_nth_unstable_by(cap, |&a, &b| {
            scores.action_gap[b].total_cmp(&scores.action_gap[a])
        });
        gaps.truncate(cap);
    }
    for r in gaps {
        m.entry(r).or_default().push(Reason::ActionGap);
    }
    let failed = failure_candidates(steps, &s.failures, s.before_failure, s.budget);
    for r in failed {
        m.entry(r).or_default().push(Reason::BeforeFailure);
    }
    m
}

impl Planner {
    /// Finds and ranks the candidates of a scored round (the expensive, scores-only part).
    pub fn new(steps: &StepTable, scores: &RoundScores, settings: &PlanSettings) -> Self {
        let mut pool: Vec<Candidate> = candidate_reasons(steps, scores, settings)
            .into_iter()
            .map(|(row, mut reasons)| {
                reasons.sort_unstable();
                reasons.dedup();
                if reasons.len() > 1 {
                    reasons.retain(|&r| r != Reason::InsideExcursion);
                }
                let priority = priority(&reasons, scores.novelty[row], scores.threshold);
                Candidate {
                    row,
                    reasons,
                    priority,
                }
            })
            .collect();
        let candidates = pool.len();
        pool.sort_by(|a, b| b.priority.total_cmp(&a.priority).then(a.row.cmp(&b.row)));
        pool.truncate(settings.pool_factor.max(1) * settings.budget);
        let inv_scale: Vec<f32> = scores.scale.iter().map(|s| 1.0 / s).collect();
        let dim = steps.state_dim;
        let mut points = Vec::with_capacity(pool.len() * dim);
        for c in &pool {
            points.extend(
                steps
                    .state(c.row)
                    .iter()
                    .zip(&inv_scale)
                    .map(|(x, i)| x * i),
            );
        }
        Planner {
            pool,
            points,
            dim,
            inv_scale,
            candidates,
            settings: settings.clone(),
        }
    }

    /// Chooses the list given the raw (unscaled, row-major) states that already have
    /// corrections.
    pub fn plan(
        &self,
        steps: &StepTable,
        scores: &RoundScores,
        corrected_states: &[f32],
    ) -> ReviewList {
        self.plan_up_to(steps, scores, corrected_states, self.settings.budget)
    }

    /// Like [`Planner::plan`], but chooses at most `limit` entries (the part of the budget
    /// not used yet) from the pool made for the full budget.
    pub fn plan_up_to(
        &self,
        steps: &StepTable,
        scores: &RoundScores,
        corrected_states: &[f32],
        limit: usize,
    ) -> ReviewList {
        self.choose(steps, scores, corrected_states, &[], limit)
    }

    /// Like [`Planner::plan_up_to`] with the judged rows themselves: their states seed the
    /// diversity selection and the sampled part never draws them again.
    pub fn plan_judged(
        &self,
        steps: &StepTable,
        scores: &RoundScores,
        judged: &[usize],
        limit: usize,
    ) -> ReviewList {
        self.choose(steps, scores, &states_of_rows(steps, judged), judged, limit)
    }

    fn choose(
        &self,
        steps: &StepTable,
        scores: &RoundScores,
        corrected_states: &[f32],
        judged: &[usize],
        limit: usize,
    ) -> ReviewList {
        let sampled = ((self.settings.sample_share.clamp(0.0, 1.0) * limit as f32).floor()
            as usize)
            .min(limit);
        let focused = limit - sampled;
        let mut cover = Cover::new(&self.points, self.dim);
        let mut scaled = vec![0.0f32; self.dim];
        for c in corrected_states.chunks_exact(self.dim.max(1)) {
            for ((o, x), i) in scaled.iter_mut().zip(c).zip(&self.inv_scale) {
                *o = x * i;
            }
            cover.add_center(&scaled);
        }
        let mut entries = Vec::new();
        let mut fillers = false;
        // The focused part stops early because the ground is covered (`min_distance`) or the
        // list is not to be filled (`fill` off): then its shortfall is left unspent.
        let mut keep_short = !self.settings.fill;
        while entries.len() < focused {
            let next = cover.farthest_among(|i| fillers || !self.pool[i].is_filler());
            let distance = next.map_or(0.0, |i| cover.distance(i));
            let Some(i) = next.filter(|_| distance > self.settings.min_distance) else {
                if fillers || !self.settings.fill {
                    keep_short |= next.is_some();
                    break;
                }
                fillers = true;
                continue;
            };
            cover.pick(i);
            self.drop_near(&mut cover, steps, i);
            entries.push(self.entry(steps, scores, i, distance, entries.len()));
        }
        let mut notes = Vec::new();
        if entries.len() < focused {
            notes.push(PlanNote::FocusedShort {
                planned: entries.len(),
                share: focused,
                drawn: !keep_short,
            });
        }
        let covering_radius = cover.radius();
        let target = if keep_short {
            entries.len() + sampled
        } else {
            limit
        };
        self.draw(steps, scores, judged, target, &mut entries);
        if entries.len() < target {
            notes.push(PlanNote::RoundShort {
                planned: entries.len(),
                budget: target,
            });
        }
        entries.sort_by(|a, b| b.priority.total_cmp(&a.priority).then(a.row.cmp(&b.row)));
        ReviewList {
            entries,
            covering_radius,
            candidates: self.candidates,
            pool: self.pool.len(),
            notes,
        }
    }

    /// The sampled part: fills `entries` up to `limit` with a uniform systematic draw over
    /// the rows neither on the list nor judged.
    fn draw(
        &self,
        steps: &StepTable,
        scores: &RoundScores,
        judged: &[usize],
        limit: usize,
        entries: &mut Vec<ReviewEntry>,
    ) {
        let want = limit.saturating_sub(entries.len());
        let n = steps.t.len().min(scores.len());
        if want == 0 || n == 0 {
            return;
        }
        let mut taken = vec![false; n];
        for &r in judged.iter().chain(entries.iter().map(|e| &e.row)) {
            if let Some(x) = taken.get_mut(r) {
                *x = true;
            }
        }
        let size: Vec<f64> = taken.iter().map(|&t| if t { 0.0 } else { 1.0 }).collect();
        let (rows, pi) = super::sampling::draw(&size, want, self.settings.seed);
        for row in rows {
            let reasons = vec![Reason::Sampled];
            let priority = priority(&reasons, scores.novelty[row], scores.threshold);
            entries.push(ReviewEntry {
                pick: entries.len(),
                row,
                episode: steps.episode_of(row),
                t: steps.t[row],
                reasons,
                priority,
                novelty: scores.novelty[row],
                p_value: scores.p_value[row],
                action_gap: scores.action_gap[row],
                distance: f32::NAN,
                inclusion: pi[row],
            });
        }
    }

    /// Why a row is a candidate (empty when it is none, or did not make the pool).
    pub fn reasons_of(&self, row: usize) -> &[Reason] {
        self.pool
            .iter()
            .find(|c| c.row == row)
            .map_or(&[], |c| c.reasons.as_slice())
    }

    /// The settings the planner was made with.
    pub fn settings(&self) -> &PlanSettings {
        &self.settings
    }

    fn drop_near(&self, cover: &mut Cover<'_>, steps: &StepTable, i: usize) {
        let row = self.pool[i].row;
        let (e, t) = (steps.episode_of(row), steps.t[row]);
        for (j, c) in self.pool.iter().enumerate() {
            if cover.is_alive(j)
                && steps.episode_of(c.row) == e
                && (steps.t[c.row] - t).unsigned_abs() < self.settings.min_gap as u64
            {
                cover.drop_candidate(j);
            }
        }
    }

    fn entry(
        &self,
        steps: &StepTable,
        scores: &RoundScores,
        i: usize,
        distance: f32,
        pick: usize,
    ) -> ReviewEntry {
        let c = &self.pool[i];
        ReviewEntry {
            pick,
            row: c.row,
            episode: steps.episode_of(c.row),
            t: steps.t[c.row],
            reasons: c.reasons.clone(),
            priority: c.priority,
            novelty: scores.novelty[c.row],
            p_value: scores.p_value[c.row],
            action_gap: scores.action_gap[c.row],
            distance,
            inclusion: 1.0,
        }
    }
}

/// Plans a review list in one call (see [`Planner`] for cheap re-planning).
pub fn plan(
    steps: &StepTable,
    scores: &RoundScores,
    corrected_states: &[f32],
    settings: &PlanSettings,
) -> ReviewList {
    Planner::new(steps, scores, settings).plan(steps, scores, corrected_states)
}

/// Raw states of some rows of a table, row-major: the `corrected_states` argument of
/// [`plan`] for corrections made on this round's steps.
pub fn states_of_rows(steps: &StepTable, rows: &[usize]) -> Vec<f32> {
    rows.iter()
        .flat_map(|&r| steps.state(r).iter().copied())
        .collect()
}
