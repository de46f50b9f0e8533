//! Closed loop on fixed seeds: the pure pursuit expert keeps the rover in the lane on every
//! demonstration episode; the demo's learner fit on them leaves the lane in some episodes
//! but not all (covariate shift); scripted interventions keep round 2 inside the lane.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::progress::Progress;
use countersteer::sim::{DemoConfig, departure_share, simulate_demo};

#[test]
fn expert_stays_in_the_lane_and_the_learner_drifts_in_some_episodes() {
    let mut shares = Vec::new();
    for seed in [1, 2, 3] {
        let cfg = DemoConfig {
            seed,
            episodes: 12,
            ..DemoConfig::default()
        };
        let run = simulate_demo(&cfg, &Progress::new()).unwrap();
        for e in &run.demonstrations {
            assert!(
                !e.metrics.left_lane,
                "seed {seed}: expert left the lane in {} (max |offset| {:.3} m)",
                e.name, e.metrics.max_abs_lateral
            );
            assert!(e.metrics.steps > 200, "{} stopped early", e.name);
        }
        let learner = departure_share(&run.rounds[0]);
        let takeover = departure_share(&run.rounds[1]);
        let interventions: usize = run.rounds[1]
            .iter()
            .map(|e| e.metrics.intervention_steps)
            .sum();
        println!(
            "seed {seed}: expert {:.2}, learner {learner:.2}, learner with interventions \
             {takeover:.2} ({interventions} expert steps)",
            departure_share(&run.demonstrations)
        );
        assert_eq!(takeover, 0.0, "the expert takes over before the lane edge");
        assert!(interventions > 0);
        shares.push(learner);
    }
    // Some, not all: over the 36 episodes of the seed set the learner leaves the lane in
    // between 20% and 90% (measured with the radial basis learner: seeds 1-3 give 0.58,
    // 0.50, 0.58; the linear ridge learner gave 0.25, 0.33, 0.00).
    let mean = shares.iter().sum::<f64>() / shares.len() as f64;
    println!("learner departure share over the seed set: {mean:.3}");
    assert!(
        (0.2..=0.9).contains(&mean),
        "mean learner departure share {mean}"
    );
}
