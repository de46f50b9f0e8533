//! Tests of the consensus on a small in-memory campaign.

use super::*;
use crate::campaign::steps::{StepRow, StepTableBuilder};
use crate::campaign::{ActionChannel, CampaignFile, Feature, NoveltySettings, Round, Spec};
use crate::ledger::{ActionValue, Correction, Entry, Record, Retraction, Verdict, fingerprint};

fn spec() -> Spec {
    let f = |n: &str| Feature {
        name: n.into(),
        unit: "m".into(),
        scale: None,
        kind: Default::default(),
    };
    Spec {
        features: vec![f("x"), f("y")],
        actions: vec![
            ActionChannel {
                name: "steer".into(),
                unit: "rad".into(),
                kind: ChannelKind::Continuous {
                    low: -0.5,
                    high: 0.5,
                },
            },
            ActionChannel {
                name: "speed".into(),
                unit: String::new(),
                kind: ChannelKind::Discrete {
                    choices: vec!["stop".into(), "slow".into(), "cruise".into()],
                },
            },
        ],
        position: None,
        outcomes: Vec::new(),
    }
}

/// Round 1: episode `e1`, t = 0..10, state (t, -t).
fn campaign() -> Campaign {
    let mut b = StepTableBuilder::new(2, 2);
    b.begin_source("rounds/1/a.jsonl".into());
    for t in 0..10 {
        b.push(StepRow {
            episode: "e1",
            t,
            state: &[t as f32, -(t as f32)],
            action: &[0.0, 1.0],
            origin: t as u64 + 1,
            ..Default::default()
        });
    }
    let steps = b.finish();
    Campaign {
        root: "/nowhere".into(),
        file: CampaignFile {
            name: "test".into(),
            description: String::new(),
            step_seconds: None,
            spec: spec(),
            novelty: NoveltySettings::default(),
        },
        demonstrations: StepTable::new(2, 2),
        rounds: vec![Round { number: 1, steps }],
        inputs: Vec::new(),
    }
}

use crate::campaign::StepTable;

fn action(steer: f64, speed: &str) -> Verdict {
    Verdict::Action(vec![
        ActionValue::Number(steer),
        ActionValue::Choice(speed.into()),
    ])
}

struct Book {
    name: &'static str,
    records: Vec<Record>,
}

impl Book {
    fn new(name: &'static str) -> Self {
        Book {
            name,
            records: Vec::new(),
        }
    }

    fn push(&mut self, entry: Entry) -> u64 {
        let seq = self.records.len() as u64 + 1;
        self.records.push(Record {
            seq,
            entry,
            annotator: self.name.into(),
            time: "2026-12-02T00:00:00.000Z".into(),
            tool: "test".into(),
        });
        seq
    }

    fn correct(&mut self, c: &Campaign, t: i64, verdict: Verdict) -> u64 {
        let steps = &c.rounds[0].steps;
        let fp = fingerprint(steps, steps.find("e1", t).unwrap());
        self.correct_with(t, verdict, fp)
    }

    fn correct_with(&mut self, t: i64, verdict: Verdict, fingerprint: String) -> u64 {
        self.push(Entry::Correction(Correction {
            round: 1,
            episode: "e1".into(),
            t,
            fingerprint,
            verdict,
            note: None,
        }))
    }

    fn retract(&mut self, seq: u64) {
        self.push(Entry::Retraction(Retraction { retracts: seq }));
    }

    fn ledger(&self) -> AnnotatorLedger {
        AnnotatorLedger {
            annotator: self.name.into(),
            path: format!("ledgers/{}.jsonl", self.name).into(),
            records: self.records.clone(),
            problems: Vec::new(),
            incomplete_tail: 0,
            stamp: None,
            sha256: String::new(),
            bytes: 0,
        }
    }
}

fn votes_at(t: &Tally, step_t: i64) -> Vec<(String, Judged)> {
    t.steps
        .iter()
        .find(|s| s.t == step_t)
        .map(|s| {
            s.votes
                .iter()
                .map(|v| (v.annotator.clone(), v.judged.clone()))
                .collect()
        })
        .unwrap_or_default()
}

#[test]
fn latest_record_of_an_annotator_for_a_step_wins() {
    let c = campaign();
    let mut ana = Book::new("ana");
    ana.correct(&c, 3, action(0.1, "slow"));
    ana.correct(&c, 3, action(-0.2, "stop"));
    let t = tally(&c, &[ana.ledger()]);
    assert_eq!(
        votes_at(&t, 3),
        vec![("ana".to_string(), Judged::Action(vec![-0.2, 0.0]))]
    );
    assert_eq!(t.steps.len(), 1);
    assert_eq!(t.steps[0].votes[0].seq, 2);
}

#[test]
fn retraction_withdraws_a_record_and_the_one_before_stands_again() {
    let c = campaign();
    let mut ana = Book::new("ana");
    ana.correct(&c, 3, action(0.1, "slow"));
    let second = ana.correct(&c, 3, Verdict::Unrecoverable);
    let lone = ana.correct(&c, 5, Verdict::Skip);
    ana.retract(second);
    ana.retract(lone);
    let t = tally(&c, &[ana.ledger()]);
    let expected = (0.1f64 as f32, 1.0);
    assert_eq!(
        votes_at(&t, 3),
        vec![("ana".into(), Judged::Action(vec![expected.0, expected.1]))]
    );
    assert!(votes_at(&t, 5).is_empty());
    assert_eq!(t.rounds[0].judged, 1);
}

#[test]
fn fingerprint_mismatch_is_reported_and_not_applied() {
    let c = campaign();
    let mut ana = Book::new("ana");
    ana.correct_with(4, action(0.3, "cruise"), "0000000000000000".into());
    ana.correct(&c, 5, action(0.3, "cruise"));
    let t = tally(&c, &[ana.ledger()]);
    assert!(votes_at(&t, 4).is_empty());
    assert_eq!(t.mismatches.len(), 1);
    let m = &t.mismatches[0];
    assert_eq!((m.annotator.as_str(), m.seq, m.t), ("ana", 1, 4));
    assert_eq!(m.recorded, "0000000000000000");
    assert_eq!(m.current, fingerprint(&c.rounds[0].steps, 4));
    assert_eq!(t.rounds[0].judged, 1);
}

#[test]
fn unknown_steps_and_actions_that_break_the_spec_are_set_apart() {
    let c = campaign();
    let mut ana = Book::new("ana");
    ana.correct_with(99, Verdict::Skip, "x".into());
    ana.correct(&c, 1, action(0.9, "slow")); // beyond steer's high bound 0.5
    ana.correct(&c, 2, action(0.1, "reverse"));
    let t = tally(&c, &[ana.ledger()]);
    assert!(t.steps.is_empty());
    let reasons: Vec<&str> = t.unapplied.iter().map(|u| u.reason.as_str()).collect();
    assert_eq!(reasons.len(), 3, "{reasons:?}");
    assert!(reasons[0].contains("no step `e1` t 99"), "{}", reasons[0]);
    assert!(
        reasons[1].contains("`steer`: 0.9 is outside"),
        "{}",
        reasons[1]
    );
    assert!(reasons[2].contains("`speed`: `reverse`"), "{}", reasons[2]);
}

#[test]
fn skip_and_unrecoverable_are_counted_never_averaged() {
    let c = campaign();
    let (mut a, mut b, mut d) = (Book::new("ana"), Book::new("ben"), Book::new("dia"));
    // t 1: two unrecoverable against one action: no consensus action.
    a.correct(&c, 1, Verdict::Unrecoverable);
    b.correct(&c, 1, Verdict::Unrecoverable);
    d.correct(&c, 1, action(0.4, "cruise"));
    // t 2: two actions against one unrecoverable: the actions' median/plurality.
    a.correct(&c, 2, action(0.1, "slow"));
    b.correct(&c, 2, action(0.3, "slow"));
    d.correct(&c, 2, Verdict::Unrecoverable);
    // t 3: skips only.
    a.correct(&c, 3, Verdict::Skip);
    b.correct(&c, 3, Verdict::Skip);
    // t 4: one action, one skip (skip abstains).
    a.correct(&c, 4, action(-0.25, "stop"));
    b.correct(&c, 4, Verdict::Skip);
    let t = tally(&c, &[a.ledger(), b.ledger(), d.ledger()]);
    let s = |tt: i64| t.steps.iter().find(|s| s.t == tt).unwrap();
    assert_eq!((s(1).actions, s(1).unrecoverable, s(1).skips), (1, 2, 0));
    assert_eq!(s(1).action, None);
    assert_eq!((s(2).actions, s(2).unrecoverable), (2, 1));
    assert_eq!(s(2).action, Some(vec![0.2, 1.0]));
    assert_eq!((s(3).skips, s(3).action.clone()), (2, None));
    assert_eq!(s(4).action, Some(vec![-0.25, 0.0]));
    assert_eq!(s(4).agreement, None, "one action verdict has no agreement");
    let r = &t.rounds[0];
    assert_eq!(
        (
            r.judged,
            r.with_action,
            r.multi,
            r.action_votes,
            r.skip_votes,
            r.unrecoverable_votes
        ),
        (4, 2, 4, 4, 3, 3)
    );
    // Verdict-kind agreement: units t1 [0,0,1], t2 [1,1,0] (skips missing).
    assert_eq!((t.verdicts.units, t.verdicts.values), (2, 6));
    let by_hand = krippendorff_alpha(&[vec![0.0, 0.0, 1.0], vec![1.0, 1.0, 0.0]], Metric::Nominal);
    assert_eq!(t.verdicts.alpha, by_hand);
}

#[test]
fn median_plurality_spread_and_tie_rule() {
    let c = campaign();
    let mut books: Vec<Book> = ["ana", "ben", "dia", "eve"].map(Book::new).into();
    // Four actions: steer 0.1, 0.2, 0.4, -0.3 (median (0.1 + 0.2) / 2 = 0.15); speed two
    // `cruise`, two `slow`: the tie goes to `slow`, listed before `cruise` in the spec.
    let verdicts = [
        (0.1, "cruise"),
        (0.2, "slow"),
        (0.4, "cruise"),
        (-0.3, "slow"),
    ];
    for (b, (s, v)) in books.iter_mut().zip(verdicts) {
        b.correct(&c, 6, action(s, v));
    }
    let ledgers: Vec<_> = books.iter().map(Book::ledger).collect();
    let t = tally(&c, &ledgers);
    let s = &t.steps[0];
    let a = s.action.clone().unwrap();
    assert!((a[0] - 0.15).abs() < 1e-6 && a[1] == 1.0, "{a:?}");
    let spread = s.spread.clone().unwrap();
    // steer: (0.4 - (-0.3)) / 1.0 = 0.7; speed: 1 - 2/4 = 0.5.
    assert!((spread[0] - 0.7).abs() < 1e-6 && (spread[1] - 0.5).abs() < 1e-12);
    assert!((s.agreement.unwrap() - 0.3).abs() < 1e-6);
}

#[test]
fn channel_alpha_uses_steps_with_two_or_more_actions() {
    let c = campaign();
    let (mut a, mut b) = (Book::new("ana"), Book::new("ben"));
    let pairs = [(0.1, 0.12), (-0.2, -0.25), (0.3, 0.3), (0.0, 0.05)];
    for (t, (x, y)) in pairs.iter().enumerate() {
        a.correct(&c, t as i64, action(*x, "slow"));
        b.correct(
            &c,
            t as i64,
            action(*y, if t == 0 { "stop" } else { "slow" }),
        );
    }
    a.correct(&c, 7, action(0.2, "slow")); // single: not pairable
    let t = tally(&c, &[a.ledger(), b.ledger()]);
    let steer = &t.channels[0];
    assert_eq!(
        (steer.units, steer.values, steer.metric),
        (4, 8, Metric::Interval)
    );
    let units: Vec<Vec<f64>> = pairs
        .iter()
        .map(|&(x, y)| vec![f64::from(x as f32), f64::from(y as f32)])
        .collect();
    assert_eq!(steer.alpha, krippendorff_alpha(&units, Metric::Interval));
    // Our own sanity bound, not a published value: these near-equal pairs agree well.
    assert!(steer.alpha.unwrap() > 0.9);
    let speed = &t.channels[1];
    assert_eq!(speed.metric, Metric::Nominal);
    // By hand: values seven `slow`, one `stop`; D_o = (1/8) * 2 = 0.25,
    // D_e = (64 - 49 - 1) / 56 = 0.25: alpha = 0.
    assert!(speed.alpha.unwrap().abs() < 1e-12);
}
