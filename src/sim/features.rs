//! The demo campaign's state features and its spec.

use super::lane::{Lane, Projection, wrap_angle};
use super::policy::{ACCEL_MAX, ACCEL_MIN, STEER_LIMIT};
use super::vehicle::Pose;
use crate::campaign::{ActionChannel, ChannelKind, Feature, Spec};

/// Number of state features.
pub const FEATURE_COUNT: usize = 7;

/// A state vector in spec order.
pub type Features = [f64; FEATURE_COUNT];

/// Feature names, in state-vector order.
pub const FEATURE_NAMES: [&str; FEATURE_COUNT] = [
    "lateral_offset",
    "heading_error",
    "speed",
    "curvature",
    "curvature_2m",
    "curvature_4m",
    "curvature_6m",
];

/// Distances ahead (m) at which the lane curvature features are read.
pub const CURVATURE_AHEAD: [f64; 4] = [0.0, 2.0, 4.0, 6.0];

/// Index of `lateral_offset` in the state vector.
pub const LATERAL: usize = 0;
/// Index of `heading_error` in the state vector.
pub const HEADING: usize = 1;
/// Index of `speed` in the state vector.
pub const SPEED: usize = 2;

/// The state features of a pose: signed lateral offset (m, left positive), heading error
/// (rad, rover yaw minus lane heading), speed (m/s), lane curvature now and 2, 4, 6 m ahead
/// of the closest centreline point (1/m, left turns positive).
pub fn features(lane: &Lane, pose: &Pose, proj: &Projection) -> Features {
    let mut f = [0.0; FEATURE_COUNT];
    f[LATERAL] = proj.lateral;
    f[HEADING] = wrap_angle(pose.yaw - proj.heading);
    f[SPEED] = pose.v;
    for (i, d) in CURVATURE_AHEAD.iter().enumerate() {
        f[3 + i] = lane.curvature_at(proj.s + d);
    }
    f
}

/// The demo campaign's spec: the features above with units and novelty scales, the
/// steering and acceleration channels with their bounds, and the map's position pair.
pub fn demo_spec() -> Spec {
    let units = ["m", "rad", "m/s", "1/m", "1/m", "1/m", "1/m"];
    let scales = [0.25, 0.1, 0.5, 0.1, 0.1, 0.1, 0.1];
    let features = FEATURE_NAMES
        .iter()
        .zip(units)
        .zip(scales)
        .map(|((name, unit), scale)| Feature {
            name: name.to_string(),
            unit: unit.to_string(),
            scale: Some(scale),
            kind: Default::default(),
        })
        .collect();
    let channel = |name: &str, unit: &str, low: f64, high: f64| ActionChannel {
        name: name.into(),
        unit: unit.into(),
        kind: ChannelKind::Continuous { low, high },
    };
    Spec {
        features,
        actions: vec![
            channel("steer", "rad", -STEER_LIMIT, STEER_LIMIT),
            channel("accel", "m/s^2", ACCEL_MIN, ACCEL_MAX),
        ],
        position: Some([FEATURE_NAMES[LATERAL].into(), FEATURE_NAMES[HEADING].into()]),
        outcomes: Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::lane::LaneParams;

    #[test]
    fn demo_spec_is_valid_and_names_its_position_pair() {
        let spec = demo_spec();
        assert!(spec.problems().is_empty(), "{:?}", spec.problems());
        assert_eq!(spec.position_indices(), Some([LATERAL, HEADING]));
        assert_eq!(spec.state_dim(), FEATURE_COUNT);
    }

    #[test]
    fn features_of_an_offset_pose() {
        let lane = Lane::generate(5, &LaneParams::default());
        let (x, y) = lane.offset_point(30.0, -0.4);
        let (_, _, h) = lane.pose_at(30.0);
        let pose = Pose {
            x,
            y,
            yaw: h + 0.2,
            v: 1.5,
        };
        let f = features(&lane, &pose, &lane.project(x, y, None));
        // By construction (the pose was placed 0.4 m right of the centreline, turned 0.2
        // rad); 1e-3 allows for the lane grid's linear interpolation (our own tolerance).
        assert!((f[LATERAL] + 0.4).abs() < 1e-3);
        assert!((f[HEADING] - 0.2).abs() < 1e-3);
        assert_eq!(f[SPEED], 1.5);
        assert!((f[5] - lane.curvature_at(34.0)).abs() < 1e-3);
    }
}

/// Helpers for the learners' worked examples.
#[cfg(test)]
pub(crate) mod examples {
    use super::{FEATURE_COUNT, Features};
    use crate::sim::policy::Action;

    /// A state whose lateral offset is `x` and every other feature 0.
    pub fn at(x: f64) -> Features {
        let mut f = [0.0; FEATURE_COUNT];
        f[0] = x;
        f
    }

    /// One action per steering value, all with acceleration `accel`.
    pub fn steering(values: &[f64], accel: f64) -> Vec<Action> {
        values
            .iter()
            .map(|&steer| Action { steer, accel })
            .collect()
    }
}
