//! The calibration keeps its promise on fresh expert episodes, and excursion onsets are found
//! where learner episodes leave expert territory.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::novelty::synth::{SynthSpec, campaign, drift_onset, trajectories};
use countersteer::novelty::{build_model, score_round};
use countersteer::progress::Progress;
use countersteer::review::{ExcursionSettings, excursions};

const ALPHA: f64 = 0.05;

/// Margin of the flag share: the share of flagged steps over `m_fresh` fresh episodes has a
/// standard error of at most sqrt(alpha (1 - alpha) / m_fresh) even when steps within an
/// episode are perfectly correlated (each episode's share lies in [0, 1] with mean <= alpha),
/// and the calibration made from `m_cal` held-out episodes adds the same kind of error. Three
/// standard errors of the sum keep a false failure below about 0.2% under a normal
/// approximation of the shares: the approximation and the three-standard-error rule are
/// common practice, not a bound derived for this test. The guarantee the margin surrounds,
/// flag rate at most alpha for exchangeable fresh data, is the conformal one (Vovk et al.
/// 2005; Bates et al. 2023).
fn margin(m_fresh: usize, m_cal: usize) -> f64 {
    3.0 * (ALPHA * (1.0 - ALPHA)).sqrt() * (1.0 / m_fresh as f64 + 1.0 / m_cal as f64).sqrt()
}

#[test]
fn flag_share_on_fresh_expert_episodes_is_at_most_alpha_plus_margin() {
    let demos = trajectories(&SynthSpec::expert(100, 150, 8, 21));
    let fresh = trajectories(&SynthSpec::expert(60, 150, 8, 22));
    let c = campaign(demos, fresh, 5, ALPHA);
    let p = Progress::new();
    let model = build_model(&c, &p).unwrap();
    let s = score_round(&model, &c, &c.rounds[0].steps, &p).unwrap();
    let share = s.flagged_count() as f64 / s.len() as f64;
    let m = margin(60, model.split().calibration.len());
    eprintln!("flag share {share:.4}, bound {:.4}", ALPHA + m);
    assert!(share <= ALPHA + m, "share {share} > {ALPHA} + {m}");
}

#[test]
fn excursion_onsets_are_found_where_drifting_episodes_leave_expert_territory() {
    let mut expert = SynthSpec::expert(100, 150, 8, 21);
    expert.latent = 3;
    let demos = trajectories(&expert);
    let mut learner = SynthSpec {
        seed: 23,
        episodes: 20,
        drift: 0.1,
        ..expert
    };
    learner.prefix = "learner".into();
    let steps = trajectories(&learner);
    let c = campaign(demos, steps, 5, ALPHA);
    let p = Progress::new();
    let model = build_model(&c, &p).unwrap();
    let steps = &c.rounds[0].steps;
    let s = score_round(&model, &c, steps, &p).unwrap();
    let ex = excursions(steps, &s, &ExcursionSettings::default());
    let drift = drift_onset(150);
    for (e, ep) in steps.episodes.iter().enumerate() {
        // Where the episode leaves expert territory for good: the first step after which its
        // novelty stays above the flag threshold.
        let rows: Vec<usize> = ep.rows().collect();
        let out = rows
            .iter()
            .rposition(|&r| s.novelty[r] <= s.threshold)
            .map_or(0, |i| i + 1);
        assert!(out > drift && out < 150, "{}: leaves at {out}", ep.name);
        let x = ex
            .iter()
            .find(|x| x.episode == e && x.onset <= ep.start + out && x.end >= ep.start + out)
            .unwrap_or_else(|| panic!("{}: no excursion holds step {out}", ep.name));
        let onset = x.onset - ep.start;
        // Found no earlier than 5 steps before the drift starts and no later than 5 steps
        // after the episode has left for good (hysteresis may open it a little early).
        assert!(
            onset + 5 >= drift && onset <= out + 5,
            "{}: onset {onset}, drift {drift}, out {out}",
            ep.name
        );
    }
}

/// The same promise on the demo scenario: demonstrations from the orchard-rover simulator, and
/// fresh expert episodes driven on new lanes (another seed).
#[test]
fn flag_share_on_fresh_demo_scenario_expert_episodes_is_at_most_alpha_plus_margin() {
    use countersteer::novelty::build_model_from;
    use countersteer::novelty::scale::feature_scales;
    use countersteer::sim::scenario::run_set;
    use countersteer::sim::write::table;
    use countersteer::sim::{DemoConfig, Drivers, Policy, demo_spec};
    let p = Progress::new();
    let run = |seed: u64, episodes: usize| {
        let cfg = DemoConfig {
            seed,
            episodes,
            ..Default::default()
        };
        let expert = Drivers {
            policy: &cfg.expert as &dyn Policy,
            expert: &cfg.expert,
            ensemble: None,
        };
        table(
            &run_set(&cfg, 0, &expert, &cfg.rollout, &p),
            "frames",
            0,
            false,
        )
    };
    let demos = run(1, 60);
    let fresh = run(2, 30);
    let scale = feature_scales(&demo_spec(), &demos);
    let model = build_model_from(&demos, scale, 5, ALPHA, &p).unwrap();
    let s = countersteer::novelty::score_steps(&model, &demos, &demo_spec().actions, &fresh, &p)
        .unwrap();
    let share = s.flagged_count() as f64 / s.len() as f64;
    let m = margin(30, model.split().calibration.len());
    eprintln!(
        "demo scenario flag share {share:.4}, bound {:.4}",
        ALPHA + m
    );
    assert!(share <= ALPHA + m, "share {share} > {ALPHA} + {m}");
}

/// The expert drives until the lane's arc length passes `from`, then its steering gets a
/// constant bias: a fault whose effect on the state is known, so the step at which the rover
/// leaves expert territory can be read off the simulator instead of the novelty score.
struct BiasedExpert {
    expert: countersteer::sim::PurePursuit,
    from: f64,
    bias: f64,
}

impl countersteer::sim::Policy for BiasedExpert {
    fn act(&self, obs: &countersteer::sim::Observation<'_>) -> countersteer::sim::Action {
        let mut a = self.expert.act(obs);
        if obs.projection.s >= self.from {
            a.steer = self.bias;
        }
        a.clipped()
    }
}

/// Onsets on the orchard-rover simulator. Demonstrations: the expert with injected steering
/// noise (DART). Learner episodes: the same expert on fresh lanes with a steering bias from
/// 30 m on, so the rover drifts out of the lane. Expert territory is taken from the
/// demonstrations alone: the range of lateral offset and heading error they ever visited.
/// The excursion holding the step where the rover leaves that range must open no earlier
/// than the fault and no later than a few steps after leaving.
#[test]
fn excursion_onsets_on_the_simulator_follow_the_rover_out_of_expert_territory() {
    use countersteer::novelty::build_model_from;
    use countersteer::novelty::scale::feature_scales;
    use countersteer::sim::features::{HEADING, LATERAL};
    use countersteer::sim::scenario::{demonstration_runs, run_set};
    use countersteer::sim::write::table;
    use countersteer::sim::{DemoConfig, Drivers, Policy, demo_spec};
    let p = Progress::new();
    let cfg = DemoConfig {
        demo_episodes: 60,
        demo_steer_noise: 0.08,
        episodes: 12,
        ..Default::default()
    };
    let demo_runs = demonstration_runs(&cfg, &p);
    let demos = table(&demo_runs, "frames", 0, false);
    let envelope = |j: usize| {
        (0..demos.len())
            .map(|r| demos.states[r * demos.state_dim + j].abs())
            .fold(0.0f32, f32::max)
    };
    let (lat_max, head_max) = (envelope(LATERAL), envelope(HEADING));
    let faulty = BiasedExpert {
        expert: cfg.expert.clone(),
        from: 30.0,
        bias: 0.08,
    };
    let drivers = Drivers {
        policy: &faulty as &dyn Policy,
        expert: &cfg.expert,
        ensemble: None,
    };
    let fresh = DemoConfig {
        seed: 7,
        ..cfg.clone()
    };
    let runs = run_set(&fresh, 1, &drivers, &fresh.rollout, &p);
    let steps = table(&runs, "frames", 0, false);
    let scale = feature_scales(&demo_spec(), &demos);
    let model = build_model_from(&demos, scale, 5, ALPHA, &p).unwrap();
    let s = countersteer::novelty::score_steps(&model, &demos, &demo_spec().actions, &steps, &p)
        .unwrap();
    let ex = excursions(&steps, &s, &ExcursionSettings::default());
    let mut leads = Vec::new();
    for (e, (ep, run)) in steps.episodes.iter().zip(&runs).enumerate() {
        let fault = run
            .steps
            .iter()
            .position(|st| run.lane.project(st.pose.x, st.pose.y, None).s >= faulty.from)
            .unwrap();
        // Start poses are drawn with a spread and may already lie outside the envelope: only
        // leaving after the fault counts.
        let leave = (fault..ep.len)
            .find(|&i| {
                let r = (ep.start + i) * steps.state_dim;
                steps.states[r + LATERAL].abs() > lat_max
                    || steps.states[r + HEADING].abs() > head_max
            })
            .unwrap_or_else(|| panic!("{}: never leaves expert territory", ep.name));
        let x = ex
            .iter()
            .find(|x| x.episode == e && x.onset <= ep.start + leave && x.end >= ep.start + leave)
            .unwrap_or_else(|| panic!("{}: no excursion holds step {leave}", ep.name));
        let onset = x.onset - ep.start;
        assert!(
            onset + 5 >= fault && onset <= leave + 5,
            "{}: onset {onset}, fault {fault}, leaves at {leave}",
            ep.name
        );
        leads.push(leave as i64 - onset as i64);
    }
    eprintln!(
        "envelope |lateral| {lat_max}, |heading| {head_max}; steps before leaving: {leads:?}"
    );
}
