//! Per-phase (Mondrian) calibration keeps the flag promise in every phase of an episode,
//! including its first steps, when start states are rare among the demonstrations.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::campaign::StepTable;
use countersteer::novelty::synth::{Rng, SynthSpec, campaign, trajectories};
use countersteer::novelty::{build_model, score_round};
use countersteer::progress::Progress;

const ALPHA: f64 = 0.05;

/// Expert-like episodes that each start from their own pose: a random offset of about 8
/// units per feature at step 0, decaying with a time constant of 10 steps.
fn with_start_poses(mut t: StepTable, seed: u64) -> StepTable {
    let mut rng = Rng::new(seed);
    let d = t.state_dim;
    for e in t.episodes.clone() {
        let offset: Vec<f32> = (0..d).map(|_| 8.0 * rng.normal() as f32).collect();
        for (pos, row) in e.rows().enumerate() {
            let w = (-(pos as f32) / 10.0).exp();
            for (x, o) in t.states[row * d..(row + 1) * d].iter_mut().zip(&offset) {
                *x += w * o;
            }
        }
    }
    t
}

/// Three binomial standard errors of a flag share (normal approximation; common practice),
/// counting episodes rather than steps (steps of one episode are correlated; each episode's
/// share lies in [0, 1] with mean at most alpha), for the fresh episodes and for the
/// calibration episodes.
fn margin(m_fresh: usize, m_cal: usize) -> f64 {
    3.0 * (ALPHA * (1.0 - ALPHA)).sqrt() * (1.0 / m_fresh as f64 + 1.0 / m_cal as f64).sqrt()
}

#[test]
fn every_phase_of_fresh_expert_episodes_is_flagged_at_most_alpha_plus_margin() {
    let demos = with_start_poses(trajectories(&SynthSpec::expert(200, 150, 6, 31)), 1);
    let mut fresh = SynthSpec::expert(200, 150, 6, 32);
    fresh.prefix = "fresh".into();
    let fresh = with_start_poses(trajectories(&fresh), 2);
    let c = campaign(demos, fresh, 5, ALPHA);
    let p = Progress::new();
    let model = build_model(&c, &p).unwrap();
    let steps = &c.rounds[0].steps;
    let s = score_round(&model, &c, steps, &p).unwrap();
    let phased = model.phased();
    // 200 calibrating episodes (every one, in 5 folds): phases from the first step, doubling.
    assert_eq!(phased.starts(), &[0, 1, 2, 4, 8, 16, 32, 64]);
    let m = margin(200, model.split().calibration.len());
    let share = |rows: &dyn Fn(usize) -> bool, flag: &dyn Fn(usize) -> bool| {
        let n = (0..s.len()).filter(|&r| rows(r)).count();
        (0..s.len()).filter(|&r| rows(r) && flag(r)).count() as f64 / n as f64
    };
    let own = |r: usize| s.flagged[r];
    let pooled = |r: usize| model.conformal().flagged(s.novelty[r]);
    let first10 = |r: usize| steps.position(r) < 10;
    for i in 0..phased.parts().len() {
        let in_phase = |r: usize| phased.phase(steps.position(r)) == i;
        let f = share(&in_phase, &own);
        eprintln!(
            "phase {i}: {f:.4} (pooled {:.4})",
            share(&in_phase, &pooled)
        );
        assert!(f <= ALPHA + m, "phase {i}: {f} > {ALPHA} + {m}");
    }
    let (f, before) = (share(&first10, &own), share(&first10, &pooled));
    eprintln!("first 10 steps: {f:.4}, pooled calibration {before:.4}");
    assert!(f <= ALPHA + m, "first 10 steps: {f}");
    // The pooled calibration breaks the promise at the start: the data can tell them apart.
    assert!(before > ALPHA + m, "pooled first 10 steps: {before}");
}

#[test]
fn every_episode_calibrates_and_few_episodes_are_warned_about() {
    let p = Progress::new();
    for (episodes, warned) in [(5, true), (12, false)] {
        let demos = trajectories(&SynthSpec::expert(episodes, 60, 4, 7));
        let mut fresh = SynthSpec::expert(4, 60, 4, 8);
        fresh.prefix = "fresh".into();
        let c = campaign(demos, trajectories(&fresh), 5, ALPHA);
        let model = build_model(&c, &p).unwrap();
        // Cross-conformal folds: min(5, episodes) folds, together every episode once.
        let split = model.split();
        assert_eq!(split.folds.len(), 5);
        assert_eq!(split.calibration, (0..episodes).collect::<Vec<_>>());
        let sizes: Vec<usize> = split.folds.iter().map(Vec::len).collect();
        assert_eq!(sizes.iter().sum::<usize>(), episodes, "{sizes:?}");
        assert!(sizes.iter().max().unwrap() - sizes.iter().min().unwrap() <= 1);
        let w = model.warnings().join("\n");
        assert_eq!(
            w.contains(&format!("only {episodes} demonstration episode(s)")),
            warned,
            "{w}"
        );
    }
}
