//! The orchard lane: a smooth centreline between two tree rows.
//!
//! The centreline is defined by its curvature as a function of arc length, a ramped sum of
//! sinusoids whose wavelengths, amplitudes and phases vary by seed. Heading and position are
//! integrated from it on a fine arc-length grid. Lateral offsets are positive to the left of
//! the direction of travel; headings are counter-clockwise from the world x axis.

use super::rng::SplitMix64;

/// Arc-length spacing of the sampled centreline (m).
const DS: f64 = 0.05;

/// How a lane is generated.
#[derive(Debug, Clone, PartialEq)]
pub struct LaneParams {
    /// Centreline length (m).
    pub length: f64,
    /// Half the drivable width (m): the rover has left the lane beyond this lateral offset.
    pub half_width: f64,
    /// Largest curvature of the centreline (1/m).
    pub max_curvature: f64,
    /// Length of the straight run-in before the curvature ramps up (m).
    pub run_in: f64,
    /// Distance between trees along a row (m).
    pub tree_spacing: f64,
    /// Lateral offset of the tree rows' trunks from the centreline (m).
    pub row_offset: f64,
}

impl Default for LaneParams {
    fn default() -> Self {
        LaneParams {
            length: 80.0,
            half_width: 1.2,
            max_curvature: 0.24,
            run_in: 4.0,
            tree_spacing: 2.5,
            row_offset: 2.1,
        }
    }
}

/// One tree of a row, for pictures (position and canopy radius, m).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tree {
    /// World x (m).
    pub x: f64,
    /// World y (m).
    pub y: f64,
    /// Canopy radius (m).
    pub radius: f64,
}

/// A point's place relative to the centreline.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Projection {
    /// Arc length of the closest centreline point (m).
    pub s: f64,
    /// Signed lateral offset, positive to the left (m).
    pub lateral: f64,
    /// Centreline heading at `s` (rad).
    pub heading: f64,
    /// Index of the closest grid sample, a hint for the next projection.
    pub index: usize,
}

/// A generated lane.
#[derive(Debug, Clone, PartialEq)]
pub struct Lane {
    params: LaneParams,
    /// Curvature terms: (amplitude 1/m, wavenumber rad/m, phase rad).
    terms: Vec<(f64, f64, f64)>,
    xs: Vec<f64>,
    ys: Vec<f64>,
    headings: Vec<f64>,
    trees: Vec<Tree>,
}

impl Lane {
    /// Generates the lane of a seed.
    pub fn generate(seed: u64, params: &LaneParams) -> Lane {
        let mut rng = SplitMix64::new(seed);
        let weights: Vec<f64> = (0..3).map(|_| rng.range(0.4, 1.0)).collect();
        let total: f64 = weights.iter().sum();
        let terms = weights
            .iter()
            .map(|w| {
                let wavelength = rng.range(14.0, 40.0);
                let amplitude = params.max_curvature * w / total;
                let phase = rng.range(0.0, std::f64::consts::TAU);
                (amplitude, std::f64::consts::TAU / wavelength, phase)
            })
            .collect();
        let mut lane = Lane {
            params: params.clone(),
            terms,
            xs: Vec::new(),
            ys: Vec::new(),
            headings: Vec::new(),
            trees: Vec::new(),
        };
        lane.integrate(rng.range(0.0, std::f64::consts::TAU));
        lane.plant_trees(&mut rng);
        lane
    }

    fn integrate(&mut self, heading0: f64) {
        let n = (self.params.length / DS).ceil() as usize + 1;
        let (mut x, mut y, mut h) = (0.0, 0.0, heading0);
        for i in 0..n {
            self.xs.push(x);
            self.ys.push(y);
            self.headings.push(h);
            let s = i as f64 * DS;
            let dh = 0.5 * DS * (self.curvature_at(s) + self.curvature_at(s + DS));
            let mid = h + 0.5 * dh;
            x += DS * mid.cos();
            y += DS * mid.sin();
            h += dh;
        }
    }

    fn plant_trees(&mut self, rng: &mut SplitMix64) {
        let p = &self.params;
        let count = (p.length / p.tree_spacing) as usize + 2;
        let mut trees = Vec::with_capacity(2 * count);
        for k in 0..count {
            for side in [1.0, -1.0] {
                let s = k as f64 * p.tree_spacing + rng.range(-0.3, 0.3) - 1.0;
                let offset = side * (p.row_offset + rng.range(-0.15, 0.15));
                let radius = rng.range(0.55, 0.8);
                if rng.uniform() < 0.04 {
                    continue; // a gap in the row
                }
                let (x, y) = self.offset_point(s, offset);
                trees.push(Tree { x, y, radius });
            }
        }
        self.trees = trees;
    }

    /// The generation parameters.
    pub fn params(&self) -> &LaneParams {
        &self.params
    }

    /// Half the drivable width (m).
    pub fn half_width(&self) -> f64 {
        self.params.half_width
    }

    /// Centreline length (m).
    pub fn length(&self) -> f64 {
        (self.xs.len() - 1) as f64 * DS
    }

    /// The trees of both rows.
    pub fn trees(&self) -> &[Tree] {
        &self.trees
    }

    /// Centreline curvature at arc length `s` (1/m), exact (not interpolated). Beyond the
    /// ends the profile continues analytically.
    pub fn curvature_at(&self, s: f64) -> f64 {
        let run_in = self.params.run_in;
        let ramp = if s <= run_in {
            0.0
        } else {
            let u = ((s - run_in) / 6.0).min(1.0);
            u * u * (3.0 - 2.0 * u) // smoothstep
        };
        ramp * self
            .terms
            .iter()
            .map(|(a, k, phi)| a * (k * s + phi).sin())
            .sum::<f64>()
    }

    /// Centreline point and heading at arc length `s` (clamped to the lane), interpolated.
    pub fn pose_at(&self, s: f64) -> (f64, f64, f64) {
        let u = (s / DS).clamp(0.0, (self.xs.len() - 1) as f64);
        let i = (u as usize).min(self.xs.len() - 2);
        let f = u - i as f64;
        let lerp = |v: &[f64]| v[i] + f * (v[i + 1] - v[i]);
        (lerp(&self.xs), lerp(&self.ys), lerp(&self.headings))
    }

    /// The world point at lateral offset `offset` (left positive) from the centreline at `s`.
    pub fn offset_point(&self, s: f64, offset: f64) -> (f64, f64) {
        let (x, y, h) = self.pose_at(s);
        (x - offset * h.sin(), y + offset * h.cos())
    }

    /// Projects a world point onto the centreline. With a `hint` (the index of an earlier,
    /// nearby projection) only a window around it is searched; otherwise the whole lane.
    pub fn project(&self, x: f64, y: f64, hint: Option<usize>) -> Projection {
        let n = self.xs.len();
        let (lo, hi) = match hint {
            Some(h) => (h.saturating_sub(60), (h + 240).min(n)),
            None => (0, n),
        };
        let d2 = |i: usize| (self.xs[i] - x).powi(2) + (self.ys[i] - y).powi(2);
        let mut best = lo;
        for i in lo..hi {
            if d2(i) < d2(best) {
                best = i;
            }
        }
        let (a, t) = self.refine(best, x, y);
        let s = (a as f64 + t) * DS;
        let (cx, cy, heading) = self.pose_at(s);
        let lateral = -(x - cx) * heading.sin() + (y - cy) * heading.cos();
        Projection {
            s,
            lateral,
            heading,
            index: best,
        }
    }

    /// The closest point on the segments beside sample `i`: (segment start, fraction).
    fn refine(&self, i: usize, x: f64, y: f64) -> (usize, f64) {
        let n = self.xs.len();
        let mut best = (i.min(n - 2), 0.0, f64::INFINITY);
        for a in [i.saturating_sub(1), i.min(n - 2)] {
            let (dx, dy) = (self.xs[a + 1] - self.xs[a], self.ys[a + 1] - self.ys[a]);
            let len2 = dx * dx + dy * dy;
            let t = (((x - self.xs[a]) * dx + (y - self.ys[a]) * dy) / len2).clamp(0.0, 1.0);
            let d = (self.xs[a] + t * dx - x).powi(2) + (self.ys[a] + t * dy - y).powi(2);
            if d < best.2 {
                best = (a, t, d);
            }
        }
        (best.0, best.1)
    }

    /// Centreline samples between arc lengths `from` and `to`, every `step` metres, as
    /// world points (for pictures).
    pub fn polyline(&self, from: f64, to: f64, step: f64) -> Vec<(f64, f64)> {
        let from = from.max(0.0);
        let to = to.min(self.length());
        let count = ((to - from) / step).ceil().max(0.0) as usize;
        (0..=count)
            .map(|k| {
                let (x, y, _) = self.pose_at((from + k as f64 * step).min(to));
                (x, y)
            })
            .collect()
    }
}

/// Wraps an angle to `(-pi, pi]`.
pub fn wrap_angle(a: f64) -> f64 {
    let tau = std::f64::consts::TAU;
    let w = a - tau * (a / tau).round();
    if w <= -std::f64::consts::PI {
        w + tau
    } else {
        w
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn integrated_heading_matches_the_integral_of_curvature() {
        // Heading is the integral of curvature along arc length (plane curve geometry):
        // check the grid against a fine Simpson quadrature of the analytic profile.
        let lane = Lane::generate(3, &LaneParams::default());
        let (s_end, n) = (50.0, 20_000);
        let h = s_end / n as f64;
        let simpson: f64 = (0..=n)
            .map(|i| {
                let w = if i == 0 || i == n {
                    1.0
                } else if i % 2 == 1 {
                    4.0
                } else {
                    2.0
                };
                w * lane.curvature_at(i as f64 * h)
            })
            .sum::<f64>()
            * h
            / 3.0;
        let (_, _, h0) = lane.pose_at(0.0);
        let (_, _, h1) = lane.pose_at(s_end);
        // Source: heading change = integral of curvature (textbook differential geometry),
        // evaluated by composite Simpson's rule; the tolerance is common practice for a
        // 5 cm grid.
        assert!((h1 - h0 - simpson).abs() < 1e-4, "{} vs {simpson}", h1 - h0);
    }

    #[test]
    fn projection_recovers_offset_points() {
        let lane = Lane::generate(11, &LaneParams::default());
        // Grid spacing 5 cm: positions are interpolated linearly, so a point 0.9 m off a
        // curved centreline projects within millimetres.
        for (s, off) in [(5.0, 0.3), (20.0, -0.9), (47.3, 1.1), (70.0, 0.0)] {
            let (x, y) = lane.offset_point(s, off);
            let p = lane.project(x, y, None);
            // By construction (the point was placed at `s`); 5 mm tolerance is our own.
            assert!((p.s - s).abs() < 5e-3, "s {} vs {s}", p.s);
            assert!(
                (p.lateral - off).abs() < 1e-3,
                "lateral {} vs {off}",
                p.lateral
            );
            let hinted = lane.project(x, y, Some(p.index.saturating_sub(10)));
            assert_eq!(hinted, p);
        }
    }

    #[test]
    fn curvature_stays_within_the_declared_maximum_and_starts_straight() {
        let params = LaneParams::default();
        for seed in 0..20 {
            let lane = Lane::generate(seed, &params);
            assert_eq!(lane.curvature_at(1.0), 0.0);
            let peak = (0..1600)
                .map(|i| lane.curvature_at(i as f64 * 0.05).abs())
                .fold(0.0, f64::max);
            assert!(peak <= params.max_curvature + 1e-12);
            // Our own bound (0.3): every generated lane actually curves.
            assert!(peak > 0.3 * params.max_curvature, "seed {seed} peak {peak}");
        }
    }

    #[test]
    fn wrap_angle_folds_into_half_open_interval() {
        use std::f64::consts::PI;
        assert!((wrap_angle(3.0 * PI) - PI).abs() < 1e-12);
        assert!((wrap_angle(-PI) - PI).abs() < 1e-12);
        assert!((wrap_angle(0.5 + 4.0 * PI) - 0.5).abs() < 1e-12);
    }
}
