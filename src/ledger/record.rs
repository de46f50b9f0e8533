//! The records of a ledger and their JSON Lines form.
//!
//! A correction line looks like
//! `{"seq":3,"kind":"correction","round":1,"episode":"lane-04","t":212,
//! "fingerprint":"883e84fa23489c60","verdict":{"action":[0.12,"slow"]},"note":"...",
//! "annotator":"ana","time":"2026-12-02T00:31:13.042Z","tool":"0.1.0"}`;
//! `verdict` is `"skip"`, `"unrecoverable"` or `{"action": [...]}` with one value per action
//! channel (numbers for continuous channels, choice names for discrete ones). A retraction is
//! `{"seq":4,"kind":"retraction","retracts":3,...}`.

use serde::{Deserialize, Serialize};

use crate::campaign::{ActionChannel, ChannelKind, Spec};

/// One value of a recovery action: a number for a continuous channel, a choice name for a
/// discrete one.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum ActionValue {
    /// A continuous channel's value.
    Number(f64),
    /// A discrete channel's choice, by name.
    Choice(String),
}

/// An expert's verdict on a step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    /// The recovery action the learner should have taken, one value per channel.
    Action(Vec<ActionValue>),
    /// The expert passes on this step (no judgement; abstains from the consensus).
    Skip,
    /// No action could recover from this state.
    Unrecoverable,
}

impl Verdict {
    /// A recovery action from a stored action vector (discrete channels hold choice indices).
    pub fn from_action(spec: &Spec, action: &[f32]) -> Verdict {
        let values = spec
            .actions
            .iter()
            .zip(action)
            .map(|(c, &v)| match &c.kind {
                ChannelKind::Continuous { .. } => ActionValue::Number(f64::from(v)),
                ChannelKind::Discrete { .. } => ActionValue::Choice(c.format_value(v)),
            })
            .collect();
        Verdict::Action(values)
    }

    /// The action as a stored vector (choice indices for discrete channels), checked against
    /// the spec: one value per channel, finite numbers within bounds, known choice names.
    /// The error names the channel.
    pub fn action_vector(&self, spec: &Spec) -> Option<Result<Vec<f32>, String>> {
        let Verdict::Action(values) = self else {
            return None;
        };
        Some(action_vector(spec, values))
    }

    /// A short word for the verdict's kind: `action`, `skip` or `unrecoverable`.
    pub fn kind_name(&self) -> &'static str {
        match self {
            Verdict::Action(_) => "action",
            Verdict::Skip => "skip",
            Verdict::Unrecoverable => "unrecoverable",
        }
    }
}

fn action_vector(spec: &Spec, values: &[ActionValue]) -> Result<Vec<f32>, String> {
    if values.len() != spec.action_dim() {
        return Err(format!(
            "action has {} values, the spec has {} channels",
            values.len(),
            spec.action_dim()
        ));
    }
    spec.actions
        .iter()
        .zip(values)
        .map(|(c, v)| channel_value(c, v))
        .collect()
}

/// One action value checked against its channel: a finite number within bounds for a
/// continuous channel, a declared choice name for a discrete one (stored as its index).
/// The error names the channel.
pub(crate) fn channel_value(c: &ActionChannel, v: &ActionValue) -> Result<f32, String> {
    match (&c.kind, v) {
        (ChannelKind::Continuous { low, high }, ActionValue::Number(x)) => {
            if x.is_finite() && *x >= *low && *x <= *high {
                Ok(*x as f32)
            } else {
                Err(format!("`{}`: {x} is outside {low}..{high}", c.name))
            }
        }
        (ChannelKind::Discrete { choices }, ActionValue::Choice(s)) => choices
            .iter()
            .position(|n| n == s)
            .map(|i| i as f32)
            .ok_or_else(|| format!("`{}`: `{s}` is not one of {choices:?}", c.name)),
        (ChannelKind::Continuous { .. }, ActionValue::Choice(s)) => {
            Err(format!("`{}`: expected a number, got `{s}`", c.name))
        }
        (ChannelKind::Discrete { choices }, ActionValue::Number(x)) => Err(format!(
            "`{}`: expected one of {choices:?}, got {x}",
            c.name
        )),
    }
}

/// A correction: the verdict on one step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Correction {
    /// The round the step belongs to.
    pub round: u32,
    /// The episode's name.
    pub episode: String,
    /// The step's time index.
    pub t: i64,
    /// [`super::fingerprint`] of the step when the verdict was given.
    pub fingerprint: String,
    /// The verdict.
    pub verdict: Verdict,
    /// Optional free-text note.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// A retraction: withdraws an earlier correction of the same ledger.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Retraction {
    /// Sequence number of the withdrawn correction.
    pub retracts: u64,
}

/// What a record says.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum Entry {
    /// A verdict on a step.
    Correction(Correction),
    /// An undo of an earlier correction.
    Retraction(Retraction),
}

/// One line of a ledger.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Record {
    /// Sequence number, increasing from 1 within the ledger.
    pub seq: u64,
    /// The correction or retraction.
    #[serde(flatten)]
    pub entry: Entry,
    /// The annotator (the ledger's owner).
    pub annotator: String,
    /// Wall-clock time of the append, UTC, RFC 3339.
    pub time: String,
    /// Version of the tool that wrote the record.
    pub tool: String,
}

impl Record {
    /// The correction, if this record is one.
    pub fn correction(&self) -> Option<&Correction> {
        match &self.entry {
            Entry::Correction(c) => Some(c),
            Entry::Retraction(_) => None,
        }
    }

    /// The record as one JSON line, newline included.
    pub fn to_line(&self) -> Vec<u8> {
        // Serialising plain strings and numbers cannot fail.
        let mut line = serde_json::to_vec(self).unwrap_or_default();
        line.push(b'\n');
        line
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn record(verdict: Verdict) -> Record {
        Record {
            seq: 3,
            entry: Entry::Correction(Correction {
                round: 1,
                episode: "lane-04".into(),
                t: 212,
                fingerprint: "883e84fa23489c60".into(),
                verdict,
                note: None,
            }),
            annotator: "ana".into(),
            time: "2026-12-02T00:31:13.042Z".into(),
            tool: "0.1.0".into(),
        }
    }

    #[test]
    fn records_round_trip_through_their_json_line() {
        for v in [
            Verdict::Skip,
            Verdict::Unrecoverable,
            Verdict::Action(vec![
                ActionValue::Number(0.12),
                ActionValue::Choice("slow".into()),
            ]),
        ] {
            let r = record(v);
            let line = r.to_line();
            assert_eq!(serde_json::from_slice::<Record>(&line).unwrap(), r);
        }
        let line = String::from_utf8(record(Verdict::Skip).to_line()).unwrap();
        assert_eq!(
            line,
            "{\"seq\":3,\"kind\":\"correction\",\"round\":1,\"episode\":\"lane-04\",\"t\":212,\
             \"fingerprint\":\"883e84fa23489c60\",\"verdict\":\"skip\",\"annotator\":\"ana\",\
             \"time\":\"2026-12-02T00:31:13.042Z\",\"tool\":\"0.1.0\"}\n"
        );
    }
}
