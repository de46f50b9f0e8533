//! A small orchard-rover campaign written with the library's own writers (workbench tests).

use std::path::Path;

use countersteer::campaign::write::write_jsonl;
use countersteer::campaign::{
    ActionChannel, CampaignFile, ChannelKind, Episode, Feature, NoveltySettings, Spec, StepTable,
};

/// The fixture's spec: position, heading and speed; a steering channel and a discrete mode.
pub fn spec() -> Spec {
    let f = |name: &str, unit: &str| Feature {
        name: name.into(),
        unit: unit.into(),
        scale: None,
        kind: Default::default(),
    };
    Spec {
        features: vec![
            f("x", "m"),
            f("y", "m"),
            f("heading", "rad"),
            f("speed", "m/s"),
        ],
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
                name: "mode".into(),
                unit: String::new(),
                kind: ChannelKind::Discrete {
                    choices: vec!["cruise".into(), "slow".into()],
                },
            },
        ],
        position: Some(["x".into(), "y".into()]),
        outcomes: Vec::new(),
    }
}

/// One episode along a gentle lane curve; `drift` bends it away from the lane over time.
fn push_episode(
    t: &mut StepTable,
    name: &str,
    len: usize,
    offset: f32,
    drift: f32,
    takeover: Option<usize>,
) {
    let start = t.len();
    for i in 0..len {
        let s = i as f32 * 0.5;
        let x = s;
        let y = offset + 2.0 * (s / 15.0).sin() + drift * (i as f32 / len as f32).powi(2) * 6.0;
        let heading = (2.0 / 15.0 * (s / 15.0).cos()).atan();
        t.states.extend([x, y, heading, 1.0 + 0.1 * (i % 3) as f32]);
        let steer = (-0.3 * (s / 15.0).sin() + drift * 0.2).clamp(-0.5, 0.5);
        t.actions
            .extend([steer, if i % 10 < 7 { 0.0 } else { 1.0 }]);
        t.t.push(i as i64);
        t.origins.push((start + i + 1) as u64);
        if let Some(k) = takeover {
            t.interventions.push(i >= k);
        }
    }
    t.episodes.push(Episode {
        name: name.into(),
        start,
        len,
        source: 0,
    });
}

fn fill_flags(t: &mut StepTable) {
    if !t.interventions.is_empty() {
        t.interventions.resize(t.len(), false);
    }
}

/// Writes a campaign with 3 demonstration episodes and one round of 3 learner episodes
/// (`r1-a` on the lane, `r1-b` drifting with the expert taking over at step 50, `r1-c`
/// drifting the other way), 60 steps each. Returns the folder.
pub fn write_campaign(root: &Path) {
    let spec = spec();
    let mut demos = StepTable::new(4, 2);
    for (i, off) in [-0.3f32, 0.0, 0.3].iter().enumerate() {
        push_episode(&mut demos, &format!("demo-{i}"), 60, *off, 0.0, None);
    }
    let mut round = StepTable::new(4, 2);
    push_episode(&mut round, "r1-a", 60, 0.1, 0.0, Some(usize::MAX));
    push_episode(&mut round, "r1-b", 60, 0.0, 1.0, Some(50));
    push_episode(&mut round, "r1-c", 60, 0.0, -0.7, Some(usize::MAX));
    fill_flags(&mut round);
    let file = CampaignFile {
        name: "orchard lane fixture".into(),
        description: String::new(),
        step_seconds: Some(0.1),
        spec: spec.clone(),
        novelty: NoveltySettings::default(),
    };
    std::fs::create_dir_all(root.join("demonstrations")).unwrap();
    std::fs::create_dir_all(root.join("rounds/1")).unwrap();
    std::fs::write(
        root.join("campaign.json"),
        serde_json::to_string_pretty(&file).unwrap(),
    )
    .unwrap();
    let w = |rel: &str, t: &StepTable, dir: &str| {
        let f = std::fs::File::create(root.join(rel)).unwrap();
        write_jsonl(t, &spec, dir, std::io::BufWriter::new(f)).unwrap();
    };
    w("demonstrations/expert.jsonl", &demos, "demonstrations");
    w("rounds/1/learner.jsonl", &round, "rounds/1");
}

/// Writes the fixture campaign, then breaks line 3 of the round file (a state of the wrong
/// length).
pub fn write_bad_campaign(root: &Path) {
    write_campaign(root);
    let path = root.join("rounds/1/learner.jsonl");
    let text = std::fs::read_to_string(&path).unwrap();
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    lines[2] = r#"{"episode":"r1-a","t":2,"state":[1.0,2.0],"action":[0.0,"cruise"],"intervention":false}"#.into();
    std::fs::write(&path, lines.join("\n") + "\n").unwrap();
}
