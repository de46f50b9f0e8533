//! The correction desk and the review list, headless (egui_kittest): plan a list, give three
//! verdicts by keyboard (an action typed exactly, a skip, an unrecoverable), undo one, and
//! check the ledger on disk record by record; reopen and find the same list; another
//! annotator's ledger, written by another process, appears in the desk after the poll.
#![allow(clippy::unwrap_used)] // test helpers may panic on a broken fixture

use crate::common;
use crate::window_kit::{self, settle};

use std::path::Path;
use std::process::Command;
use std::time::Duration;

use countersteer::app::Workbench;
use countersteer::campaign::{LoadOptions, StepTable, load_campaign};
use countersteer::ledger::fingerprint;
use countersteer::progress::Progress;
use countersteer::workflow::Status;
use egui::Key;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use serde_json::{Value, json};

fn harness(dir: &Path, annotator: &str) -> Harness<'static, Workbench> {
    window_kit::harness(dir, annotator)
}

fn press(h: &mut Harness<'static, Workbench>, key: Key) {
    h.key_press(key);
    h.step();
    h.step();
}

fn steps(dir: &Path) -> StepTable {
    let c = load_campaign(dir, &LoadOptions::default(), &Progress::new()).unwrap();
    c.rounds[0].steps.clone()
}

/// The ledger's records with the clock time taken out (it is the only field not known ahead).
fn ledger_records(dir: &Path, who: &str) -> Vec<Value> {
    let text = std::fs::read_to_string(dir.join(format!("ledgers/{who}.jsonl"))).unwrap();
    text.lines()
        .map(|l| {
            let mut v: Value = serde_json::from_str(l).unwrap();
            let time = v.as_object_mut().unwrap().remove("time").unwrap();
            assert!(time.as_str().unwrap().ends_with('Z'), "{time}");
            v
        })
        .collect()
}

fn correction(steps: &StepTable, seq: u64, row: usize, verdict: Value) -> Value {
    let e = &steps.episodes[steps.episode_of(row)];
    json!({
        "seq": seq, "kind": "correction", "round": 1, "episode": e.name, "t": steps.t[row],
        "fingerprint": fingerprint(steps, row), "verdict": verdict,
        "annotator": "ana", "tool": countersteer::VERSION,
    })
}

#[test]
fn three_verdicts_by_keyboard_and_an_undo_leave_exactly_these_records() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let table = steps(dir.path());
    let mut h = harness(dir.path(), "ana");
    let open = h.state().desk.sitting.as_ref().unwrap().entries.len();
    assert!(open >= 4, "the fixture round plans {open} entries");
    assert_eq!(h.state().desk.sitting.as_ref().unwrap().done(), 0);

    // N: the top open entry. E, type, Enter: steer exactly 0.125. C Down: the mode's first
    // choice.
    press(&mut h, Key::N);
    let first = h.state().current_row().unwrap();
    assert_eq!(
        Some(first),
        h.state()
            .desk
            .sitting
            .as_ref()
            .unwrap()
            .entries
            .first()
            .map(|e| e.row)
    );
    press(&mut h, Key::E);
    h.get_by_label("exact").type_text("0.125");
    h.step();
    press(&mut h, Key::Enter);
    press(&mut h, Key::C);
    press(&mut h, Key::ArrowDown);
    assert_eq!(h.state().desk.draft, [0.125, 0.0]);
    press(&mut h, Key::Enter);
    let second = h.state().current_row().unwrap();
    assert_ne!(second, first, "saving moves to the next open entry");
    press(&mut h, Key::S);
    let third = h.state().current_row().unwrap();
    press(&mut h, Key::U);
    let fourth = h.state().current_row().unwrap();
    assert!(![first, second, third].contains(&fourth));
    h.key_press_modifiers(egui::Modifiers::COMMAND, Key::Z);
    h.step();
    h.step();
    assert_eq!(
        h.state().current_row(),
        Some(third),
        "undo goes back to the step"
    );

    let expected = vec![
        correction(&table, 1, first, json!({"action": [0.125, "cruise"]})),
        correction(&table, 2, second, json!("skip")),
        correction(&table, 3, third, json!("unrecoverable")),
        json!({"seq": 4, "kind": "retraction", "retracts": 3, "annotator": "ana",
               "tool": countersteer::VERSION}),
    ];
    assert_eq!(ledger_records(dir.path(), "ana"), expected);

    let list = h.state().desk.sitting.clone().unwrap();
    let done: Vec<(usize, Status)> = list.entries[..2]
        .iter()
        .map(|e| (e.row, e.status))
        .collect();
    assert_eq!(
        done,
        [(first, Status::Corrected), (second, Status::Skipped)]
    );
    assert_eq!(list.done(), 2);
    press(&mut h, Key::F2);
    h.get_by_label_contains(&format!("2 / {} done", list.budget));

    // Reopen (the ledger's lock goes with the window): the same list, the same statuses.
    drop(h);
    let h = harness(dir.path(), "ana");
    let again = h.state().desk.sitting.clone().unwrap();
    assert_eq!(again.entries, list.entries);
    assert_eq!(
        ledger_records(dir.path(), "ana").len(),
        4,
        "nothing rewritten"
    );
}

#[test]
fn another_annotators_ledger_written_meanwhile_appears_in_the_desk() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path(), "ana");
    press(&mut h, Key::N);
    let (episode, t) = {
        let b = h.state().desk.brief.clone().unwrap();
        (b.episode, b.t)
    };
    h.get_by_label_contains("none yet");
    // Another process appends to ben's ledger while the window is open.
    let out = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(["correct", dir.path().to_str().unwrap(), "--round", "1"])
        .args(["--episode", &episode, "--t", &t.to_string()])
        .args(["--action", "-0.2,slow", "--annotator", "ben"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // The poll runs about once a second.
    std::thread::sleep(Duration::from_millis(1100));
    settle(&mut h);
    h.get_by_label("ben: steer -0.200, mode slow");
    h.get_by_label_contains("tally: 1 annotator(s)");
}

#[test]
fn the_help_overlay_lists_every_desk_and_list_key() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path(), "ana");
    press(&mut h, Key::F1);
    for keys in [
        "Enter",
        "Shift Enter",
        "S",
        "U",
        "Ctrl Z",
        "N",
        "C",
        "Shift C",
        "Up",
        "Down",
        "A",
        "L",
        "E",
        "M",
        "F2",
        "B",
        "R",
        "Ctrl E",
    ] {
        assert!(
            h.query_by_label(keys).is_some(),
            "{keys} is not in the help overlay"
        );
    }
    h.get_by_label_contains("undo: retract your latest verdict");
}

#[test]
fn the_name_is_asked_once_then_the_ledger_opens() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path(), "");
    h.get_by_label("Who is reviewing?");
    h.get_by_label("Annotator name").type_text("ana");
    h.step();
    h.get_by_label("Use this name").click();
    h.step();
    h.step();
    assert_eq!(h.state().ui.annotator, "ana");
    assert!(h.query_by_label("Who is reviewing?").is_none());
    assert!(h.state().desk.ledger.is_some());
    assert!(dir.path().join("ledgers/ana.jsonl").is_file());
}

#[test]
fn a_verdict_given_for_older_step_data_is_shown_as_stale() {
    use countersteer::ledger::{Correction, Ledger, Verdict};
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let table = steps(dir.path());
    let row = table.episodes[1].start + 5;
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    l.append(Correction {
        round: 1,
        episode: "r1-b".into(),
        t: table.t[row],
        fingerprint: "0123456789abcdef".into(),
        verdict: Verdict::Skip,
        note: None,
    })
    .unwrap();
    drop(l);
    let mut h = harness(dir.path(), "ana");
    h.get_by_label("r1-b").click();
    h.step();
    for _ in 0..5 {
        h.key_press(Key::ArrowRight);
        h.step();
    }
    h.step();
    h.get_by_label("your verdict #1: skip");
    h.get_by_label_contains(&format!(
        "stale: the step's data changed since this verdict (recorded 0123456789abcdef, now {})",
        fingerprint(&table, row)
    ));
}

#[test]
fn a_new_budget_typed_in_the_list_plans_again() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path(), "ana");
    press(&mut h, Key::B);
    assert!(h.state().ui.review_tab, "B shows the review list");
    // The field has the focus: what is typed goes there (set directly: kittest types at the end).
    h.state_mut().desk.budget_text = "3".into();
    h.key_press(Key::Enter);
    h.step();
    h.step();
    let s = h.state().desk.sitting.clone().unwrap();
    assert_eq!((s.budget, s.entries.len()), (3, 3));
    assert_eq!(h.state().ui.budget, 3);
    h.get_by_label_contains("0 / 3 done");
}

#[test]
fn digit_keys_pick_choices_of_the_active_choice_channel_only() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path(), "ana");
    press(&mut h, Key::N);
    press(&mut h, Key::L); // the learner's action: a known draft to start from
    let start = h.state().desk.draft.clone();
    // Channel 0 (steer) is continuous: a digit changes nothing and says why.
    press(&mut h, Key::Num2);
    assert_eq!(h.state().desk.draft, start);
    // C: channel 1, the mode, with the choices cruise and slow.
    press(&mut h, Key::C);
    press(&mut h, Key::Num2);
    assert_eq!(h.state().desk.draft[1], 1.0, "2 picks `slow`");
    press(&mut h, Key::Num1);
    assert_eq!(h.state().desk.draft[1], 0.0, "1 picks `cruise`");
    press(&mut h, Key::Num3);
    assert_eq!(h.state().desk.draft[1], 0.0, "there is no third choice");
    assert_eq!(h.state().desk.draft[0], start[0], "steer untouched");
    // The help overlay lists the digits once.
    press(&mut h, Key::F1);
    assert!(h.query_by_label("1 ... 9").is_some());
}

/// `open --review` puts the list's FIRST open entry on the desk, also when that entry is the
/// step already selected (a round opens on its first episode's first step, which is often the
/// top onset; the window used to move on to the second entry then).
#[test]
fn starting_a_review_puts_the_first_open_entry_on_the_desk() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let table = steps(dir.path());
    let mut h = harness(dir.path(), "ana");
    let first = h.state().desk.sitting.as_ref().unwrap().entries[0].row;
    // The playhead on the first entry's step, then the list planned again as when the
    // scores arrive, with a review to start.
    let e = &table.episodes[table.episode_of(first)];
    h.state_mut().ui.episode = Some(e.name.clone());
    h.state_mut().ui.step = first - e.start;
    h.step();
    assert_eq!(h.state().current_row(), Some(first));
    let signals = h.state().round_signals().unwrap().clone();
    h.state_mut().desk.start_reviewing = true;
    h.state_mut().set_signals(signals);
    h.step();
    assert_eq!(h.state().current_row(), Some(first));
}

/// Shift Enter takes the suggestion (the experts nearby) and saves it in one key: the ledger
/// holds exactly the suggested action, and the desk moves to the next open entry.
#[test]
fn shift_enter_saves_the_suggested_action() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = harness(dir.path(), "ana");
    press(&mut h, Key::N);
    let first = h.state().current_row().unwrap();
    let suggested = h.state().desk.brief.clone().unwrap().suggestion();
    press(&mut h, Key::L); // a different draft first: Shift Enter must replace it
    h.key_press_modifiers(egui::Modifiers::SHIFT, Key::Enter);
    h.step();
    h.step();
    assert_ne!(h.state().current_row().unwrap(), first);
    let records = ledger_records(dir.path(), "ana");
    assert_eq!(records.len(), 1);
    let action: Vec<f32> = records[0]["verdict"]["action"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| match (v.as_f64(), v.as_str()) {
            (Some(x), _) => x as f32,
            // The fixture's mode channel: choices `cruise` (0) and `slow` (1).
            (None, Some(name)) => f32::from(u8::from(name == "slow")),
            _ => panic!("{v}"),
        })
        .collect();
    assert_eq!(action, suggested);
}

/// README's key table is the window's one table, row for row and in its order.
#[test]
fn readme_lists_every_key_as_the_table_does() {
    use countersteer::app::keys::BINDINGS;
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    let rows: Vec<String> = BINDINGS
        .iter()
        .filter(|b| !b.keys.is_empty())
        .map(|b| format!("| `{}` | {} |", b.keys, b.does))
        .collect();
    let listed: Vec<&str> = readme
        .lines()
        .filter(|l| l.starts_with("| `"))
        .filter(|l| {
            rows.iter()
                .any(|r| r.split(" | ").next() == l.split(" | ").next())
        })
        .collect();
    assert_eq!(listed, rows, "README's key table differs from app/keys.rs");
}
