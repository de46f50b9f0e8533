//! Small campaigns written to temporary folders, shared by the integration tests.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report
#![allow(dead_code)]

use std::path::Path;

use countersteer::campaign::steps::{StepRow, StepTableBuilder};
use countersteer::campaign::write::write_jsonl;
use countersteer::campaign::{
    ActionChannel, Campaign, CampaignFile, ChannelKind, Feature, LoadOptions, NoveltySettings,
    Spec, StepTable, load_campaign,
};
use countersteer::consensus::Tally;
use countersteer::ledger::{ActionValue, Correction, Ledger, Verdict, fingerprint};
use countersteer::progress::Progress;

/// Spec: features `x`, `y`, `heading`; channels `steer` (continuous -0.5..0.5) and `speed`
/// (discrete stop/slow/cruise).
pub fn spec() -> Spec {
    let f = |n: &str, u: &str| Feature {
        name: n.into(),
        unit: u.into(),
        scale: None,
        kind: Default::default(),
    };
    Spec {
        features: vec![f("x", "m"), f("y", "m"), f("heading", "rad")],
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
        position: Some(["x".into(), "y".into()]),
        outcomes: Vec::new(),
    }
}

/// `episodes` episodes of `len` steps; state depends on (salt, episode, t).
pub fn table(salt: f32, episodes: usize, len: usize, prefix: &str) -> StepTable {
    let mut b = StepTableBuilder::new(3, 2);
    b.begin_source("x".into());
    for e in 0..episodes {
        let name = format!("{prefix}{e:02}");
        for t in 0..len {
            let x = t as f32 * 0.5 + salt;
            let y = (e as f32 + salt * 0.1) + (t as f32 * 0.3).sin();
            b.push(StepRow {
                episode: &name,
                t: t as i64,
                state: &[x, y, (t as f32 * 0.1).cos() / 3.0],
                action: &[((t as f32) * 0.07).sin() * 0.4, (t % 3) as f32],
                origin: t as u64,
                ..Default::default()
            });
        }
    }
    b.finish()
}

fn write_table(root: &Path, rel_dir: &str, t: &StepTable) {
    let dir = root.join(rel_dir);
    std::fs::create_dir_all(&dir).unwrap();
    let f = std::fs::File::create(dir.join("steps.jsonl")).unwrap();
    write_jsonl(t, &spec(), rel_dir, std::io::BufWriter::new(f)).unwrap();
}

/// Writes a campaign: demonstrations (2 episodes x `demo_len`), round 1 (3 x 30),
/// round 2 (1 x 10), and loads it.
pub fn write_campaign(root: &Path, demo_len: usize) -> Campaign {
    let file = CampaignFile {
        name: "orchard lane test".into(),
        description: String::new(),
        step_seconds: Some(0.1),
        spec: spec(),
        novelty: NoveltySettings::default(),
    };
    std::fs::write(
        root.join("campaign.json"),
        serde_json::to_string_pretty(&file).unwrap(),
    )
    .unwrap();
    write_table(root, "demonstrations", &table(0.0, 2, demo_len, "demo-"));
    write_table(root, "rounds/1", &table(0.25, 3, 30, "lane-"));
    write_table(root, "rounds/2", &table(0.5, 1, 10, "lane-"));
    load(root)
}

/// Loads a campaign folder.
pub fn load(root: &Path) -> Campaign {
    load_campaign(root, &LoadOptions::default(), &Progress::new()).unwrap()
}

/// A recovery action.
pub fn action(steer: f64, speed: &str) -> Verdict {
    Verdict::Action(vec![
        ActionValue::Number(steer),
        ActionValue::Choice(speed.into()),
    ])
}

/// A correction of (round, episode, t) with the step's current fingerprint.
pub fn correction(c: &Campaign, round: u32, episode: &str, t: i64, verdict: Verdict) -> Correction {
    let steps = &c.round(round).unwrap().steps;
    let row = steps.find(episode, t).unwrap();
    Correction {
        round,
        episode: episode.into(),
        t,
        fingerprint: fingerprint(steps, row),
        verdict,
        note: None,
    }
}

/// Two annotators' corrections: ana and ben agree closely on round 1 lane-00 t 0..5, ben
/// alone on round 2 lane-00 t 3, both `unrecoverable` on round 1 lane-01 t 7, ana skips
/// round 1 lane-02 t 1.
pub fn two_annotators(c: &Campaign) -> Tally {
    let (mut ana, _) = Ledger::open(&c.root, "ana").unwrap();
    let (mut ben, _) = Ledger::open(&c.root, "ben").unwrap();
    for t in 0..5 {
        let s = 0.1 * t as f64 - 0.2;
        ana.append(correction(c, 1, "lane-00", t, action(s, "slow")))
            .unwrap();
        let speed = if t == 4 { "stop" } else { "slow" };
        ben.append(correction(c, 1, "lane-00", t, action(s + 0.02, speed)))
            .unwrap();
    }
    ben.append(correction(c, 2, "lane-00", 3, action(0.3, "cruise")))
        .unwrap();
    for l in [&mut ana, &mut ben] {
        l.append(correction(c, 1, "lane-01", 7, Verdict::Unrecoverable))
            .unwrap();
    }
    ana.append(correction(c, 1, "lane-02", 1, Verdict::Skip))
        .unwrap();
    drop((ana, ben));
    let ledgers = countersteer::ledger::read_ledgers(&c.root).unwrap();
    countersteer::consensus::tally(c, &ledgers)
}
