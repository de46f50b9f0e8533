//! The expert: pure pursuit steering with curvature-aware speed control.
//!
//! Pure pursuit (Coulter 1992, "Implementation of the Pure Pursuit Path Tracking Algorithm",
//! CMU-RI-TR-92-01): from the rear axle, pick the path point at look-ahead distance `L_d`;
//! the circular arc through it that is tangent to the current heading has curvature
//! `kappa = 2 sin(alpha) / L_d`, `alpha` being the angle from the heading to the goal point;
//! a bicycle with wheelbase `L` drives that arc with steering `delta = atan(kappa L)`.

use super::features::features;
use super::lane::{Lane, Projection, wrap_angle};
use super::policy::{Action, Observation, Policy};
use super::vehicle::{Bicycle, Pose};

/// Curvature of the pure pursuit arc from a reference point with heading `yaw` to a goal
/// point: `2 sin(alpha) / L_d` (Coulter 1992, sec. 2).
pub fn pursuit_curvature(from: (f64, f64), yaw: f64, goal: (f64, f64)) -> f64 {
    let (dx, dy) = (goal.0 - from.0, goal.1 - from.1);
    let ld = dx.hypot(dy);
    if ld < 1e-9 {
        return 0.0;
    }
    let alpha = wrap_angle(dy.atan2(dx) - yaw);
    2.0 * alpha.sin() / ld
}

/// The pure pursuit expert and its speed controller.
#[derive(Debug, Clone, PartialEq)]
pub struct PurePursuit {
    /// The rover it drives (wheelbase, steering limit).
    pub car: Bicycle,
    /// Look-ahead distance at standstill (m).
    pub lookahead_base: f64,
    /// Look-ahead growth with speed (s): `L_d = base + gain * v`, clipped to the bounds.
    pub lookahead_gain: f64,
    /// Look-ahead bounds (m).
    pub lookahead_bounds: (f64, f64),
    /// Speed on straight stretches (m/s).
    pub cruise_speed: f64,
    /// Lateral acceleration allowed in curves (m/s^2): the target speed is lowered to
    /// `sqrt(a_lat / |kappa|)` for the tightest curvature within the preview.
    pub max_lateral_accel: f64,
    /// Distance ahead scanned for the tightest curvature (m).
    pub preview: f64,
    /// Proportional gain of the speed controller (1/s).
    pub speed_gain: f64,
}

impl Default for PurePursuit {
    fn default() -> Self {
        PurePursuit {
            car: Bicycle::default(),
            lookahead_base: 1.0,
            lookahead_gain: 0.6,
            lookahead_bounds: (1.2, 4.0),
            cruise_speed: 2.4,
            max_lateral_accel: 0.7,
            preview: 6.0,
            speed_gain: 1.2,
        }
    }
}

impl PurePursuit {
    /// The look-ahead distance at speed `v` (m).
    pub fn lookahead(&self, v: f64) -> f64 {
        let (lo, hi) = self.lookahead_bounds;
        (self.lookahead_base + self.lookahead_gain * v).clamp(lo, hi)
    }

    /// The goal point: the first centreline point ahead of `s` at distance `ld` from `from`.
    pub fn goal_point(&self, lane: &Lane, from: (f64, f64), s: f64, ld: f64) -> (f64, f64) {
        let dist = |p: (f64, f64, f64)| (p.0 - from.0).hypot(p.1 - from.1);
        let step = 0.1;
        let mut prev = (s, dist(lane.pose_at(s)));
        let end = s + 2.0 * ld + 1.0;
        let mut u = s;
        while u < end {
            u += step;
            let d = dist(lane.pose_at(u));
            if d >= ld && prev.1 < ld {
                let f = (ld - prev.1) / (d - prev.1);
                let (x, y, _) = lane.pose_at(prev.0 + f * step);
                return (x, y);
            }
            prev = (u, d);
        }
        let (x, y, _) = lane.pose_at(s + ld);
        (x, y)
    }

    /// The steering angle pure pursuit commands at this pose (rad, clipped).
    pub fn steer(&self, lane: &Lane, pose: &Pose, proj: &Projection) -> f64 {
        let rear = self.car.rear_axle(pose);
        let goal = self.goal_point(lane, rear, proj.s, self.lookahead(pose.v));
        let kappa = pursuit_curvature(rear, pose.yaw, goal);
        (kappa * self.car.wheelbase())
            .atan()
            .clamp(-self.car.max_steer, self.car.max_steer)
    }

    /// The target speed at arc length `s`: cruise speed, lowered for the tightest curve
    /// within the preview.
    pub fn target_speed(&self, lane: &Lane, s: f64) -> f64 {
        let samples = (self.preview / 0.5) as usize;
        let tightest = (0..=samples)
            .map(|i| lane.curvature_at(s + i as f64 * 0.5).abs())
            .fold(0.0, f64::max);
        if tightest < 1e-9 {
            return self.cruise_speed;
        }
        (self.max_lateral_accel / tightest)
            .sqrt()
            .min(self.cruise_speed)
    }

    /// The expert's action at a pose: the label for any state the learner visits.
    pub fn expert_action(&self, pose: &Pose, lane: &Lane) -> Action {
        self.action_at(lane, pose, &lane.project(pose.x, pose.y, None))
    }

    fn action_at(&self, lane: &Lane, pose: &Pose, proj: &Projection) -> Action {
        let accel = self.speed_gain * (self.target_speed(lane, proj.s) - pose.v);
        Action {
            steer: self.steer(lane, pose, proj),
            accel,
        }
        .clipped()
    }
}

impl Policy for PurePursuit {
    fn act(&self, obs: &Observation<'_>) -> Action {
        self.action_at(obs.lane, obs.pose, obs.projection)
    }
}

/// The features and expert action of a pose, projected without a hint.
pub fn label(expert: &PurePursuit, lane: &Lane, pose: &Pose) -> (super::Features, Action) {
    let proj = lane.project(pose.x, pose.y, None);
    (
        features(lane, pose, &proj),
        expert.action_at(lane, pose, &proj),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::lane::LaneParams;

    #[test]
    fn pursuit_curvature_worked_example() {
        // Coulter 1992, sec. 2: with the goal at lateral offset x in the vehicle frame and
        // distance l, the arc has curvature 2x / l^2 = 2 sin(alpha) / l. By hand: vehicle at
        // the origin heading along +x, goal (3, 4): l = 5, sin(alpha) = 4/5, kappa = 0.32.
        // Cross-check: the circle tangent to the x axis at the origin through (3, 4) has its
        // centre at (0, R) with 9 + (4 - R)^2 = R^2, R = 25/8, 1/R = 0.32.
        let k = pursuit_curvature((0.0, 0.0), 0.0, (3.0, 4.0));
        assert!((k - 0.32).abs() < 1e-12, "{k}");
        // Same geometry rotated by 90 degrees and shifted: the curvature is unchanged.
        let k = pursuit_curvature((2.0, 1.0), std::f64::consts::FRAC_PI_2, (-2.0, 4.0));
        assert!((k - 0.32).abs() < 1e-12, "{k}");
        // Goal to the right: negative curvature (clockwise arc).
        let k = pursuit_curvature((0.0, 0.0), 0.0, (3.0, -4.0));
        assert!((k + 0.32).abs() < 1e-12);
    }

    #[test]
    fn pursuit_steering_on_a_straight_lane_points_back_to_the_centre() {
        let params = LaneParams {
            max_curvature: 0.0,
            ..LaneParams::default()
        };
        let lane = Lane::generate(1, &params);
        let expert = PurePursuit::default();
        let (x, y) = lane.offset_point(20.0, 0.5);
        let (_, _, h) = lane.pose_at(20.0);
        let v = expert.cruise_speed;
        let pose = Pose { x, y, yaw: h, v };
        let a = expert.expert_action(&pose, &lane);
        // On a straight centreline the goal is L_d ahead along the lane from the rear axle
        // at lateral offset -0.5: alpha = atan2(-0.5, sqrt(L_d^2 - 0.25)), sin(alpha) =
        // -0.5 / L_d, so delta = atan(2 * (-0.5) / L_d^2 * L).
        let ld = expert.lookahead(v);
        let want = (-1.0 / (ld * ld) * expert.car.wheelbase()).atan();
        assert!((a.steer - want).abs() < 2e-3, "{} vs {want}", a.steer);
        assert!(
            a.accel.abs() < 1e-9,
            "at cruise speed on a straight: {}",
            a.accel
        );
        assert_eq!(expert.target_speed(&lane, 20.0), expert.cruise_speed);
    }

    #[test]
    fn target_speed_drops_in_tight_curves() {
        let expert = PurePursuit::default();
        let lane = Lane::generate(2, &LaneParams::default());
        let slowest = (0..150)
            .map(|i| expert.target_speed(&lane, i as f64 * 0.5))
            .fold(f64::INFINITY, f64::min);
        assert!(slowest < expert.cruise_speed);
    }
}
