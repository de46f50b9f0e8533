#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use super::*;
use crate::campaign::steps::{StepRow, StepTableBuilder};
use crate::campaign::{ActionChannel, CampaignFile, ChannelKind, Feature, NoveltySettings, Round};
use crate::campaign::{Spec, StepTable};
use crate::ledger::record::ActionValue;
use crate::ledger::{read_batch, read_ledger};
use std::io::Write as _;

fn spec() -> Spec {
    Spec {
        features: vec![Feature {
            name: "x".into(),
            unit: "m".into(),
            scale: None,
            kind: Default::default(),
        }],
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

/// Round 1: episodes lane-00 and lane-01 with t 0..10.
fn campaign(root: &Path) -> Campaign {
    let mut b = StepTableBuilder::new(1, 2);
    b.begin_source("x".into());
    for e in 0..2 {
        let name = format!("lane-{e:02}");
        for t in 0..10 {
            b.push(StepRow {
                episode: &name,
                t,
                state: &[t as f32 + e as f32 * 100.0],
                action: &[0.0, 1.0],
                origin: t as u64,
                ..Default::default()
            });
        }
    }
    Campaign {
        root: root.to_path_buf(),
        file: CampaignFile {
            name: "batch test".into(),
            description: String::new(),
            step_seconds: None,
            spec: spec(),
            novelty: NoveltySettings::default(),
        },
        demonstrations: StepTable::default(),
        rounds: vec![Round {
            number: 1,
            steps: b.finish(),
        }],
        inputs: Vec::new(),
    }
}

fn action(steer: f64, speed: &str) -> Verdict {
    Verdict::Action(vec![
        ActionValue::Number(steer),
        ActionValue::Choice(speed.into()),
    ])
}

fn fix(episode: &str, t: i64, verdict: Verdict) -> BatchItem {
    BatchItem::Correction {
        round: 1,
        episode: episode.into(),
        t,
        verdict,
        note: None,
    }
}

fn batch(items: Vec<BatchItem>) -> Batch {
    Batch {
        source: "input.csv".into(),
        lines: items
            .into_iter()
            .enumerate()
            .map(|(i, item)| BatchLine {
                line: i as u64 + 2,
                item,
            })
            .collect(),
        problems: Vec::new(),
    }
}

#[test]
fn a_batch_with_bad_lines_writes_nothing_and_reports_every_bad_line_and_field() {
    let dir = tempfile::tempdir().unwrap();
    let c = campaign(dir.path());
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    let b = batch(vec![
        fix("lane-00", 1, action(0.1, "slow")),
        BatchItem::Correction {
            round: 4,
            episode: "lane-00".into(),
            t: 1,
            verdict: Verdict::Skip,
            note: None,
        },
        fix("lane-07", 1, Verdict::Skip),
        fix("lane-00", 10, Verdict::Unrecoverable),
        fix("lane-00", 2, action(0.9, "slow")),
        fix(
            "lane-00",
            3,
            Verdict::Action(vec![ActionValue::Number(0.1)]),
        ),
        fix("lane-00", 4, action(-0.6, "reverse")),
        BatchItem::Retraction { retracts: 9 },
        fix("lane-01", 5, Verdict::Skip),
    ]);
    let Err(BatchError::Invalid { problems, .. }) = apply(&c, &mut l, &b) else {
        panic!("a bad batch was applied");
    };
    let got: Vec<(u64, &str)> = problems
        .iter()
        .map(|p| (p.line, p.field.as_str()))
        .collect();
    assert_eq!(
        got,
        [
            (3, "round"),
            (4, "episode"),
            (5, "t"),
            (6, "steer"),
            (7, "action"),
            (8, "steer"),
            (8, "speed"),
            (9, "retract"),
        ]
    );
    assert!(
        problems[4]
            .message
            .contains("1 value(s), the spec has 2 channel(s)")
    );
    assert!(problems[6].message.contains("`reverse` is not one of"));
    assert!(problems[5].message.contains("-0.6 is outside -0.5..0.5"));
    assert!(l.records().is_empty());
    assert_eq!(std::fs::metadata(l.path()).unwrap().len(), 0);
    assert!(!journal_path(&l).exists());
}

#[test]
fn a_batch_may_retract_what_its_earlier_lines_add_and_takes_consecutive_seqs() {
    let dir = tempfile::tempdir().unwrap();
    let c = campaign(dir.path());
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    l.append(Correction {
        round: 1,
        episode: "lane-00".into(),
        t: 0,
        fingerprint: "x".into(),
        verdict: Verdict::Skip,
        note: None,
    })
    .unwrap();
    let b = batch(vec![
        fix("lane-00", 1, action(0.1, "slow")),
        BatchItem::Retraction { retracts: 2 },
        BatchItem::Retraction { retracts: 1 },
        fix("lane-01", 9, Verdict::Unrecoverable),
    ]);
    let done = apply(&c, &mut l, &b).unwrap();
    let seqs: Vec<u64> = done.records.iter().map(|r| r.seq).collect();
    assert_eq!(seqs, [2, 3, 4, 5]);
    assert!(l.is_retracted(1) && l.is_retracted(2));
    assert!(l.standing(1, "lane-01", 9).is_some());
    // The fingerprint is the step's own.
    let table = &c.rounds[0].steps;
    let fp = fingerprint(table, table.find("lane-01", 9).unwrap());
    assert_eq!(done.records[3].correction().unwrap().fingerprint, fp);
    // Retracting a retracted correction again is refused.
    let again = batch(vec![BatchItem::Retraction { retracts: 2 }]);
    let Err(BatchError::Invalid { problems, .. }) = apply(&c, &mut l, &again) else {
        panic!("a second retraction was applied");
    };
    assert!(problems[0].message.contains("already retracted"));
    drop(l);
    let read = read_ledger(&dir.path().join("ledgers/ana.jsonl")).unwrap();
    assert_eq!(read.records.len(), 5);
    assert!(read.problems.is_empty());
}

#[test]
fn a_batch_cut_short_by_a_crash_is_reported_with_the_lines_that_are_missing() {
    let dir = tempfile::tempdir().unwrap();
    let c = campaign(dir.path());
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    let items: Vec<BatchItem> = (0..6)
        .map(|t| fix("lane-01", t, action(0.05 * t as f64, "cruise")))
        .collect();
    let (entries, journal) = validate(&c, &l, &batch(items)).unwrap();
    write_journal(&journal_path(&l), &journal).unwrap();
    // The crash: only the first two records reached the ledger, and half of the third.
    let mut kept = entries;
    kept.truncate(2);
    l.append_entries(kept).unwrap();
    let path = l.path().to_path_buf();
    drop(l);
    std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .unwrap()
        .write_all(b"{\"seq\":3,\"kind\":\"corr")
        .unwrap();
    let (l, report, unfinished) = open(dir.path(), "ana").unwrap();
    assert!(report.set_aside.is_some());
    let u = unfinished.unwrap();
    assert_eq!((u.total, u.saved), (6, 2));
    let missing: Vec<(u64, u64)> = u.missing.iter().map(|m| (m.line, m.seq)).collect();
    assert_eq!(missing, [(4, 3), (5, 4), (6, 5), (7, 6)]);
    assert_eq!(u.missing[0].what, "round 1 `lane-01` t 2");
    assert_eq!(u.source, Path::new("input.csv"));
    assert!(u.kept.ends_with("ana.batch-unfinished-1.json") && u.kept.is_file());
    assert_eq!(l.records().len(), 2);
    drop(l);
    // Reported once: the next open finds no journal.
    let (_, _, again) = open(dir.path(), "ana").unwrap();
    assert!(again.is_none());
}

#[test]
fn a_journal_of_a_whole_batch_is_removed_without_a_report() {
    let dir = tempfile::tempdir().unwrap();
    let c = campaign(dir.path());
    let (mut l, _) = Ledger::open(dir.path(), "ana").unwrap();
    let (entries, journal) =
        validate(&c, &l, &batch(vec![fix("lane-00", 0, Verdict::Skip)])).unwrap();
    write_journal(&journal_path(&l), &journal).unwrap();
    l.append_entries(entries).unwrap();
    let jp = journal_path(&l);
    drop(l);
    let (_, _, unfinished) = open(dir.path(), "ana").unwrap();
    assert!(unfinished.is_none());
    assert!(!jp.exists());
}

#[test]
fn csv_and_json_lines_read_the_same_batch_and_locate_every_fault() {
    let dir = tempfile::tempdir().unwrap();
    let csv = dir.path().join("b.csv");
    std::fs::write(
        &csv,
        "round,episode,t,steer,speed,verdict,retract,note\n\
         1,lane-00,3,-0.1,slow,,,fine\n\
         1,lane-00,4,0.2,2,,,\n\
         1,lane-01,5,,,skip,,\n\
         ,,,,,,7,\n\
         1,lane-00,x,abc,,,,\n\
         1,lane-00,6,0.1,slow,skip,,\n\
         1,lane-00,7,,,maybe,,\n\
         2,lane-00,1,,,,4,\n",
    )
    .unwrap();
    let jsonl = dir.path().join("b.jsonl");
    std::fs::write(
        &jsonl,
        "{\"round\":1,\"episode\":\"lane-00\",\"t\":3,\"steer\":-0.1,\"speed\":\"slow\",\"note\":\"fine\"}\n\
         {\"round\":1,\"episode\":\"lane-00\",\"t\":4,\"steer\":0.2,\"speed\":2}\n\
         {\"round\":1,\"episode\":\"lane-01\",\"t\":5,\"verdict\":\"skip\"}\n\
         {\"retract\":7}\n\
         {\"round\":1,\"episode\":\"lane-00\",\"t\":1.5,\"steer\":true}\n\
         {\"round\":1,\"episode\":\"lane-00\",\"t\":6,\"gear\":1}\n",
    )
    .unwrap();
    let a = read_batch(&csv, &spec()).unwrap();
    let b = read_batch(&jsonl, &spec()).unwrap();
    let items = |x: &Batch| x.lines.iter().map(|l| l.item.clone()).collect::<Vec<_>>();
    assert_eq!(items(&a), items(&b));
    assert_eq!(
        items(&a),
        [
            BatchItem::Correction {
                round: 1,
                episode: "lane-00".into(),
                t: 3,
                verdict: action(-0.1, "slow"),
                note: Some("fine".into()),
            },
            fix("lane-00", 4, action(0.2, "cruise")),
            fix("lane-01", 5, Verdict::Skip),
            BatchItem::Retraction { retracts: 7 },
        ]
    );
    let located = |x: &Batch| {
        x.problems
            .iter()
            .map(|p| (p.line, p.field.clone()))
            .collect::<Vec<_>>()
    };
    assert_eq!(
        located(&a),
        [
            (6, "t".to_string()),
            (6, "steer".into()),
            (6, "speed".into()),
            (7, "steer".into()),
            (7, "speed".into()),
            (8, "verdict".into()),
            (9, "round".into()),
            (9, "episode".into()),
            (9, "t".into()),
        ]
    );
    assert_eq!(located(&b), [(5, "steer".to_string()), (6, "gear".into())]);
}
