//! The rover's motion: the kinematic bicycle model.
//!
//! Kong, Pfeiffer, Schildbach & Borrelli 2015, "Kinematic and dynamic vehicle models for
//! autonomous driving control design" (IEEE IV), eq. 1a-1e; also Rajamani 2012, "Vehicle
//! Dynamics and Control", sec. 2.2. The state is the centre of mass (x, y), the yaw and the
//! speed; the inputs are the front steering angle delta and the acceleration a:
//!
//! ```text
//! x' = v cos(yaw + beta)    y' = v sin(yaw + beta)    yaw' = (v / l_r) sin(beta)    v' = a
//! beta = atan(l_r / (l_f + l_r) * tan(delta))
//! ```

/// The rover's pose and speed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pose {
    /// Centre of mass, world x (m).
    pub x: f64,
    /// Centre of mass, world y (m).
    pub y: f64,
    /// Yaw, counter-clockwise from the world x axis (rad).
    pub yaw: f64,
    /// Speed along the velocity direction (m/s).
    pub v: f64,
}

/// Geometry and limits of the rover.
#[derive(Debug, Clone, PartialEq)]
pub struct Bicycle {
    /// Distance from the centre of mass to the front axle (m).
    pub l_f: f64,
    /// Distance from the centre of mass to the rear axle (m).
    pub l_r: f64,
    /// Largest steering angle magnitude (rad).
    pub max_steer: f64,
    /// Largest speed (m/s); the rover does not reverse.
    pub max_speed: f64,
}

impl Default for Bicycle {
    fn default() -> Self {
        Bicycle {
            l_f: 0.45,
            l_r: 0.45,
            max_steer: 0.5,
            max_speed: 3.5,
        }
    }
}

/// Slip angle of the centre-of-mass velocity, `beta = atan(l_r / (l_f + l_r) * tan(delta))`
/// (Kong et al. 2015, eq. 1e).
pub fn slip_angle(l_f: f64, l_r: f64, delta: f64) -> f64 {
    (l_r / (l_f + l_r) * delta.tan()).atan()
}

impl Bicycle {
    /// Wheelbase `l_f + l_r` (m).
    pub fn wheelbase(&self) -> f64 {
        self.l_f + self.l_r
    }

    /// Time derivative of (x, y, yaw, v) under steering `delta` and acceleration `a`
    /// (Kong et al. 2015, eq. 1a-1d).
    pub fn derivative(&self, p: &Pose, delta: f64, a: f64) -> [f64; 4] {
        let beta = slip_angle(self.l_f, self.l_r, delta);
        [
            p.v * (p.yaw + beta).cos(),
            p.v * (p.yaw + beta).sin(),
            p.v / self.l_r * beta.sin(),
            a,
        ]
    }

    /// Advances the pose by `dt` with inputs held constant (classical fourth-order
    /// Runge-Kutta). The steering is clipped to `max_steer`, the speed to `[0, max_speed]`.
    pub fn step(&self, p: &Pose, delta: f64, a: f64, dt: f64) -> Pose {
        let delta = delta.clamp(-self.max_steer, self.max_steer);
        let add = |p: &Pose, k: &[f64; 4], h: f64| Pose {
            x: p.x + h * k[0],
            y: p.y + h * k[1],
            yaw: p.yaw + h * k[2],
            v: p.v + h * k[3],
        };
        let k1 = self.derivative(p, delta, a);
        let k2 = self.derivative(&add(p, &k1, dt / 2.0), delta, a);
        let k3 = self.derivative(&add(p, &k2, dt / 2.0), delta, a);
        let k4 = self.derivative(&add(p, &k3, dt), delta, a);
        let k: [f64; 4] = std::array::from_fn(|i| (k1[i] + 2.0 * (k2[i] + k3[i]) + k4[i]) / 6.0);
        let mut next = add(p, &k, dt);
        next.v = next.v.clamp(0.0, self.max_speed);
        next
    }

    /// Yaw rate at this pose under steering `delta` (rad/s).
    pub fn yaw_rate(&self, p: &Pose, delta: f64) -> f64 {
        self.derivative(p, delta, 0.0)[2]
    }

    /// Position of the rear axle's midpoint (the pure pursuit reference point).
    pub fn rear_axle(&self, p: &Pose) -> (f64, f64) {
        (p.x - self.l_r * p.yaw.cos(), p.y - self.l_r * p.yaw.sin())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slip_angle_worked_example() {
        // beta = atan(l_r / L * tan delta) (Kong et al. 2015, eq. 1e); by hand for
        // l_f = 1, l_r = 1 and tan delta = 1: beta = atan(0.5) = 0.4636476 rad.
        let beta = slip_angle(1.0, 1.0, std::f64::consts::FRAC_PI_4);
        assert!((beta - 0.463_647_609_000_806_1).abs() < 1e-12);
        // Rear-axle reference (l_r = 0): no slip at the reference point.
        assert_eq!(slip_angle(1.0, 0.0, 0.3), 0.0);
        // Front-axle reference (l_f = 0): the velocity points along the front wheel.
        assert!((slip_angle(0.0, 1.0, 0.3) - 0.3).abs() < 1e-12);
    }

    #[test]
    fn constant_steer_follows_the_closed_form_circle() {
        // With v and delta constant, beta is constant and yaw' = v sin(beta) / l_r, so the
        // centre of mass moves on a circle of radius R = l_r / sin(beta) (Kong et al. 2015,
        // eq. 1; Rajamani 2012, sec. 2.2), equivalently R = sqrt(l_r^2 + L^2 cot^2 delta)
        // by the rear-axle geometry.
        let car = Bicycle {
            l_f: 0.5,
            l_r: 0.4,
            max_steer: 0.6,
            max_speed: 10.0,
        };
        let (delta, v, dt) = (0.3_f64, 2.0, 0.01);
        let beta = slip_angle(car.l_f, car.l_r, delta);
        let r = car.l_r / beta.sin();
        let l = car.wheelbase();
        assert!((r - (car.l_r.powi(2) + (l / delta.tan()).powi(2)).sqrt()).abs() < 1e-12);
        let start = Pose {
            x: 1.0,
            y: -2.0,
            yaw: 0.7,
            v,
        };
        let omega = v / r;
        let mut p = start;
        for k in 1..=1000 {
            p = car.step(&p, delta, 0.0, dt);
            let t = k as f64 * dt;
            let phi0 = start.yaw + beta;
            let x = start.x + r * ((phi0 + omega * t).sin() - phi0.sin());
            let y = start.y - r * ((phi0 + omega * t).cos() - phi0.cos());
            assert!((p.x - x).abs() < 1e-9 && (p.y - y).abs() < 1e-9, "t {t}");
            assert!((p.yaw - (start.yaw + omega * t)).abs() < 1e-12);
        }
    }

    #[test]
    fn speed_never_goes_negative_and_steering_is_clipped() {
        let car = Bicycle::default();
        let p = Pose {
            x: 0.0,
            y: 0.0,
            yaw: 0.0,
            v: 0.1,
        };
        assert_eq!(car.step(&p, 0.0, -5.0, 0.1).v, 0.0);
        let wide = car.step(&p, 3.0, 0.0, 0.1);
        let limit = car.step(&p, car.max_steer, 0.0, 0.1);
        assert_eq!(wide, limit);
    }
}
