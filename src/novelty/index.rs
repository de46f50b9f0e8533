//! Exact k-nearest-neighbour search over scaled demonstration states.
//!
//! kiddo fixes a tree's dimension at compile time, so states are zero-padded up to the next of
//! [`TREE_SIZES`]: every padded coordinate is 0 for demonstrations and queries alike, so padding
//! changes no distance. States wider than [`MAX_TREE_DIM`] take the principal-subspace path of
//! [`super::subspace`], which is still exact (a lower-bound tree plus exact refinement); so do
//! states wider than 8 whose demonstrations lie close to a subspace that fits a narrower tree
//! than the plain one (see [`choose_path`]). Measured on smooth synthetic trajectories with a
//! 6-dimensional latent path (`bench`, W3: 64 features): a 15-component tree took 45 s for
//! build, calibration and scoring, a 7-component tree 5.7 s, with the same exact answers.
//!
//! Distances handed out by this module are SQUARED Euclidean distances in scaled units.

use std::num::NonZeroUsize;

use kiddo::dist::SquaredEuclidean;

use super::subspace::{Subspace, components_for, principal_axes};

/// Tree dimensions compiled in; a state of dimension `d` uses the smallest size `>= d`.
pub const TREE_SIZES: [usize; 4] = [4, 8, 16, 32];
/// Widest state searched with a plain tree; wider states use the principal-subspace path.
pub const MAX_TREE_DIM: usize = 32;

/// A neighbour: demonstration row and squared distance.
pub type Hit = (u32, f32);

/// A tree of one compiled dimension, behind a trait object.
pub trait TreeBackend: Send + Sync {
    /// The `k` nearest points (ascending squared distance) with squared distance at most
    /// `bound2` (`f32::INFINITY` for no bound); fewer when the bound leaves fewer.
    fn knn(&self, q: &[f32], k: usize, bound2: f32, out: &mut Vec<Hit>);
    /// Every point with squared distance at most `r2`, in no particular order.
    fn within(&self, q: &[f32], r2: f32, out: &mut Vec<Hit>);
}

/// Points per leaf of the 8-wide trees (kiddo's default, used for every other width, is 32).
/// Measured with `bench --only w1parts,w2` on smooth trajectory data: the subspace path's
/// 8-wide tree scored W1's 100k steps in 1.47 s with 32 points per leaf, 1.40 s with 64,
/// 1.79 s with 128 and 1.67 s with 16; a plain 16-wide tree answered W2's queries at 24,500/s
/// with 32 and 20,200/s with 64.
pub const LEAF_POINTS_8: usize = 64;

/// kiddo's immutable tree layout (Eytzinger stems, arena leaves) with `B` points per leaf:
/// `kiddo::ImmutableKdTree` is this type with 32.
type Layout<const K: usize, const B: usize> =
    kiddo::KdTree<f32, u32, kiddo::Eytzinger, kiddo::VecOfArenas<f32, u32, K, B>, K, B>;

struct Tree<const K: usize, const B: usize>(Layout<K, B>);

fn pad<const K: usize>(q: &[f32]) -> [f32; K] {
    let mut p = [0.0; K];
    p[..q.len()].copy_from_slice(q);
    p
}

impl<const K: usize, const B: usize> TreeBackend for Tree<K, B> {
    fn knn(&self, q: &[f32], k: usize, bound2: f32, out: &mut Vec<Hit>) {
        out.clear();
        let Some(k) = NonZeroUsize::new(k) else {
            return;
        };
        let p = pad::<K>(q);
        let query = self.0.query(&p).nearest_n::<SquaredEuclidean<f32>>(k);
        let hits = if bound2.is_finite() {
            query.within(bound2).execute()
        } else {
            query.execute()
        };
        out.extend(hits.iter().map(|h| (h.item, h.distance)));
    }

    fn within(&self, q: &[f32], r2: f32, out: &mut Vec<Hit>) {
        out.clear();
        let p = pad::<K>(q);
        let hits = self
            .0
            .query(&p)
            .within::<SquaredEuclidean<f32>>(r2)
            .unsorted()
            .execute();
        out.extend(hits.iter().map(|h| (h.item, h.distance)));
    }
}

/// Builds a tree over `rows` (demonstration row ids, which become the items) whose coordinate
/// `j < dim` is `axis(row, j)`; `dim` must not exceed [`MAX_TREE_DIM`]. 8-wide trees hold
/// [`LEAF_POINTS_8`] points per leaf, the others 32.
pub fn build_tree<F>(dim: usize, rows: &[u32], axis: F) -> Result<Box<dyn TreeBackend>, String>
where
    F: Fn(u32, usize) -> f32 + Sync,
{
    if tree_width(dim) == 8 {
        build_tree_leaves::<LEAF_POINTS_8, F>(dim, rows, axis)
    } else {
        build_tree_leaves::<32, F>(dim, rows, axis)
    }
}

/// Like [`build_tree`] with `B` points per leaf (32 is kiddo's default,
/// `kiddo::ImmutableKdTree`).
pub fn build_tree_leaves<const B: usize, F>(
    dim: usize,
    rows: &[u32],
    axis: F,
) -> Result<Box<dyn TreeBackend>, String>
where
    F: Fn(u32, usize) -> f32 + Sync,
{
    fn make<const K: usize, const B: usize, F: Fn(u32, usize) -> f32 + Sync>(
        dim: usize,
        rows: &[u32],
        axis: F,
    ) -> Result<Box<dyn TreeBackend>, String> {
        let at = |&r: &u32, j: usize| if j < dim { axis(r, j) } else { 0.0 };
        let tree =
            Layout::<K, B>::new_from_source(rows, at, |_, &r| r).map_err(|e| e.to_string())?;
        Ok(Box::new(Tree(tree)))
    }
    match dim {
        0..=4 => make::<4, B, F>(dim, rows, axis),
        5..=8 => make::<8, B, F>(dim, rows, axis),
        9..=16 => make::<16, B, F>(dim, rows, axis),
        17..=32 => make::<32, B, F>(dim, rows, axis),
        _ => Err(format!(
            "a plain tree holds at most {MAX_TREE_DIM} dimensions, not {dim}"
        )),
    }
}

/// The compiled tree width a state of dimension `d` is padded to (`usize::MAX` when wider
/// than every tree).
fn tree_width(d: usize) -> usize {
    TREE_SIZES
        .iter()
        .copied()
        .find(|&w| w >= d)
        .unwrap_or(usize::MAX)
}

/// Which search path suits these demonstrations: `None` for a plain tree, or the principal
/// axes and the number of components for the subspace path. States of up to 8 features
/// always take a plain tree; wider ones take the subspace when its tree (components plus the
/// residual norm) is narrower than the plain tree would be, and always above
/// [`MAX_TREE_DIM`].
pub fn choose_path(
    states: &[f32],
    dim: usize,
    inv_scale: &[f32],
    rows: &[u32],
) -> Option<(super::subspace::Axes, usize)> {
    if dim <= 8 || rows.is_empty() {
        return None;
    }
    let axes = principal_axes(states, dim, inv_scale, rows);
    let m = components_for(&axes.values, axes.total);
    (tree_width(m + 1) < tree_width(dim)).then_some((axes, m))
}

enum Kind {
    Tree(Box<dyn TreeBackend>),
    Subspace(Box<Subspace>),
}

/// Exact k-nearest-neighbour index over a set of demonstration rows, in scaled units.
pub struct KnnIndex {
    dim: usize,
    len: usize,
    kind: Kind,
}

impl std::fmt::Debug for KnnIndex {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("KnnIndex")
            .field("dim", &self.dim)
            .field("len", &self.len)
            .field("path", &self.path())
            .finish()
    }
}

impl KnnIndex {
    /// Builds the index over `rows` of the row-major `states` (`dim` wide), each feature
    /// multiplied by `inv_scale`.
    pub fn build(
        states: &[f32],
        dim: usize,
        inv_scale: &[f32],
        rows: &[u32],
    ) -> Result<Self, String> {
        let kind = match choose_path(states, dim, inv_scale, rows) {
            None => {
                let axis = |r: u32, j: usize| states[r as usize * dim + j] * inv_scale[j];
                Kind::Tree(build_tree(dim, rows, axis)?)
            }
            Some((axes, m)) => Kind::Subspace(Box::new(Subspace::build(
                states, dim, inv_scale, rows, &axes, m,
            )?)),
        };
        Ok(KnnIndex {
            dim,
            len: rows.len(),
            kind,
        })
    }

    /// A plain tree with kiddo's default 32 points per leaf, whatever the data (states of at
    /// most [`MAX_TREE_DIM`] features): the benchmark's baseline.
    pub fn build_plain(
        states: &[f32],
        dim: usize,
        inv_scale: &[f32],
        rows: &[u32],
    ) -> Result<Self, String> {
        let axis = |r: u32, j: usize| states[r as usize * dim + j] * inv_scale[j];
        Ok(KnnIndex {
            dim,
            len: rows.len(),
            kind: Kind::Tree(build_tree_leaves::<32, _>(dim, rows, axis)?),
        })
    }

    /// State dimension (before padding).
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Number of indexed points.
    pub fn len(&self) -> usize {
        self.len
    }

    /// True when no point is indexed.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Which search path answers queries, in words.
    pub fn path(&self) -> String {
        match &self.kind {
            Kind::Tree(_) => format!("k-d tree, {} dimensions", self.dim),
            Kind::Subspace(s) => format!(
                "principal subspace of {} components + residual norm, exact refinement",
                s.components()
            ),
        }
    }

    /// The `k` nearest indexed points to the scaled query `q`, ascending by squared distance.
    /// `bound` is a distance (not squared) known to be at least the k-th neighbour distance,
    /// used to prune; pass `f32::INFINITY` when none is known. An underestimated bound only
    /// costs a second search: the answer is always exact.
    pub fn knn(&self, q: &[f32], k: usize, bound: f32, out: &mut Vec<Hit>) {
        self.knn_hinted(q, k, bound, &[], out);
    }

    /// Like [`KnnIndex::knn`], with `hints`: demonstration rows likely to be among or near
    /// the neighbours (see [`Subspace::knn_hinted`]). Exact whatever the hints; only the
    /// principal-subspace path uses them.
    pub fn knn_hinted(&self, q: &[f32], k: usize, bound: f32, hints: &[u32], out: &mut Vec<Hit>) {
        let k = k.min(self.len);
        let bound2 = if bound.is_finite() {
            // A relative margin absorbs rounding between the bound's arithmetic and kiddo's.
            bound * bound * (1.0 + 1e-4) + 1e-12
        } else {
            f32::INFINITY
        };
        self.knn2(q, k, bound2, hints, out);
        if out.len() < k && bound2.is_finite() {
            self.knn2(q, k, f32::INFINITY, hints, out);
        }
    }

    fn knn2(&self, q: &[f32], k: usize, bound2: f32, hints: &[u32], out: &mut Vec<Hit>) {
        match &self.kind {
            Kind::Tree(t) => t.knn(q, k, bound2, out),
            Kind::Subspace(s) => s.knn_hinted(q, k, bound2, hints, out),
        }
    }
}
