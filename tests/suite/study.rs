//! The study at a small size: the whole pipeline (rollouts written as rounds, scoring,
//! planning, ledger, tally, export, merged set read back, refit) and the claims it supports.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use countersteer::progress::Progress;
use countersteer::study::{LearnerKind, ResultRow, Strategy, StudyConfig, run_study};

fn last(rows: &[ResultRow], s: Strategy) -> &ResultRow {
    rows.iter()
        .filter(|r| r.strategy == s)
        .max_by_key(|r| r.round)
        .unwrap()
}

/// Half-width of the 95 % interval of a difference of two departure shares: the root sum of
/// squares of the two bootstrap half-widths. This rests on a normal approximation for a
/// difference of two independent means, which is common practice (any statistics textbook's
/// two-sample interval), not a published bound for this study. Both learners are evaluated on
/// the same episodes, whose outcomes are positively correlated, so the true interval of the
/// difference is no wider: the margin is conservative. Floored at one episode's share (our
/// choice).
fn margin(a: &ResultRow, b: &ResultRow, episodes: usize) -> f64 {
    let hw = |r: &ResultRow| (r.departure.high - r.departure.low) / 2.0;
    hw(a).hypot(hw(b)).max(1.0 / episodes as f64)
}

/// At this size (16 demonstration episodes, 2 rounds of 8 learner episodes, 40 evaluation
/// episodes) the claims below held on seeds 11 to 15 (measured in release, see README); with
/// 10 demonstration episodes the learner fit on them is too poor (90 % departures) and the
/// review list stayed behind full DAgger beyond the margin on seeds 11 and 15.
#[test]
fn review_list_recovers_like_full_dagger_with_a_fraction_of_the_labels() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = StudyConfig {
        rounds: 2,
        demo_episodes: 16,
        train_episodes: 8,
        eval_episodes: 40,
        budget: 100,
        bootstrap: 400,
        ..StudyConfig::default()
    };
    assert_eq!(cfg.learner, LearnerKind::Rbf);
    let rows = run_study(&cfg, dir.path(), &Progress::new()).unwrap();
    assert_eq!(rows.len(), 5 * 3, "five strategies, rounds 0..=2");
    let (rl, dagger, random, novelty) = (
        last(&rows, Strategy::ReviewList),
        last(&rows, Strategy::DaggerAll),
        last(&rows, Strategy::Random),
        last(&rows, Strategy::TopNovelty),
    );
    let first = rows.iter().find(|r| r.round == 0).unwrap();
    eprintln!("{rows:#?}");
    // Spends at most a fifth of full DAgger's labels, and no more than its budget.
    assert!(
        rl.labels * 5 <= dagger.labels,
        "{} vs {}",
        rl.labels,
        dagger.labels
    );
    assert!(rl.labels <= cfg.rounds * cfg.budget);
    // Random and top-novelty selection spend exactly what the review list spent.
    assert_eq!(random.labels, rl.labels);
    assert_eq!(novelty.labels, rl.labels);
    // Lane departures after the last round: no worse than full DAgger beyond the margin.
    let m = margin(rl, dagger, cfg.eval_episodes);
    assert!(
        rl.departure.mean <= dagger.departure.mean + m,
        "{rl:?} vs {dagger:?}"
    );
    // Better than random and than top-novelty selection at the same spend, by more than
    // the margin.
    for other in [random, novelty] {
        let m = margin(rl, other, cfg.eval_episodes);
        assert!(
            rl.departure.mean + m < other.departure.mean,
            "{rl:?} vs {other:?}"
        );
    }
    // Aggregation helped at all: the review list's learner improved on the first learner.
    assert!(rl.cost.mean < first.cost.mean, "{rl:?} vs {first:?}");
    // Every strategy's merged set went through the export and came back.
    for s in [
        "review-list",
        "dagger-all",
        "random",
        "top-novelty",
        "more-demos",
    ] {
        assert!(
            dir.path().join(s).join("exports/merged-02.npz").is_file(),
            "{s}"
        );
        assert!(
            dir.path()
                .join(s)
                .join("exports/merged-02.npz.manifest.json")
                .is_file(),
            "{s}"
        );
    }
    let ledger =
        std::fs::read_to_string(dir.path().join("review-list/ledgers/scripted-expert.jsonl"))
            .unwrap();
    assert_eq!(ledger.lines().count(), rl.labels);
}
