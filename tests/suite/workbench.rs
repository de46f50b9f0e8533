//! The workbench, headless (egui_kittest, no display): open a campaign, select an episode from
//! the shelf, move the playhead by keyboard and by the play control, and read the strip; a bad
//! campaign shows its error in the status area.
#![allow(clippy::unwrap_used)] // test helpers may panic on a broken fixture

use crate::common;
use crate::window_kit;

use countersteer::app::Workbench;
use countersteer::app::signals::RoundSignals;
use countersteer::review::Excursion;
use egui::Key;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;

fn harness(dir: &std::path::Path) -> Harness<'static, Workbench> {
    window_kit::harness(dir, "tester")
}

#[test]
fn opens_a_campaign_selects_an_episode_and_moves_the_playhead() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path());
    assert_eq!(
        h.state().campaign().map(|c| c.file.name.as_str()),
        Some("orchard lane fixture")
    );
    h.get_by_label_contains("3 episodes · 180 steps");

    h.get_by_label("r1-b").click();
    h.step();
    assert_eq!(h.state().ui.episode.as_deref(), Some("r1-b"));
    assert_eq!(h.state().ui.step, 0);

    for _ in 0..3 {
        h.key_press(Key::ArrowRight);
        h.step();
    }
    h.key_press(Key::ArrowLeft);
    h.step();
    assert_eq!(h.state().ui.step, 2);
    h.get_by_label_contains("r1-b · t = 2 · step 3 of 60");

    h.key_press_modifiers(egui::Modifiers::SHIFT, Key::ArrowRight);
    h.step();
    assert_eq!(h.state().ui.step, 22);
    h.key_press(Key::End);
    h.step();
    assert_eq!(h.state().ui.step, 59);
    assert!(
        h.state().readout().ends_with("expert in control"),
        "{}",
        h.state().readout()
    );
    h.key_press(Key::Home);
    h.step();
    assert_eq!(h.state().ui.step, 0);

    // Play: 0.1 s per frame at 0.1 s per step and speed 1 is about one step per frame (a click
    // can take an extra pass to register, so allow a little slack).
    h.get_by_label("Play").click();
    h.step();
    assert!(h.state().playing());
    for _ in 0..5 {
        h.step();
    }
    h.get_by_label("Hold").click();
    h.step();
    let at = h.state().ui.step;
    assert!((5..=10).contains(&at), "playhead at {at}");
    h.step();
    h.step();
    assert_eq!(h.state().ui.step, at, "paused playhead must stay");
    h.get_by_label("Step forward").click();
    h.step();
    assert_eq!(h.state().ui.step, at + 1);
    h.step();
    h.get_by_label_contains(&format!("t = {} · step {} of 60", at + 1, at + 2));
}

#[test]
fn the_strip_reports_scores_and_jumps_between_excursions() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path());
    let n = h.state().table().unwrap().len();
    // Hand-made scores: episode r1-c (rows 120..180) is flagged from step 30 to 39 and 50 to 54.
    let mut s = RoundSignals {
        round: 1,
        scores: countersteer::novelty::RoundScores {
            k: 2,
            threshold: 1.0,
            alpha: 0.05,
            ..Default::default()
        },
        ..Default::default()
    };
    s.scores.novelty = (0..n)
        .map(|r| {
            if (150..160).contains(&r) || (170..175).contains(&r) {
                2.5
            } else {
                0.2
            }
        })
        .collect();
    s.scores.p_value = s
        .scores
        .novelty
        .iter()
        .map(|&v| if v > 1.0 { 0.01 } else { 0.6 })
        .collect();
    s.scores.flagged = s.scores.novelty.iter().map(|&v| v > 1.0).collect();
    // Novelty shares: mostly y (70%), some heading (25%), a little speed (5%).
    s.scores.contributions = (0..n).flat_map(|_| [0.0, 0.7, 0.25, 0.05]).collect();
    s.scores.neighbour_action = vec![0.1; n * 2];
    s.scores.neighbours = vec![0; n * 2];
    s.excursions = vec![
        Excursion {
            episode: 2,
            onset: 150,
            peak: 152,
            end: 159,
        },
        Excursion {
            episode: 2,
            onset: 170,
            peak: 171,
            end: 174,
        },
    ];
    h.state_mut().set_signals(s);
    h.step();
    h.get_by_label_contains("25% flagged");
    h.get_by_label("r1-c").click();
    h.step();
    h.key_press(Key::X);
    h.step();
    assert_eq!(h.state().ui.step, 30);
    h.get_by_label_contains(
        "r1-c · t = 30 · step 31 of 60 · novelty 2.500 (p 0.010, flagged) · in excursion \
         · unusual in y 70%, heading 25%",
    );
    h.get_by_label_contains("steer: learner");
    h.get_by_label_contains("demonstrations nearby 0.1");
    h.key_press(Key::X);
    h.step();
    assert_eq!(h.state().ui.step, 50);
    h.key_press_modifiers(egui::Modifiers::SHIFT, Key::X);
    h.step();
    assert_eq!(h.state().ui.step, 30);
}

#[test]
fn a_bad_campaign_shows_its_error_in_the_status_area() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_bad_campaign(dir.path());
    let h = harness(dir.path());
    assert!(h.state().campaign().is_none());
    h.get_by_label_contains("the campaign cannot be opened as it is");
    h.get_by_label_contains("rounds/1/learner.jsonl:3: field `state`");
}

#[test]
fn a_missing_folder_is_reported_not_fatal() {
    let h = harness(std::path::Path::new("/nonexistent/countersteer-campaign"));
    h.get_by_label_contains("is not a folder");
    assert!(h.state().campaign().is_none());
}

#[test]
fn the_round_is_scored_in_the_background_and_the_shelf_puts_drift_first() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path());
    let order: Vec<String> = {
        let wb = h.state();
        let t = wb.table().unwrap();
        wb.shelf_order()
            .iter()
            .map(|&i| t.episodes[i].name.clone())
            .collect()
    };
    // r1-a follows the lane like the demonstrations; the drifting episodes come first.
    assert_eq!(order.last().map(String::as_str), Some("r1-a"), "{order:?}");
    h.get_by_label(&order[0]).click();
    h.step();
    h.key_press(Key::End);
    h.step();
    let readout = h.state().readout();
    assert!(
        readout.contains("novelty") && readout.contains("flagged"),
        "{readout}"
    );
    assert_eq!(
        h.query_all_by_label_contains("% flagged").count(),
        4,
        "three shelf rows and the bar"
    );
}

#[test]
fn saved_scores_made_from_other_data_are_not_shown() {
    use countersteer::campaign::{LoadOptions, load_campaign};
    use countersteer::novelty::{build_model, score_round, store};
    use countersteer::progress::Progress;
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let c = load_campaign(dir.path(), &LoadOptions::default(), &Progress::new()).unwrap();
    let steps = &c.round(1).unwrap().steps;
    let model = build_model(&c, &Progress::new()).unwrap();
    let mut scores = score_round(&model, &c, steps, &Progress::new()).unwrap();
    scores.novelty[0] = 123.0;
    // Saved under another alpha: the window must score again, not show these flags.
    let mut key = store::ScoresKey::of(&c, steps);
    key.model = "0000000000000000".into();
    store::save_scores(dir.path(), 1, steps, &scores, &key).unwrap();
    let h = harness(dir.path());
    let msg = &h.state().status.message;
    assert!(
        msg.contains("scored now") && msg.contains("other novelty settings"),
        "{msg}"
    );
}

#[test]
fn saved_scores_are_read_instead_of_scoring_again() {
    use countersteer::campaign::{LoadOptions, load_campaign};
    use countersteer::novelty::{build_model, score_round, store};
    use countersteer::progress::Progress;
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let c = load_campaign(dir.path(), &LoadOptions::default(), &Progress::new()).unwrap();
    let steps = &c.round(1).unwrap().steps;
    let model = build_model(&c, &Progress::new()).unwrap();
    let mut scores = score_round(&model, &c, steps, &Progress::new()).unwrap();
    // Mark the saved file so reading it (not scoring again) is visible.
    scores.novelty[0] = 123.0;
    let key = store::ScoresKey::of(&c, steps);
    store::save_scores(dir.path(), 1, steps, &scores, &key).unwrap();
    let h = harness(dir.path());
    assert!(
        h.state().status.message.contains("saved scores"),
        "{}",
        h.state().status.message
    );
    // The marked step (row 0, in r1-a) makes r1-a the worst episode: the file was read.
    assert_eq!(h.state().shelf_order()[0], 0);
}

/// Corrections already in the campaign's ledgers are counted in the bar and the shelf when
/// the campaign opens (two annotators on one step count as one corrected step).
#[test]
fn corrections_in_the_ledgers_are_counted_in_the_bar_and_the_shelf() {
    use countersteer::campaign::{LoadOptions, load_campaign};
    use countersteer::ledger::{Correction, Ledger, Verdict, fingerprint};
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let c = load_campaign(
        dir.path(),
        &LoadOptions::default(),
        &countersteer::progress::Progress::new(),
    )
    .unwrap();
    let steps = &c.rounds[0].steps;
    let e = &steps.episodes[1];
    for (who, rows) in [
        ("ana", vec![e.start + 3, e.start + 9]),
        ("ben", vec![e.start + 3]),
    ] {
        let (mut ledger, _) = Ledger::open(dir.path(), who).unwrap();
        for row in rows {
            ledger
                .append(Correction {
                    round: c.rounds[0].number,
                    episode: e.name.clone(),
                    t: steps.t[row],
                    fingerprint: fingerprint(steps, row),
                    verdict: Verdict::from_action(c.spec(), steps.action(row)),
                    note: None,
                })
                .unwrap();
        }
    }
    let h = harness(dir.path());
    // The bar (scored by now): "3 episodes · 180 steps · N% flagged · 2 corrected".
    h.get_by_label_contains("flagged · 2 corrected");
    h.get_by_label_contains("interventions · 2 corrected");
}

/// The strip's plots stay inside the strip, beside the desk, however long the step readout
/// above them is: an overlong readout once widened the strip's contents, so the plots ran on
/// under the desk and an episode's last steps could not be seen or clicked.
#[test]
fn the_strip_plots_fit_beside_the_desk_in_a_narrow_window() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let ui = countersteer::app::UiState {
        annotator: "tester".into(),
        ..Default::default()
    };
    let mut wb = Workbench::new(ui);
    wb.open(dir.path());
    let width = 900.0;
    let mut h = Harness::builder()
        .with_size(egui::vec2(width, 800.0))
        .with_step_dt(0.1)
        .build_ui_state(|ui, wb: &mut Workbench| wb.show(ui), wb);
    window_kit::settle(&mut h);
    h.get_by_label("r1-b").click();
    h.step();
    h.step();
    // Buttons and speed take about 420 points of the strip's row; the readout is longer than
    // what is left at this width.
    let readout = h.state().readout();
    assert!(readout.chars().count() > 40, "{readout}");
    // The desk keeps at least 280 points on the right (its smallest size).
    let strip = h.state().strip_width();
    assert!(
        strip > 100.0 && strip <= width - 280.0,
        "strip plots {strip} points wide in a {width}-point window"
    );
}

/// Under the window's own theme (larger text and spacing than egui's defaults) the drift
/// strip keeps its height: its plots are sized from the style, so its contents never ask
/// for more than the panel has (a panel grows to its contents, frame after frame, and the
/// strip once swallowed the map that way).
#[test]
fn the_strip_keeps_its_height_under_the_theme() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path());
    countersteer::app::theme::apply(&h.ctx);
    let start = h.state().ui.layout.strip_height;
    h.run_steps(40);
    let end = h.state().ui.layout.strip_height;
    assert!(end <= start + 1.0, "the strip grew from {start} to {end}");
}
