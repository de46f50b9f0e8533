//! The review list: budget, minimum gap, no re-asking near corrections, and the saved files.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::campaign::StepTable;
use countersteer::novelty::store::{ScoresKey, load_scores, save_scores};
use countersteer::novelty::synth::{SynthSpec, campaign, trajectories};
use countersteer::novelty::{RoundScores, build_model, score_round};
use countersteer::progress::Progress;
use countersteer::review::kcenter::dist;
use countersteer::review::{PlanNote, PlanSettings, Planner, Reason, plan, states_of_rows};

fn scored() -> (StepTable, RoundScores) {
    let mut expert = SynthSpec::expert(40, 120, 6, 31);
    expert.latent = 3;
    let demos = trajectories(&expert);
    let mut learner = SynthSpec {
        seed: 32,
        episodes: 20,
        drift: 0.08,
        ..expert
    };
    learner.prefix = "learner".into();
    let mut steps = trajectories(&learner);
    // The expert takes over from step 100 of every other episode.
    steps.interventions = (0..steps.len())
        .map(|r| steps.episode_of(r).is_multiple_of(2) && steps.t[r] >= 100)
        .collect();
    let c = campaign(demos, steps, 5, 0.05);
    let p = Progress::new();
    let model = build_model(&c, &p).unwrap();
    let s = score_round(&model, &c, &c.rounds[0].steps, &p).unwrap();
    (c.rounds[0].steps.clone(), s)
}

fn scaled(steps: &StepTable, s: &RoundScores, row: usize) -> Vec<f32> {
    steps
        .state(row)
        .iter()
        .zip(&s.scale)
        .map(|(x, k)| x / k)
        .collect()
}

#[test]
fn review_list_respects_budget_gap_and_corrections() {
    let (steps, s) = scored();
    let settings = PlanSettings {
        budget: 12,
        min_gap: 8,
        ..Default::default()
    };
    let planner = Planner::new(&steps, &s, &settings);
    let first = planner.plan(&steps, &s, &[]);
    assert_eq!(first.entries.len(), 12);
    assert!(
        first
            .entries
            .iter()
            .any(|e| e.reasons.contains(&Reason::ExcursionOnset))
    );
    assert!(
        first
            .entries
            .iter()
            .any(|e| e.reasons.contains(&Reason::BeforeIntervention))
    );
    // The expert corrects the first five entries; the new list must not ask again near them.
    let corrected: Vec<usize> = first.entries.iter().take(5).map(|e| e.row).collect();
    let states = states_of_rows(&steps, &corrected);
    let again = planner.plan(&steps, &s, &states);
    assert!(again.entries.len() <= 12);
    for e in &again.entries {
        assert!(!corrected.contains(&e.row));
        for &c in &corrected {
            let d = dist(&scaled(&steps, &s, e.row), &scaled(&steps, &s, c));
            assert!(
                d >= again.covering_radius,
                "entry {} is {d} from correction {c}, radius {}",
                e.row,
                again.covering_radius
            );
        }
    }
    for list in [&first, &again] {
        for (i, a) in list.entries.iter().enumerate() {
            for b in &list.entries[i + 1..] {
                if a.episode == b.episode {
                    assert!(
                        (a.t - b.t).abs() >= 8,
                        "rows {} and {} too close",
                        a.row,
                        b.row
                    );
                }
            }
        }
    }
    // Same inputs, same list; the one-call form agrees with the planner.
    assert_eq!(plan(&steps, &s, &states, &settings), again);
}

#[test]
fn min_distance_stops_the_list_when_the_ground_is_covered() {
    let (steps, s) = scored();
    let settings = PlanSettings {
        budget: 1000,
        min_distance: f32::MAX,
        ..Default::default()
    };
    let corrected = states_of_rows(&steps, &[0]);
    assert!(plan(&steps, &s, &corrected, &settings).entries.is_empty());
}

#[test]
fn saved_scores_read_back_identically() {
    let (steps, s) = scored();
    let dir = tempfile::tempdir().unwrap();
    let key = ScoresKey {
        model: "m".into(),
        data: "d".into(),
    };
    let path = save_scores(dir.path(), 3, &steps, &s, &key).unwrap();
    assert!(path.ends_with("analysis/3/scores.npz"));
    let (back, back_key) = load_scores(dir.path(), 3, &steps).unwrap();
    assert_eq!(back_key, key);
    assert_eq!(back.novelty, s.novelty);
    assert_eq!(back.flagged, s.flagged);
    assert_eq!(back.neighbours, s.neighbours);
    assert_eq!(back.contributions, s.contributions);
    assert_eq!(
        (back.threshold, back.alpha, back.k),
        (s.threshold, s.alpha, s.k)
    );
    assert!(back.ensemble_spread.iter().all(|x| x.is_nan()));
    // A round that changed since it was scored is refused with the file and array named.
    let mut shorter = steps.clone();
    shorter.t.pop();
    let err = load_scores(dir.path(), 3, &shorter)
        .unwrap_err()
        .to_string();
    assert!(err.contains("scores.npz") && err.contains("`t`"), "{err}");
}

#[test]
fn fillers_spend_the_budget_only_after_the_other_candidates() {
    let (steps, s) = scored();
    let big = PlanSettings {
        budget: 400,
        min_gap: 3,
        ..Default::default()
    };
    let without = plan(
        &steps,
        &s,
        &[],
        &PlanSettings {
            fill: false,
            ..big.clone()
        },
    );
    let with = plan(&steps, &s, &[], &big);
    let filler = |e: &countersteer::review::ReviewEntry| e.reasons == [Reason::InsideExcursion];
    assert!(without.entries.iter().all(|e| !filler(e)));
    assert!(
        with.entries.len() > without.entries.len() && with.entries.len() <= 400,
        "{} then {}",
        without.entries.len(),
        with.entries.len()
    );
    // Every non-filler candidate is picked (or dropped by the gap) before the first filler:
    // the first picks are exactly the list made without fillers.
    // The fillers' shortfall (if any) is drawn from the visited steps: those come last.
    let mut by_pick: Vec<_> = with
        .entries
        .iter()
        .filter(|e| e.reasons != [Reason::Sampled])
        .cloned()
        .collect();
    by_pick.sort_by_key(|e| e.pick);
    let n = without.entries.len();
    assert!(by_pick[..n].iter().all(|e| !filler(e)));
    assert!(by_pick[n..].iter().all(filler));
    let rows = |v: &[countersteer::review::ReviewEntry]| {
        let mut r: Vec<usize> = v.iter().map(|e| e.row).collect();
        r.sort_unstable();
        r
    };
    assert_eq!(rows(&by_pick[..n]), rows(&without.entries));
    // A filler is a flagged step (p-value at most alpha) strictly inside an excursion.
    let ex = countersteer::review::excursions(&steps, &s, &big.excursion);
    for e in by_pick[n..].iter() {
        assert!(s.p_value[e.row] <= s.alpha as f32);
        assert!(
            ex.iter()
                .any(|x| x.onset < e.row && e.row <= x.end && e.row != x.peak),
            "row {}",
            e.row
        );
    }
    // Fillers too are picked farthest first: their distances never increase.
    for w in by_pick[n..].windows(2) {
        assert!(w[1].distance <= w[0].distance);
    }
}

#[test]
fn the_budget_is_spent_and_the_shortfall_is_drawn_with_its_probability() {
    let (steps, s) = scored();
    let n = steps.len();
    // More budget than the focused candidates can fill: the rest is drawn uniformly from the
    // steps not yet on the list, each with probability (rest) / (steps left), and a note says so.
    let settings = PlanSettings {
        budget: 600,
        ..Default::default()
    };
    let list = plan(&steps, &s, &[], &settings);
    assert_eq!(list.entries.len(), 600);
    let sampled: Vec<_> = list
        .entries
        .iter()
        .filter(|e| e.reasons == [Reason::Sampled])
        .collect();
    let focused = 600 - sampled.len();
    assert!(!sampled.is_empty() && focused > 0, "{focused} focused");
    let expected = sampled.len() as f64 / (n - focused) as f64;
    for e in &sampled {
        assert!((e.inclusion - expected).abs() < 1e-12, "{}", e.inclusion);
    }
    assert!(
        list.entries
            .iter()
            .all(|e| e.reasons == [Reason::Sampled] || e.inclusion == 1.0)
    );
    assert_eq!(
        list.notes,
        vec![PlanNote::FocusedShort {
            planned: focused,
            share: 600,
            drawn: true
        }]
    );
    let mut rows: Vec<usize> = list.entries.iter().map(|e| e.row).collect();
    rows.sort_unstable();
    rows.dedup();
    assert_eq!(rows.len(), 600, "no step twice");
    // With filling off the shortfall stays unspent, and the note says so.
    let unfilled = plan(
        &steps,
        &s,
        &[],
        &PlanSettings {
            fill: false,
            ..settings.clone()
        },
    );
    assert!(
        unfilled
            .entries
            .iter()
            .all(|e| e.reasons != [Reason::Sampled])
    );
    assert!(matches!(
        unfilled.notes[..],
        [PlanNote::FocusedShort { drawn: false, .. }]
    ));
    // A budget above the round's size: every step once, and the note names the shortfall.
    let all = plan(
        &steps,
        &s,
        &[],
        &PlanSettings {
            budget: n + 5,
            ..Default::default()
        },
    );
    assert_eq!(all.entries.len(), n);
    assert!(all.notes.contains(&PlanNote::RoundShort {
        planned: n,
        budget: n + 5
    }));
}

#[test]
fn a_sample_share_draws_spread_steps_never_judged_ones() {
    let (steps, s) = scored();
    let n = steps.len();
    let settings = PlanSettings {
        budget: 40,
        sample_share: 0.5,
        seed: 7,
        ..Default::default()
    };
    let planner = Planner::new(&steps, &s, &settings);
    let judged: Vec<usize> = (0..n).step_by(3).collect();
    let list = planner.plan_judged(&steps, &s, &judged, 40);
    let (sampled, focused): (Vec<_>, Vec<_>) = list
        .entries
        .iter()
        .partition(|e| e.reasons == [Reason::Sampled]);
    assert_eq!((sampled.len(), focused.len()), (20, 20));
    assert!(sampled.iter().all(|e| !judged.contains(&e.row)));
    // Systematic sampling in row order: one draw per 1/p rows of the steps left, so the
    // sampled rows reach across the round (the first and the last twentieth each hold one).
    let mut rows: Vec<usize> = sampled.iter().map(|e| e.row).collect();
    rows.sort_unstable();
    assert!(rows[0] < n / 10 && rows[19] > n - n / 10, "{rows:?}");
    let episodes: std::collections::BTreeSet<usize> = sampled.iter().map(|e| e.episode).collect();
    assert!(episodes.len() >= 15, "{episodes:?}");
    // The same seed gives the same list; another seed another draw.
    // (Rows compared: a sampled entry's distance is NaN, which never equals itself.)
    let rows_of = |l: &countersteer::review::ReviewList| -> Vec<usize> {
        l.entries.iter().map(|e| e.row).collect()
    };
    let again = planner.plan_judged(&steps, &s, &judged, 40);
    assert_eq!(rows_of(&again), rows_of(&list));
    let other = Planner::new(
        &steps,
        &s,
        &PlanSettings {
            seed: 8,
            ..settings
        },
    )
    .plan_judged(&steps, &s, &judged, 40);
    assert_ne!(rows_of(&other), rows_of(&list));
}
