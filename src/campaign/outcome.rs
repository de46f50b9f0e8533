//! Outcome fields of a step: an optional per-step `reward` and `cost`, and the episode's
//! `outcome` (a name the spec declares, by default `success` or `failure`), checked with
//! located errors. An episode's outcome may be given on any of its steps (usually the last);
//! two different outcomes for one episode are an error.

use super::error::{Location, ProblemKind, ProblemLog};
use super::spec::Spec;

/// The outcome fields of one row as read from a file.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RawOutcome<'a> {
    /// Per-step reward.
    pub reward: Option<f64>,
    /// Per-step cost.
    pub cost: Option<f64>,
    /// The episode's outcome name.
    pub outcome: Option<&'a str>,
}

/// The checked outcome fields of one row.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RowOutcome {
    /// Per-step reward.
    pub reward: Option<f32>,
    /// Per-step cost.
    pub cost: Option<f32>,
    /// Index of the episode's outcome in [`Spec::outcome_list`].
    pub outcome: Option<u32>,
}

fn number(
    v: Option<f64>,
    field: &str,
    log: &mut ProblemLog,
    at: Location,
) -> Result<Option<f32>, ()> {
    let Some(v) = v else { return Ok(None) };
    let x = v as f32;
    if x.is_finite() {
        return Ok(Some(x));
    }
    let msg = format!("{v} is not a finite number (32-bit)");
    log.error(ProblemKind::NonFinite, at, field, msg);
    Err(())
}

/// Checks a row's outcome fields against the spec; `None` (with problems logged) when
/// unusable.
pub fn check_outcome(
    spec: &Spec,
    raw: RawOutcome<'_>,
    log: &mut ProblemLog,
    at: Location,
) -> Option<RowOutcome> {
    let reward = number(raw.reward, "reward", log, at);
    let cost = number(raw.cost, "cost", log, at);
    let outcome = match raw.outcome.map(str::trim).filter(|s| !s.is_empty()) {
        None => Ok(None),
        Some(name) => match spec.outcome_index(name) {
            Some(i) => Ok(Some(i as u32)),
            None => {
                let known: Vec<String> = spec.outcome_list().into_iter().map(|o| o.name).collect();
                let msg = format!(
                    "`{name}` is not an outcome of the spec (known: {}; declare others in spec.outcomes)",
                    known.join(", ")
                );
                log.error(ProblemKind::UnknownChoice, at, "outcome", msg);
                Err(())
            }
        },
    };
    Some(RowOutcome {
        reward: reward.ok()?,
        cost: cost.ok()?,
        outcome: outcome.ok()?,
    })
}
