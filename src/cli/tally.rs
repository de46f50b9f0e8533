//! `countersteer tally DIR`: per-round counts, consensus coverage and agreement.

use std::path::PathBuf;

use clap::Args;

use super::correct::load;
use super::{CliError, json};
use countersteer::campaign::Spec;
use countersteer::consensus::{ChannelAgreement, Judged, StepConsensus, Tally};
use serde_json::{Value, json};

/// Arguments of `tally`.
#[derive(Debug, Args)]
pub struct TallyArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Also list every judged step with its verdicts and consensus.
    #[arg(long)]
    pub steps: bool,
    /// Print one JSON object on standard output instead of the text (see README).
    #[arg(long)]
    pub json: bool,
}

fn alpha_line(a: &ChannelAgreement) -> String {
    let alpha = a
        .alpha
        .map_or("undefined".to_string(), |x| format!("{x:.3}"));
    format!(
        "  {:<16} {:<8} alpha {alpha:<9} over {} steps, {} verdicts",
        a.channel,
        a.metric.name(),
        a.units,
        a.values
    )
}

fn percent(part: usize, whole: usize) -> f64 {
    if whole == 0 {
        0.0
    } else {
        100.0 * part as f64 / whole as f64
    }
}

fn print_rounds(t: &Tally) {
    for r in &t.rounds {
        say!(
            "round {}: {} steps, {} judged ({:.1}%), {} with a consensus action, {} by two or more annotators",
            r.round,
            r.steps,
            r.judged,
            percent(r.judged, r.steps),
            r.with_action,
            r.multi
        );
        say!(
            "  verdicts: {} action, {} skip, {} unrecoverable",
            r.action_votes,
            r.skip_votes,
            r.unrecoverable_votes
        );
    }
}

fn judged_text(spec: &Spec, j: &Judged) -> String {
    match j {
        Judged::Action(a) => spec
            .actions
            .iter()
            .zip(a)
            .map(|(c, &v)| c.format_value(v))
            .collect::<Vec<_>>()
            .join(","),
        Judged::Skip => "skip".into(),
        Judged::Unrecoverable => "unrecoverable".into(),
    }
}

fn step_line(spec: &Spec, s: &StepConsensus) -> String {
    let votes: Vec<String> = s
        .votes
        .iter()
        .map(|v| format!("{}={}", v.annotator, judged_text(spec, &v.judged)))
        .collect();
    let consensus = s.action.as_ref().map_or("none".into(), |a| {
        judged_text(spec, &Judged::Action(a.clone()))
    });
    let agreement = s.agreement.map_or("-".into(), |a| format!("{a:.2}"));
    format!(
        "  round {} `{}` t {}: {} -> {consensus} (agreement {agreement})",
        s.round,
        s.episode,
        s.t,
        votes.join(" ")
    )
}

fn print_set_apart(t: &Tally) {
    for m in &t.mismatches {
        say!(
            "not applied: {} #{} (round {} `{}` t {}): the step's data changed since (fingerprint {} in the ledger, {} now)",
            m.annotator,
            m.seq,
            m.round,
            m.episode,
            m.t,
            m.recorded,
            m.current
        );
    }
    for u in &t.unapplied {
        say!("not applied: {} #{}: {}", u.annotator, u.seq, u.reason);
    }
    for p in &t.ledger_problems {
        say!("ledger problem: {p}");
    }
}

fn agreement_json(a: &ChannelAgreement) -> Value {
    json!({
        "channel": a.channel,
        "metric": a.metric.name(),
        "alpha": a.alpha,
        "steps": a.units,
        "verdicts": a.values,
    })
}

fn step_json(spec: &Spec, s: &StepConsensus) -> Value {
    let votes: Vec<Value> = s
        .votes
        .iter()
        .map(|v| json!({"annotator": v.annotator, "verdict": judged_text(spec, &v.judged)}))
        .collect();
    let consensus = s
        .action
        .as_ref()
        .map(|a| judged_text(spec, &Judged::Action(a.clone())));
    json!({
        "round": s.round, "episode": s.episode, "t": s.t,
        "votes": votes, "consensus": consensus, "agreement": s.agreement,
    })
}

/// The tally as JSON (the same facts as the text; `steps` only when asked for).
fn tally_json(spec: &Spec, t: &Tally, with_steps: bool) -> Value {
    let ledgers: Vec<Value> = t
        .ledgers
        .iter()
        .map(|l| json!({"annotator": l.annotator, "records": l.records}))
        .collect();
    let rounds: Vec<Value> = t
        .rounds
        .iter()
        .map(|r| {
            json!({
                "round": r.round, "steps": r.steps, "judged": r.judged,
                "with_action": r.with_action, "multi": r.multi,
                "action_votes": r.action_votes, "skip_votes": r.skip_votes,
                "unrecoverable_votes": r.unrecoverable_votes,
            })
        })
        .collect();
    let mut not_applied: Vec<Value> = t
        .mismatches
        .iter()
        .map(|m| {
            json!({"annotator": m.annotator, "seq": m.seq, "reason": format!(
                "the step's data changed since (round {} `{}` t {}; fingerprint {} in the ledger, {} now)",
                m.round, m.episode, m.t, m.recorded, m.current)})
        })
        .collect();
    not_applied.extend(
        t.unapplied.iter().map(
            |u| json!({"annotator": u.annotator, "seq": u.seq, "reason": u.reason.to_string()}),
        ),
    );
    let problems: Vec<String> = t.ledger_problems.iter().map(|p| p.to_string()).collect();
    let mut v = json!({
        "ledgers": ledgers,
        "rounds": rounds,
        "agreement": t.channels.iter().map(agreement_json).collect::<Vec<_>>(),
        "verdict_agreement": agreement_json(&t.verdicts),
        "not_applied": not_applied,
        "ledger_problems": problems,
    });
    if with_steps {
        v["steps"] = json!(
            t.steps
                .iter()
                .map(|s| step_json(spec, s))
                .collect::<Vec<_>>()
        );
    }
    v
}

/// Runs `tally`.
pub fn run(a: TallyArgs) -> Result<(), CliError> {
    let c = load(&a.dir)?;
    let countersteer::workflow::Tallied { ledgers, tally: t } =
        countersteer::workflow::tally_campaign(&c)?;
    super::correct::warn_skipped_ledgers(&c.root);
    if a.json {
        let mut v = tally_json(c.spec(), &t, a.steps);
        v["campaign"] = json!(c.file.name);
        let torn: Vec<Value> = ledgers
            .iter()
            .filter(|l| l.incomplete_tail > 0)
            .map(|l| json!({"file": l.path.display().to_string(), "bytes": l.incomplete_tail}))
            .collect();
        v["unfinished_tails"] = json!(torn);
        json::print_ok(v);
        return Ok(());
    }
    let who: Vec<String> = t
        .ledgers
        .iter()
        .map(|l| format!("{} ({} records)", l.annotator, l.records))
        .collect();
    say!(
        "campaign `{}`: {} annotator(s): {}",
        c.file.name,
        who.len(),
        who.join(", ")
    );
    print_rounds(&t);
    say!("agreement (Krippendorff's alpha over steps with two or more verdicts):");
    for ch in t.channels.iter().chain([&t.verdicts]) {
        say!("{}", alpha_line(ch));
    }
    if a.steps {
        say!("judged steps (annotator=verdict -> consensus):");
        for s in &t.steps {
            say!("{}", step_line(c.spec(), s));
        }
    }
    print_set_apart(&t);
    for l in ledgers.iter().filter(|l| l.incomplete_tail > 0) {
        say!(
            "note: {} ends in {} bytes of an unfinished line (being written now, or torn by a crash; the next `correct` by {} sets it aside)",
            l.path.display(),
            l.incomplete_tail,
            l.annotator
        );
    }
    Ok(())
}
