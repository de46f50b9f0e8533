//! The trend across rounds (`countersteer rounds`) on a demo campaign, checked against counts
//! made directly from the files and the saved scores.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use std::collections::BTreeMap;

use countersteer::campaign::{LoadOptions, load_campaign};
use countersteer::ledger::{Ledger, Verdict};
use countersteer::novelty::store::load_scores;
use countersteer::progress::Progress;
use countersteer::sim::{DemoConfig, write_demo_campaign};
use countersteer::trend::campaign_trend;

use crate::campaign_kit::correction;

/// numpy.quantile's default (linear interpolation, Hyndman & Fan 1996 definition 7), written
/// out: position q (n - 1) in the sorted values.
fn numpy_quantile(v: &[f32], q: f64) -> f64 {
    let mut s: Vec<f64> = v.iter().map(|&x| f64::from(x)).collect();
    s.sort_by(f64::total_cmp);
    let h = q * (s.len() - 1) as f64;
    let (lo, frac) = (h.floor() as usize, h - h.floor());
    if lo + 1 < s.len() {
        s[lo] + frac * (s[lo + 1] - s[lo])
    } else {
        s[lo]
    }
}

/// Episodes, steps, takeovers (an intervention step whose predecessor in the episode is
/// not one) and failed episodes counted from the JSON Lines text itself.
fn jsonl_counts(text: &str) -> (usize, usize, usize, usize) {
    let failures = text
        .lines()
        .filter(|l| !l.trim().is_empty())
        .filter(|l| {
            let v: serde_json::Value = serde_json::from_str(l).unwrap();
            v["outcome"] == "failure"
        })
        .count();
    let mut eps: BTreeMap<String, Vec<(i64, bool)>> = BTreeMap::new();
    for line in text.lines().filter(|l| !l.trim().is_empty()) {
        let v: serde_json::Value = serde_json::from_str(line).unwrap();
        let name = v["episode"].as_str().unwrap().to_string();
        let flag = v["intervention"].as_bool().unwrap_or(false);
        eps.entry(name)
            .or_default()
            .push((v["t"].as_i64().unwrap(), flag));
    }
    let steps = eps.values().map(Vec::len).sum();
    let takeovers = eps
        .values_mut()
        .map(|s| {
            s.sort_unstable();
            (0..s.len())
                .filter(|&i| s[i].1 && (i == 0 || !s[i - 1].1))
                .count()
        })
        .sum();
    (eps.len(), steps, takeovers, failures)
}

#[test]
fn the_trend_of_the_demo_campaign_matches_counts_made_from_its_files() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("demo");
    let mut cfg = DemoConfig {
        seed: 3,
        episodes: 6,
        demo_episodes: 8,
        frame_width: 24,
        ..DemoConfig::default()
    };
    cfg.rollout.max_steps = 200;
    write_demo_campaign(&dir, &cfg, &Progress::new()).unwrap();
    let c = load_campaign(&dir, &LoadOptions::default(), &Progress::new()).unwrap();
    // Labels: ana judges 3 steps of round 1, ben one of them again and one step of round 2.
    let r1 = c.round(1).unwrap().steps.episodes[0].name.clone();
    let r2 = c.round(2).unwrap().steps.episodes[0].name.clone();
    let (mut ana, _) = Ledger::open(&c.root, "ana").unwrap();
    let (mut ben, _) = Ledger::open(&c.root, "ben").unwrap();
    for t in [0, 5, 9] {
        ana.append(correction(&c, 1, &r1, t, Verdict::Skip))
            .unwrap();
    }
    ben.append(correction(&c, 1, &r1, 5, Verdict::Unrecoverable))
        .unwrap();
    ben.append(correction(&c, 2, &r2, 2, Verdict::Skip))
        .unwrap();
    drop((ana, ben));
    let trend = campaign_trend(&c, false, &Progress::new()).unwrap();
    assert_eq!(trend.iter().map(|r| r.round).collect::<Vec<_>>(), [1, 2]);
    assert_eq!((trend[0].labels, trend[0].judged), (4, 3));
    assert_eq!((trend[1].labels, trend[1].judged), (1, 1));
    let text = std::fs::read_to_string(dir.join("rounds/1/learner.jsonl")).unwrap();
    let (episodes, steps, takeovers, failures) = jsonl_counts(&text);
    assert_eq!(
        (trend[0].episodes, trend[0].steps, trend[0].interventions),
        (episodes, steps, takeovers)
    );
    // The demo marks an episode whose rover left the lane a failure.
    assert_eq!(trend[0].failures, Some(failures));
    for r in &trend {
        let steps = &c.round(r.round).unwrap().steps;
        // Scoring saved the scores; the trend's figures follow from them.
        let (s, _) = load_scores(&c.root, r.round, steps).unwrap();
        let flagged = s
            .p_value
            .iter()
            .filter(|&&p| f64::from(p) <= s.alpha)
            .count();
        assert_eq!(r.flagged, flagged);
        for (got, q) in r.novelty_quantiles.iter().zip([0.5, 0.9, 0.99]) {
            let want = numpy_quantile(&s.novelty, q);
            assert!(
                (f64::from(*got) - want).abs() < 1e-5,
                "q{q}: {got} vs {want}"
            );
        }
    }
    // Round 2 has the scripted takeovers.
    assert!(trend[1].interventions > 0);
}
