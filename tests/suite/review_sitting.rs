//! The review sitting: the list is the annotator's judged steps, then the planner's choice for
//! the rest of the budget seeded with every judged state (checked against the planner called
//! directly), and a judged step is never asked again.
#![allow(clippy::unwrap_used)]

use crate::common;

use countersteer::campaign::{LoadOptions, load_campaign};
use countersteer::novelty::{build_model, score_round};
use countersteer::progress::Progress;
use countersteer::review::{PlanSettings, Planner, states_of_rows};
use countersteer::workflow::{Judgement, Sitting, Status};

#[test]
fn a_judged_step_leaves_the_open_list_and_the_rest_is_planned_around_it() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let c = load_campaign(dir.path(), &LoadOptions::default(), &Progress::new()).unwrap();
    let steps = &c.rounds[0].steps;
    let model = build_model(&c, &Progress::new()).unwrap();
    let scores = score_round(&model, &c, steps, &Progress::new()).unwrap();
    let settings = PlanSettings {
        budget: 6,
        min_gap: 5,
        ..Default::default()
    };
    let mut s = Sitting::new(steps, &scores, 1, &settings);
    s.update(steps, &scores, &[], &[]);
    assert!(s.entries.len() >= 3, "{}", s.entries.len());
    assert!(s.entries.iter().all(|e| e.status == Status::Open));
    let top = s.entries[0].row;
    let other = s.entries[2].row;

    let own = [Judgement {
        row: top,
        status: Status::Corrected,
        seq: 1,
    }];
    s.update(steps, &scores, &own, &[other]);
    assert_eq!(
        (s.entries[0].row, s.entries[0].status),
        (top, Status::Corrected)
    );
    assert_eq!(s.done(), 1);
    let open: Vec<usize> = s.entries[1..].iter().map(|e| e.row).collect();
    assert!(!open.contains(&top) && !open.contains(&other), "{open:?}");
    // The open part is what the planner chooses for the remaining budget with both seeds.
    let direct = Planner::new(steps, &scores, &settings).plan_up_to(
        steps,
        &scores,
        &states_of_rows(steps, &[top, other]),
        settings.budget - 1,
    );
    let want: Vec<usize> = direct.entries.iter().map(|e| e.row).collect();
    assert_eq!(open, want);
    assert_eq!(
        s.next_open(Some(open[0])).map(|e| e.row),
        open.get(1).copied()
    );
}
