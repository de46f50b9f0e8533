//! Actions, what a policy observes, and the policy trait shared by the expert and learners.

use super::features::Features;
use super::lane::{Lane, Projection};
use super::vehicle::Pose;

/// Steering bound of the demo spec (rad): actions are clipped to `[-STEER_LIMIT, STEER_LIMIT]`.
pub const STEER_LIMIT: f64 = 0.5;
/// Lower acceleration bound of the demo spec (m/s^2).
pub const ACCEL_MIN: f64 = -2.0;
/// Upper acceleration bound of the demo spec (m/s^2).
pub const ACCEL_MAX: f64 = 1.5;

/// One action: front steering angle and acceleration.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Action {
    /// Steering angle, positive to the left (rad).
    pub steer: f64,
    /// Acceleration along the direction of travel (m/s^2).
    pub accel: f64,
}

impl Action {
    /// The action with each channel clipped to the demo spec's bounds.
    pub fn clipped(self) -> Action {
        Action {
            steer: self.steer.clamp(-STEER_LIMIT, STEER_LIMIT),
            accel: self.accel.clamp(ACCEL_MIN, ACCEL_MAX),
        }
    }

    /// The action as a vector in spec order (steer, accel).
    pub fn to_array(self) -> [f64; 2] {
        [self.steer, self.accel]
    }

    /// An action from a vector in spec order.
    pub fn from_array(a: [f64; 2]) -> Action {
        Action {
            steer: a[0],
            accel: a[1],
        }
    }
}

/// What a policy sees at one step: the true pose and lane (the expert uses the geometry)
/// and the state features (learners use only these).
#[derive(Debug, Clone, Copy)]
pub struct Observation<'a> {
    /// The rover's pose and speed.
    pub pose: &'a Pose,
    /// The lane.
    pub lane: &'a Lane,
    /// The pose projected onto the lane's centreline.
    pub projection: &'a Projection,
    /// The state features, in spec order.
    pub features: &'a Features,
}

/// A driving policy.
pub trait Policy {
    /// The action to take (already clipped to the spec's bounds).
    fn act(&self, obs: &Observation<'_>) -> Action;
}
