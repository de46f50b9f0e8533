//! Greedy k-center selection (Gonzalez 1985, "Clustering to minimize the maximum intercluster
//! distance"; used for diverse labelling batches by Sener & Savarese 2018, "Active learning
//! for convolutional neural networks: a core-set approach").
//!
//! Starting from the seed centres (states that already have corrections), repeatedly pick the
//! candidate farthest from every centre so far. The covering radius (the largest distance from
//! a remaining candidate to its nearest centre) is within a factor 2 of the best possible for
//! that many centres, and every pick lies at least the final covering radius away from every
//! seed and every earlier pick. Cost: `O((seeds + picks) * candidates * dim)`.

/// Distances of candidates to their nearest centre, maintained as centres are added.
#[derive(Debug, Clone)]
pub struct Cover<'a> {
    points: &'a [f32],
    dim: usize,
    nearest: Vec<f32>,
    alive: Vec<bool>,
}

/// Euclidean distance.
pub fn dist(a: &[f32], b: &[f32]) -> f32 {
    let mut s = 0.0;
    for (x, y) in a.iter().zip(b) {
        s += (x - y) * (x - y);
    }
    s.sqrt()
}

impl<'a> Cover<'a> {
    /// Candidates are the rows of the row-major `points` (`dim` wide), all alive, no centre.
    pub fn new(points: &'a [f32], dim: usize) -> Self {
        let n = points.len() / dim.max(1);
        Cover {
            points,
            dim,
            nearest: vec![f32::INFINITY; n],
            alive: vec![true; n],
        }
    }

    /// Number of candidates.
    pub fn len(&self) -> usize {
        self.nearest.len()
    }

    /// True when there is no candidate.
    pub fn is_empty(&self) -> bool {
        self.nearest.is_empty()
    }

    /// A candidate's coordinates.
    pub fn point(&self, i: usize) -> &[f32] {
        &self.points[i * self.dim..(i + 1) * self.dim]
    }

    /// Adds a centre anywhere in the space.
    pub fn add_center(&mut self, c: &[f32]) {
        for (i, n) in self.nearest.iter_mut().enumerate() {
            let d = dist(&self.points[i * self.dim..(i + 1) * self.dim], c);
            if d < *n {
                *n = d;
            }
        }
    }

    /// Makes a candidate the next centre (and no longer a candidate).
    pub fn pick(&mut self, i: usize) {
        let c: Vec<f32> = self.point(i).to_vec();
        self.add_center(&c);
        self.alive[i] = false;
    }

    /// Removes a candidate without making it a centre.
    pub fn drop_candidate(&mut self, i: usize) {
        self.alive[i] = false;
    }

    /// Whether a candidate is still available.
    pub fn is_alive(&self, i: usize) -> bool {
        self.alive[i]
    }

    /// A candidate's distance to its nearest centre (infinite before any centre).
    pub fn distance(&self, i: usize) -> f32 {
        self.nearest[i]
    }

    /// The alive candidate farthest from every centre; ties go to the lowest index.
    pub fn farthest(&self) -> Option<usize> {
        self.farthest_among(|_| true)
    }

    /// Like [`Cover::farthest`], among the alive candidates `allowed` accepts.
    pub fn farthest_among(&self, allowed: impl Fn(usize) -> bool) -> Option<usize> {
        let mut best: Option<usize> = None;
        for i in (0..self.len()).filter(|&i| self.alive[i] && allowed(i)) {
            if best.is_none_or(|b| self.nearest[i] > self.nearest[b]) {
                best = Some(i);
            }
        }
        best
    }

    /// Largest distance from an alive candidate to its nearest centre (0 with none alive).
    pub fn radius(&self) -> f32 {
        (0..self.len())
            .filter(|&i| self.alive[i])
            .map(|i| self.nearest[i])
            .fold(0.0, f32::max)
    }
}

/// Plain greedy k-center: up to `budget` picks among `points`, seeded with `seeds` (row-major
/// centres); returns the picks and the covering radius over ALL points after each pick.
pub fn greedy_k_center(
    points: &[f32],
    dim: usize,
    seeds: &[f32],
    budget: usize,
) -> (Vec<usize>, Vec<f32>) {
    let mut cover = Cover::new(points, dim);
    for s in seeds.chunks_exact(dim.max(1)) {
        cover.add_center(s);
    }
    let (mut picks, mut radii) = (Vec::new(), Vec::new());
    while picks.len() < budget {
        let Some(i) = cover.farthest() else { break };
        cover.pick(i);
        picks.push(i);
        radii.push(
            (0..cover.len())
                .map(|j| cover.distance(j))
                .fold(0.0, f32::max),
        );
    }
    (picks, radii)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn worked_example_on_a_line() {
        // Points 0, 1, 2, 6, 10 on a line, no seed; Gonzalez starts at the first point.
        // Pick 0 (radius max(1,2,6,10) = 10), then 10 (radii 0,1,2,4,0 -> 4), then 6
        // (radii 0,1,2,0,0 -> 2), then 2 (-> 1). Worked by hand.
        let pts = [0.0, 1.0, 2.0, 6.0, 10.0];
        let (picks, radii) = greedy_k_center(&pts, 1, &[], 4);
        assert_eq!(picks, vec![0, 4, 3, 2]);
        assert_eq!(radii, vec![10.0, 4.0, 2.0, 1.0]);
    }

    #[test]
    fn seeds_steer_picks_away_from_covered_ground() {
        // Same points, a correction already at 1.5 (distances 1.5, 0.5, 0.5, 4.5, 8.5). Pick 10
        // (6 is now 4 from it: radius 4), then 6 (radius 1.5, the point 0), then 0 (radius 0.5).
        let pts = [0.0, 1.0, 2.0, 6.0, 10.0];
        let (picks, radii) = greedy_k_center(&pts, 1, &[1.5], 3);
        assert_eq!(picks, vec![4, 3, 0]);
        assert_eq!(radii, vec![4.0, 1.5, 0.5]);
    }

    #[test]
    fn worked_example_in_the_plane() {
        // Unit-square corners plus the far point (5, 0). From (0,0) the farthest is (5,0) at 5;
        // then (1,1), whose nearest centre is (0,0) at sqrt2; then every corner is 1 away.
        let pts = [0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 1.0, 1.0, 5.0, 0.0];
        let (picks, radii) = greedy_k_center(&pts, 2, &[], 3);
        assert_eq!(picks, vec![0, 4, 3]);
        assert_eq!(radii[0], 5.0);
        assert!((radii[1] - 2f32.sqrt()).abs() < 1e-6);
        assert_eq!(radii[2], 1.0);
    }
}
