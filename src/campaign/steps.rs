//! Contiguous storage of steps: one f32 matrix of states and one of actions per table.

use std::collections::HashMap;
use std::path::PathBuf;

use super::outcome::RowOutcome;

/// One episode: a run of consecutive rows of a [`StepTable`].
#[derive(Debug, Clone, PartialEq)]
pub struct Episode {
    /// The episode's name as written in its file.
    pub name: String,
    /// First row of the episode in the table.
    pub start: usize,
    /// Number of steps.
    pub len: usize,
    /// Index into [`StepTable::sources`] of the file it came from.
    pub source: usize,
}

impl Episode {
    /// Rows of the table that belong to this episode.
    pub fn rows(&self) -> std::ops::Range<usize> {
        self.start..self.start + self.len
    }
}

/// Steps of one set of files (the demonstrations, or one round), stored contiguously:
/// row `i`'s state is `states[i * state_dim .. (i + 1) * state_dim]`. Episodes occupy
/// consecutive rows in increasing `t`.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StepTable {
    /// Length of each state vector.
    pub state_dim: usize,
    /// Length of each action vector.
    pub action_dim: usize,
    /// Row-major states, `len() * state_dim` values.
    pub states: Vec<f32>,
    /// Row-major actions (discrete channels hold the choice index), `len() * action_dim` values.
    pub actions: Vec<f32>,
    /// Time index of each row.
    pub t: Vec<i64>,
    /// Episodes in table order; their row ranges tile `0..len()`.
    pub episodes: Vec<Episode>,
    /// Intervention flag per row, or empty when no file carries the flag.
    pub interventions: Vec<bool>,
    /// Frame image per row, as `(row, path relative to the campaign folder)`, sorted by row.
    pub frames: Vec<(u32, String)>,
    /// Ensemble samples: row `i` owns `samples[sample_offsets[i] * action_dim ..
    /// sample_offsets[i + 1] * action_dim]`. Empty when no step has samples.
    pub sample_offsets: Vec<u32>,
    /// Flat ensemble action samples, `action_dim` values each.
    pub samples: Vec<f32>,
    /// Files the table was read from, relative to the campaign folder.
    pub sources: Vec<PathBuf>,
    /// Line (text files, 1-based) or record (binary files, 0-based) of each row in its source.
    pub origins: Vec<u64>,
    /// Reward per row (NaN where a row has none), or empty when no row carries one.
    pub rewards: Vec<f32>,
    /// Cost per row (NaN where a row has none), or empty when no row carries one.
    pub costs: Vec<f32>,
    /// Outcome per episode (index into the spec's outcome list), or empty when no episode
    /// has one.
    pub outcomes: Vec<Option<u32>>,
}

impl StepTable {
    /// An empty table for the given dimensions.
    pub fn new(state_dim: usize, action_dim: usize) -> Self {
        StepTable {
            state_dim,
            action_dim,
            ..Default::default()
        }
    }

    /// Number of steps.
    pub fn len(&self) -> usize {
        self.t.len()
    }

    /// True when the table holds no step.
    pub fn is_empty(&self) -> bool {
        self.t.is_empty()
    }

    /// State vector of a row.
    pub fn state(&self, row: usize) -> &[f32] {
        &self.states[row * self.state_dim..(row + 1) * self.state_dim]
    }

    /// Action vector of a row.
    pub fn action(&self, row: usize) -> &[f32] {
        &self.actions[row * self.action_dim..(row + 1) * self.action_dim]
    }

    /// Whether the expert had taken over at this row.
    pub fn intervention(&self, row: usize) -> bool {
        self.interventions.get(row).copied().unwrap_or(false)
    }

    /// The frame image path of a row, relative to the campaign folder.
    pub fn frame(&self, row: usize) -> Option<&str> {
        let i = self
            .frames
            .binary_search_by_key(&(row as u32), |(r, _)| *r)
            .ok()?;
        Some(self.frames[i].1.as_str())
    }

    /// The ensemble action samples of a row (`action_dim` values each), if any.
    pub fn samples(&self, row: usize) -> Option<std::slice::ChunksExact<'_, f32>> {
        if self.sample_offsets.is_empty() {
            return None;
        }
        let (a, b) = (
            self.sample_offsets[row] as usize,
            self.sample_offsets[row + 1] as usize,
        );
        if a == b {
            return None;
        }
        let d = self.action_dim.max(1);
        Some(self.samples[a * d..b * d].chunks_exact(d))
    }

    /// The reward of a row, if given.
    pub fn reward(&self, row: usize) -> Option<f32> {
        self.rewards.get(row).copied().filter(|x| !x.is_nan())
    }

    /// The cost of a row, if given.
    pub fn cost(&self, row: usize) -> Option<f32> {
        self.costs.get(row).copied().filter(|x| !x.is_nan())
    }

    /// The outcome of an episode (index into the spec's outcome list), if given.
    pub fn outcome(&self, episode: usize) -> Option<u32> {
        self.outcomes.get(episode).copied().flatten()
    }

    /// Position of `row` in its episode (0 for the episode's first step).
    pub fn position(&self, row: usize) -> usize {
        let e = self.episode_of(row);
        self.episodes
            .get(e)
            .map_or(0, |e| row.saturating_sub(e.start))
    }

    /// Index of the episode that holds `row`.
    pub fn episode_of(&self, row: usize) -> usize {
        self.episodes.partition_point(|e| e.start + e.len <= row)
    }

    /// Index of the episode with this name.
    pub fn episode_index(&self, name: &str) -> Option<usize> {
        self.episodes.iter().position(|e| e.name == name)
    }

    /// Row of (episode, t), if present.
    pub fn find(&self, episode: &str, t: i64) -> Option<usize> {
        let e = &self.episodes[self.episode_index(episode)?];
        let ts = &self.t[e.rows()];
        ts.binary_search(&t).ok().map(|i| e.start + i)
    }

    /// A lookup map from episode name to episode index, for many [`StepTable::find`] calls.
    pub fn episode_map(&self) -> HashMap<&str, usize> {
        self.episodes
            .iter()
            .enumerate()
            .map(|(i, e)| (e.name.as_str(), i))
            .collect()
    }

    /// Where a row came from, as `file:line` or `file record n`.
    pub fn origin(&self, row: usize) -> String {
        let e = &self.episodes[self.episode_of(row)];
        let file = self
            .sources
            .get(e.source)
            .map(|p| p.display().to_string())
            .unwrap_or_default();
        format!("{file}:{}", self.origins[row])
    }
}

/// One step as handed to [`StepTableBuilder::push`].
#[derive(Debug, Clone, Default, PartialEq)]
pub struct StepRow<'a> {
    /// Episode name.
    pub episode: &'a str,
    /// Time index.
    pub t: i64,
    /// State vector, already validated to `state_dim` finite values.
    pub state: &'a [f32],
    /// Action vector, already validated to `action_dim` values.
    pub action: &'a [f32],
    /// Frame path relative to the campaign folder.
    pub frame: Option<String>,
    /// Intervention flag, if the file carries one.
    pub intervention: Option<bool>,
    /// Ensemble samples, `action_dim` values each, flat.
    pub samples: &'a [f32],
    /// Line or record in the source file.
    pub origin: u64,
    /// Reward, cost and the episode's outcome, where given.
    pub outcome: RowOutcome,
}

/// How a pushed row relates to the rows before it of the same episode.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OrderFault {
    /// `t` equals the previous `t` of this episode.
    Duplicate {
        /// The previous row's origin (line or record).
        previous_origin: u64,
    },
    /// `t` is smaller than the previous `t` of this episode.
    Backwards {
        /// The previous `t`.
        previous_t: i64,
    },
    /// The episode already came from another file.
    OtherFile {
        /// Index of that file in the table's sources.
        source: usize,
    },
}

/// Accumulates rows in file order (episodes may interleave) and regroups them by episode.
#[derive(Debug)]
pub struct StepTableBuilder {
    table: StepTable,
    episode_of_row: Vec<u32>,
    names: HashMap<String, u32>,
    last: Vec<(i64, u64, usize)>,
    frames: Vec<(u32, String)>,
    interventions: Vec<bool>,
    any_intervention: bool,
    sample_counts: Vec<u32>,
    rewards: Vec<f32>,
    costs: Vec<f32>,
    outcomes: Vec<Option<(u32, u64)>>,
    current_source: usize,
    source_start: usize,
    record_cap: usize,
}

/// Records one file may hold unless [`super::LoadOptions::record_cap`] says otherwise. Ten
/// million steps of a 16-feature state take about 1 GB while loading; a file that declares or
/// holds more is refused with a located error instead of exhausting memory.
pub const DEFAULT_RECORD_CAP: usize = 10_000_000;

impl StepTableBuilder {
    /// A builder for the given dimensions.
    pub fn new(state_dim: usize, action_dim: usize) -> Self {
        StepTableBuilder {
            table: StepTable::new(state_dim, action_dim),
            episode_of_row: Vec::new(),
            names: HashMap::new(),
            last: Vec::new(),
            frames: Vec::new(),
            interventions: Vec::new(),
            any_intervention: false,
            sample_counts: Vec::new(),
            rewards: Vec::new(),
            costs: Vec::new(),
            outcomes: Vec::new(),
            current_source: 0,
            source_start: 0,
            record_cap: DEFAULT_RECORD_CAP,
        }
    }

    /// Sets the most records one source file may add.
    pub fn set_record_cap(&mut self, cap: usize) {
        self.record_cap = cap;
    }

    /// The most records one source file may add.
    pub fn record_cap(&self) -> usize {
        self.record_cap
    }

    /// True when the current source file has added as many records as the cap allows.
    pub fn source_full(&self) -> bool {
        self.len() - self.source_start >= self.record_cap
    }

    /// Starts a new source file; later rows are attributed to it. Returns its index.
    pub fn begin_source(&mut self, path: PathBuf) -> usize {
        self.table.sources.push(path);
        self.current_source = self.table.sources.len() - 1;
        self.source_start = self.len();
        self.current_source
    }

    /// Number of rows pushed so far.
    pub fn len(&self) -> usize {
        self.table.t.len()
    }

    /// True when no row was pushed.
    pub fn is_empty(&self) -> bool {
        self.table.t.is_empty()
    }

    /// Checks a row's place in its episode without adding it.
    pub fn order_fault(&self, episode: &str, t: i64) -> Option<OrderFault> {
        let &e = self.names.get(episode)?;
        let (last_t, last_origin, source) = self.last[e as usize];
        if source != self.current_source {
            return Some(OrderFault::OtherFile { source });
        }
        if t == last_t {
            return Some(OrderFault::Duplicate {
                previous_origin: last_origin,
            });
        }
        (t < last_t).then_some(OrderFault::Backwards { previous_t: last_t })
    }

    /// The outcome an episode already has and the origin (line or record) that gave it, when
    /// it differs from `outcome`.
    pub fn outcome_conflict(&self, episode: &str, outcome: Option<u32>) -> Option<(u32, u64)> {
        let o = outcome?;
        let &e = self.names.get(episode)?;
        let (had, at) = self.outcomes.get(e as usize).copied().flatten()?;
        (had != o).then_some((had, at))
    }

    /// Adds a row. Call [`StepTableBuilder::order_fault`] first: rows out of order are the
    /// caller's to report and skip.
    pub fn push(&mut self, row: StepRow<'_>) {
        let e = match self.names.get(row.episode) {
            Some(&e) => e,
            None => {
                let e = self.table.episodes.len() as u32;
                self.names.insert(row.episode.to_string(), e);
                self.table.episodes.push(Episode {
                    name: row.episode.to_string(),
                    start: 0,
                    len: 0,
                    source: self.current_source,
                });
                self.last.push((i64::MIN, 0, self.current_source));
                self.outcomes.push(None);
                e
            }
        };
        self.last[e as usize] = (row.t, row.origin, self.current_source);
        self.table.episodes[e as usize].len += 1;
        let i = self.table.t.len() as u32;
        self.episode_of_row.push(e);
        self.table.t.push(row.t);
        self.table.states.extend_from_slice(row.state);
        self.table.actions.extend_from_slice(row.action);
        self.table.origins.push(row.origin);
        if let Some(f) = row.frame {
            self.frames.push((i, f));
        }
        self.any_intervention |= row.intervention.is_some();
        self.interventions.push(row.intervention.unwrap_or(false));
        let d = self.table.action_dim.max(1);
        self.sample_counts.push((row.samples.len() / d) as u32);
        self.table.samples.extend_from_slice(row.samples);
        self.rewards.push(row.outcome.reward.unwrap_or(f32::NAN));
        self.costs.push(row.outcome.cost.unwrap_or(f32::NAN));
        if let Some(o) = row.outcome.outcome
            && self.outcomes[e as usize].is_none()
        {
            self.outcomes[e as usize] = Some((o, row.origin));
        }
    }

    /// Regroups rows so that each episode is contiguous (episodes in order of first
    /// appearance, rows of an episode in push order) and returns the table.
    pub fn finish(self) -> StepTable {
        let mut t = self.table;
        let n = t.t.len();
        let mut start = 0;
        for e in &mut t.episodes {
            e.start = start;
            start += e.len;
        }
        let already_grouped = self.episode_of_row.windows(2).all(|w| w[0] <= w[1]);
        let any_samples = self.sample_counts.iter().any(|&c| c > 0);
        let mut frames = self.frames;
        let mut interventions = self.interventions;
        let mut rewards = self.rewards;
        let mut costs = self.costs;
        let mut counts = self.sample_counts;
        if !already_grouped {
            let mut next: Vec<usize> = t.episodes.iter().map(|e| e.start).collect();
            let mut dest = vec![0usize; n];
            for (row, &e) in self.episode_of_row.iter().enumerate() {
                dest[row] = next[e as usize];
                next[e as usize] += 1;
            }
            t.states = permute(&t.states, &dest, t.state_dim);
            t.actions = permute(&t.actions, &dest, t.action_dim);
            t.t = permute(&t.t, &dest, 1);
            t.origins = permute(&t.origins, &dest, 1);
            interventions = permute(&interventions, &dest, 1);
            rewards = permute(&rewards, &dest, 1);
            costs = permute(&costs, &dest, 1);
            let old_offsets = offsets(&counts);
            let d = t.action_dim.max(1);
            counts = permute(&counts, &dest, 1);
            let new_offsets = offsets(&counts);
            let mut samples = vec![0.0; t.samples.len()];
            for (row, &to) in dest.iter().enumerate() {
                let src =
                    &t.samples[old_offsets[row] as usize * d..old_offsets[row + 1] as usize * d];
                let at = new_offsets[to] as usize * d;
                samples[at..at + src.len()].copy_from_slice(src);
            }
            t.samples = samples;
            for f in &mut frames {
                f.0 = dest[f.0 as usize] as u32;
            }
            frames.sort_by_key(|f| f.0);
        }
        t.frames = frames;
        t.interventions = if self.any_intervention {
            interventions
        } else {
            Vec::new()
        };
        let given = |v: &[f32]| v.iter().any(|x| !x.is_nan());
        t.rewards = if given(&rewards) { rewards } else { Vec::new() };
        t.costs = if given(&costs) { costs } else { Vec::new() };
        if self.outcomes.iter().any(Option::is_some) {
            t.outcomes = self.outcomes.iter().map(|o| o.map(|o| o.0)).collect();
        }
        if any_samples {
            t.sample_offsets = offsets(&counts);
        } else {
            t.samples.clear();
        }
        t
    }
}

fn offsets(counts: &[u32]) -> Vec<u32> {
    let mut out = Vec::with_capacity(counts.len() + 1);
    let mut acc = 0u32;
    out.push(0);
    for &c in counts {
        acc += c;
        out.push(acc);
    }
    out
}

fn permute<T: Copy + Default>(src: &[T], dest: &[usize], width: usize) -> Vec<T> {
    let mut out = vec![T::default(); src.len()];
    for (row, &to) in dest.iter().enumerate() {
        out[to * width..(to + 1) * width].copy_from_slice(&src[row * width..(row + 1) * width]);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn push(b: &mut StepTableBuilder, ep: &str, t: i64, x: f32, samples: &[f32]) {
        b.push(StepRow {
            episode: ep,
            t,
            state: &[x, x + 0.5],
            action: &[x * 10.0],
            frame: (t == 1).then(|| format!("f/{ep}{t}.png")),
            intervention: Some(x > 2.0),
            samples,
            origin: (x * 10.0) as u64,
            ..Default::default()
        });
    }

    #[test]
    fn interleaved_rows_regroup_by_episode_keeping_every_column_aligned() {
        let mut b = StepTableBuilder::new(2, 1);
        b.begin_source("a.jsonl".into());
        push(&mut b, "a", 0, 1.0, &[]);
        push(&mut b, "b", 0, 2.0, &[7.0, 8.0]);
        push(&mut b, "a", 1, 3.0, &[9.0]);
        push(&mut b, "b", 1, 4.0, &[]);
        let t = b.finish();
        assert_eq!(
            t.episodes
                .iter()
                .map(|e| (e.name.as_str(), e.start, e.len))
                .collect::<Vec<_>>(),
            vec![("a", 0, 2), ("b", 2, 2)]
        );
        assert_eq!(t.states, vec![1.0, 1.5, 3.0, 3.5, 2.0, 2.5, 4.0, 4.5]);
        assert_eq!(t.actions, vec![10.0, 30.0, 20.0, 40.0]);
        assert_eq!(t.t, vec![0, 1, 0, 1]);
        assert_eq!(t.interventions, vec![false, true, false, true]);
        assert_eq!(t.origins, vec![10, 30, 20, 40]);
        assert_eq!(t.frame(1), Some("f/a1.png"));
        assert_eq!(t.frame(3), Some("f/b1.png"));
        assert_eq!(t.frame(0), None);
        assert_eq!(
            t.samples(1).map(|s| s.collect::<Vec<_>>()),
            Some(vec![&[9.0][..]])
        );
        assert_eq!(t.samples(2).map(|s| s.count()), Some(2));
        assert!(t.samples(0).is_none());
        assert_eq!(t.find("b", 1), Some(3));
        assert_eq!(t.find("b", 2), None);
        assert_eq!(t.episode_of(2), 1);
        assert_eq!(t.origin(3), "a.jsonl:40");
    }

    #[test]
    fn order_faults_are_reported_before_push() {
        let mut b = StepTableBuilder::new(2, 1);
        b.begin_source("a".into());
        push(&mut b, "a", 5, 1.0, &[]);
        assert_eq!(
            b.order_fault("a", 5),
            Some(OrderFault::Duplicate {
                previous_origin: 10
            })
        );
        assert_eq!(
            b.order_fault("a", 4),
            Some(OrderFault::Backwards { previous_t: 5 })
        );
        assert_eq!(b.order_fault("a", 6), None);
        b.begin_source("b".into());
        assert_eq!(
            b.order_fault("a", 6),
            Some(OrderFault::OtherFile { source: 0 })
        );
    }
}
