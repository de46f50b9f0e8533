//! Playback of the selected episode: the playhead advances in real time at a chosen speed.

/// Steps per second at speed 1 when the campaign gives no step duration.
pub const DEFAULT_RATE: f64 = 10.0;
/// Slowest and fastest speed multipliers.
pub const SPEED_RANGE: (f32, f32) = (0.125, 256.0);

/// Transient playback state (not persisted: a reopened window starts paused).
#[derive(Debug, Clone, Default)]
pub struct Playback {
    /// Whether the playhead advances.
    pub playing: bool,
    /// Fractional steps carried to the next frame.
    carry: f64,
}

impl Playback {
    /// Starts or stops.
    pub fn toggle(&mut self) {
        self.playing = !self.playing;
        self.carry = 0.0;
    }

    /// Stops.
    pub fn pause(&mut self) {
        self.playing = false;
        self.carry = 0.0;
    }

    /// Whole steps to advance after `dt` seconds at `speed`, given the campaign's seconds per
    /// step (if any).
    pub fn advance(&mut self, dt: f64, speed: f32, step_seconds: Option<f64>) -> usize {
        if !self.playing {
            return 0;
        }
        let rate = match step_seconds {
            Some(s) if s > 0.0 => 1.0 / s,
            _ => DEFAULT_RATE,
        };
        self.carry += dt.clamp(0.0, 0.25) * rate * speed as f64;
        let whole = self.carry.floor();
        self.carry -= whole;
        whole as usize
    }
}

/// The next speed up or down, by doubling or halving within [`SPEED_RANGE`].
pub fn next_speed(speed: f32, faster: bool) -> f32 {
    let s = if faster { speed * 2.0 } else { speed / 2.0 };
    s.clamp(SPEED_RANGE.0, SPEED_RANGE.1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn advances_by_rate_and_carries_fractions() {
        let mut p = Playback::default();
        assert_eq!(p.advance(1.0, 1.0, None), 0);
        p.toggle();
        // 0.05 s at 10 steps/s is half a step: nothing yet, then one step.
        assert_eq!(p.advance(0.05, 1.0, None), 0);
        assert_eq!(p.advance(0.05, 1.0, None), 1);
        // 50 ms steps at 2x a 20 ms step: 0.05 * 50 * 2 = 5 steps.
        assert_eq!(p.advance(0.05, 2.0, Some(0.02)), 5);
    }

    #[test]
    fn speed_doubles_and_halves_within_range() {
        assert_eq!(next_speed(1.0, true), 2.0);
        assert_eq!(next_speed(1.0, false), 0.5);
        assert_eq!(next_speed(SPEED_RANGE.1, true), SPEED_RANGE.1);
    }
}
