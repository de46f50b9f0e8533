//! `countersteer tally DIR`: per-round counts, consensus coverage and agreement.

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use super::correct::load;
use countersteer::campaign::Spec;
use countersteer::consensus::{ChannelAgreement, Judged, StepConsensus, Tally};

/// Arguments of `tally`.
#[derive(Debug, Args)]
pub struct TallyArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Also list every judged step with its verdicts and consensus.
    #[arg(long)]
    pub steps: bool,
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

/// Runs `tally`.
pub fn run(a: TallyArgs) -> Result<(), CliError> {
    let c = load(&a.dir)?;
    let countersteer::workflow::Tallied { ledgers, tally: t } =
        countersteer::workflow::tally_campaign(&c)?;
    super::correct::warn_skipped_ledgers(&c.root);
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
