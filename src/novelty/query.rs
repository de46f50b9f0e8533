//! Batched k-nearest-neighbour queries over the steps of a table, in parallel (rayon).
//!
//! **Seeding.** The k-th neighbour distance `d_k` is 1-Lipschitz in the query point: for
//! consecutive steps `x` and `y` of one episode, `d_k(y) <= d_k(x) + |y - x|` (the k points
//! within `d_k(x)` of `x` are all within `d_k(x) + |y - x|` of `y`). Each step's search is
//! therefore bounded by the previous step's answer plus the step length, which lets the tree
//! skip every branch beyond that radius from the start. The bound is an upper bound, so the
//! result stays exact. Rows are processed in chunks of [`CHUNK_ROWS`] consecutive rows;
//! the chain restarts at each chunk and episode start.
//!
//! **Hints.** A rollout that stays near the demonstrations tends to follow them, so the
//! neighbours of step `t + 1` are often the successors of step `t`'s neighbours (the
//! demonstration rows just as far ahead). Those rows and the previous neighbours themselves go
//! to [`KnnIndex::knn_hinted`]: their own k-th exact distance is another upper bound, usually
//! much tighter than the Lipschitz one. On W1 of the benchmark this cut seeded scoring from
//! 1.69 s to 1.47 s (`bench --only w1parts`, medians of 3).
//!
//! **One answer whatever the bound and hints.** Neighbours at equal distances could come back
//! in any order, and a tie at the k-th distance could let the bound or the hints decide which
//! of the tied rows is kept; then a step's neighbours (and the consensus action made from
//! them) would depend on where its chain started, and scoring a round in shards would not
//! give the rows of scoring it whole. So each search asks for `k + 1` neighbours (the chain's
//! bound follows the `(k + 1)`-th distance, which is 1-Lipschitz too): when the `(k + 1)`-th
//! is strictly farther than the k-th, the k nearest are one set, put in order of
//! (distance, row); on a tie at the k-th distance every tied row is fetched and the smallest
//! rows win ([`canonical_knn`]).

use rayon::prelude::*;

use super::NoveltyError;
use super::index::{Hit, KnnIndex};
use crate::campaign::StepTable;
use crate::progress::Progress;

/// Consecutive rows handled by one parallel task.
pub const CHUNK_ROWS: usize = 512;

/// Seeded k-nearest-neighbour search for `rows` of `table` (see the module documentation):
/// `rows.len() * k` hits, each row's `k` nearest first to last.
pub fn seeded_knn(
    index: &KnnIndex,
    inv_scale: &[f32],
    table: &StepTable,
    rows: &[usize],
    k: usize,
    stage: &str,
    progress: &Progress,
) -> Result<Vec<Hit>, NoveltyError> {
    knn_rows(index, inv_scale, table, rows, k, true, stage, progress)
}

/// Like [`seeded_knn`]; `seeded = false` runs every query unbounded (the plain baseline).
#[allow(clippy::too_many_arguments)]
pub fn knn_rows(
    index: &KnnIndex,
    inv_scale: &[f32],
    table: &StepTable,
    rows: &[usize],
    k: usize,
    seeded: bool,
    stage: &str,
    progress: &Progress,
) -> Result<Vec<Hit>, NoveltyError> {
    let k = k.min(index.len()).max(1);
    let mut out = vec![(0u32, f32::INFINITY); rows.len() * k];
    progress.stage(stage, rows.len() as u64);
    out.par_chunks_mut(CHUNK_ROWS * k)
        .enumerate()
        .try_for_each(|(c, chunk)| {
            if progress.is_cancelled() {
                return Err(NoveltyError::Cancelled);
            }
            let mine = &rows[c * CHUNK_ROWS..(c * CHUNK_ROWS + chunk.len() / k)];
            chain(index, inv_scale, table, mine, k, seeded, chunk);
            progress.advance(mine.len() as u64);
            Ok(())
        })?;
    Ok(out)
}

fn chain(
    index: &KnnIndex,
    inv_scale: &[f32],
    table: &StepTable,
    rows: &[usize],
    k: usize,
    seeded: bool,
    out: &mut [Hit],
) {
    let d = table.state_dim;
    let (mut q, mut prev_q) = (vec![0.0f32; d], vec![0.0f32; d]);
    let mut prev: Option<(usize, usize, f32)> = None;
    let mut hits: Vec<Hit> = Vec::with_capacity(k);
    let mut hints: Vec<u32> = Vec::with_capacity(2 * k);
    for (&row, slot) in rows.iter().zip(out.chunks_exact_mut(k)) {
        for ((o, x), i) in q.iter_mut().zip(table.state(row)).zip(inv_scale) {
            *o = x * i;
        }
        let episode = table.episode_of(row);
        hints.clear();
        let bound = match prev {
            Some((e, prev_row, dk)) if seeded && e == episode => {
                // The previous neighbours, and the demonstration rows as far past them as
                // this step is past the previous one.
                let ahead = row.saturating_sub(prev_row) as u32;
                for h in &hits {
                    hints.push(h.0);
                    hints.push(h.0.saturating_add(ahead));
                }
                dk + distance(&q, &prev_q)
            }
            _ => f32::INFINITY,
        };
        let dk = canonical_knn(index, &q, k, bound, &hints, &mut hits);
        slot[..hits.len()].copy_from_slice(&hits);
        prev = Some((episode, row, dk));
        std::mem::swap(&mut q, &mut prev_q);
    }
}

/// The `k` nearest indexed points to the scaled query `q` in their one canonical form: the
/// `k` smallest by (squared distance, row), whatever `bound` and `hints` (see the module
/// documentation). `bound` must be at least the `(k + 1)`-th neighbour distance (or
/// infinite). Returns the `(k + 1)`-th neighbour distance (not squared; the k-th when the
/// index holds no more than `k` points), the bound for the next step of a chain.
pub fn canonical_knn(
    index: &KnnIndex,
    q: &[f32],
    k: usize,
    bound: f32,
    hints: &[u32],
    out: &mut Vec<Hit>,
) -> f32 {
    let k = k.min(index.len());
    index.knn_hinted(q, (k + 1).min(index.len()), bound, hints, out);
    let next = out.last().map_or(f32::INFINITY, |h| h.1.max(0.0).sqrt());
    if k > 0 && out.len() > k && out[k].1 <= out[k - 1].1 {
        gather_ties(index, q, out[k - 1].1, out);
    }
    out.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    out.truncate(k);
    next
}

/// Every indexed point within squared distance `dk2` of `q` (unbounded searches of growing
/// size until one reaches past `dk2` or holds every point).
fn gather_ties(index: &KnnIndex, q: &[f32], dk2: f32, out: &mut Vec<Hit>) {
    let mut want = 2 * out.len();
    loop {
        index.knn(q, want.min(index.len()), f32::INFINITY, out);
        if want >= index.len() || out.last().is_some_and(|h| h.1 > dk2) {
            break;
        }
        want *= 2;
    }
    out.retain(|h| h.1 <= dk2);
}

/// Euclidean distance between two equally long vectors.
pub fn distance(a: &[f32], b: &[f32]) -> f32 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y) * (x - y))
        .sum::<f32>()
        .sqrt()
}

/// Brute-force k nearest neighbours of a scaled query among all rows of the row-major
/// `states` (scaled by `inv_scale` on the fly): the oracle for tests and the benchmark's
/// baseline. Squared distances, ascending; ties by row.
pub fn brute_knn(states: &[f32], dim: usize, inv_scale: &[f32], q: &[f32], k: usize) -> Vec<Hit> {
    let mut all: Vec<Hit> = states
        .chunks_exact(dim)
        .enumerate()
        .map(|(r, s)| {
            let d2 = s
                .iter()
                .zip(inv_scale)
                .zip(q)
                .map(|((x, i), y)| (x * i - y) * (x * i - y))
                .sum();
            (r as u32, d2)
        })
        .collect();
    let k = k.min(all.len());
    if k == 0 {
        return Vec::new();
    }
    all.select_nth_unstable_by(k - 1, |a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    all.truncate(k);
    all.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    all
}
