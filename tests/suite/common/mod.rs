//! Fixture builders shared by the integration tests.
#![allow(dead_code, clippy::unwrap_used)]

pub mod rover;

use std::path::Path;

use countersteer::campaign::StepTable;
use countersteer::campaign::spec::{
    ActionChannel, CampaignFile, ChannelKind, Feature, NoveltySettings, Spec,
};
use countersteer::campaign::steps::{StepRow, StepTableBuilder};

/// A small spec: three features, one continuous and one discrete action channel.
pub fn small_spec() -> Spec {
    Spec {
        features: vec![
            Feature {
                name: "offset".into(),
                unit: "m".into(),
                scale: None,
                kind: Default::default(),
            },
            Feature {
                name: "angle".into(),
                unit: "rad".into(),
                scale: Some(0.2),
                kind: Default::default(),
            },
            Feature {
                name: "speed".into(),
                unit: "m/s".into(),
                scale: None,
                kind: Default::default(),
            },
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
                    choices: vec!["cruise".into(), "creep".into(), "halt".into()],
                },
            },
        ],
        position: Some(["offset".into(), "angle".into()]),
        outcomes: Vec::new(),
    }
}

/// A campaign.json for `spec`.
pub fn campaign_file(spec: Spec) -> CampaignFile {
    CampaignFile {
        name: "fixture".into(),
        description: String::new(),
        step_seconds: Some(0.1),
        spec,
        novelty: NoveltySettings::default(),
    }
}

/// A table of `episodes` episodes of `len` steps with awkward but valid values (negative
/// zero, subnormal-free tiny numbers, values needing all f32 digits), frames on some rows,
/// interventions and ensemble samples.
pub fn awkward_table(episodes: usize, len: usize, with_extras: bool) -> StepTable {
    let mut b = StepTableBuilder::new(3, 2);
    b.begin_source("x".into());
    for e in 0..episodes {
        for i in 0..len {
            let x = (e * 31 + i) as f32;
            let state = [
                x * 0.1 + 1.0 / 3.0,
                -0.0 + (x * 0.37).sin() * 1e-3,
                1.0e7 + x,
            ];
            let action = [((x * 0.7).sin() * 0.5).clamp(-0.5, 0.5), (i % 3) as f32];
            let samples: Vec<f32> = if with_extras && i % 2 == 0 {
                vec![0.25, 1.0, -0.125, 2.0]
            } else {
                vec![]
            };
            b.push(StepRow {
                episode: &format!("ep {e}"),
                t: (i as i64) * 3 - 7,
                state: &state,
                action: &action,
                frame: (with_extras && i % 4 == 1).then(|| format!("rounds/1/frames/e{e}_{i}.png")),
                intervention: with_extras.then_some(i % 5 == 4),
                samples: &samples,
                origin: 0,
                ..Default::default()
            });
        }
    }
    b.finish()
}

/// Writes campaign.json into `root` and creates the standard folders.
pub fn write_campaign_file(root: &Path, spec: Spec) {
    std::fs::create_dir_all(root.join("demonstrations")).unwrap();
    std::fs::create_dir_all(root.join("rounds/1")).unwrap();
    let text = serde_json::to_string_pretty(&campaign_file(spec)).unwrap();
    std::fs::write(root.join("campaign.json"), text).unwrap();
}
