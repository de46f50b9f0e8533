//! The campaign's declared state features and action channels (`campaign.json`).

use serde::{Deserialize, Serialize};

/// Default number of neighbours for novelty scoring.
pub const DEFAULT_K: usize = 5;
/// Default flag level for conformal p-values.
pub const DEFAULT_ALPHA: f64 = 0.05;

/// One state feature: a named, unit-carrying column of the state vector.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Feature {
    /// Column name, unique within the spec.
    pub name: String,
    /// Physical unit, free text ("m", "rad", "1/m", "" for none).
    #[serde(default)]
    pub unit: String,
    /// Optional scale: novelty distances divide this feature by it. When absent a robust scale
    /// is estimated from the demonstrations.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scale: Option<f64>,
    /// What the feature's values are: a continuous quantity (the default), a binary flag or a
    /// categorical code. Binary and categorical features without a `scale` are scaled by the
    /// range of their codes (see `novelty::scale`).
    #[serde(default, skip_serializing_if = "FeatureKind::is_continuous")]
    pub kind: FeatureKind,
}

/// What a state feature's values are (`"kind"` in the spec).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FeatureKind {
    /// A real-valued quantity.
    #[default]
    Continuous,
    /// A flag: two codes, usually 0 and 1.
    Binary,
    /// A code naming one of several categories.
    Categorical,
}

impl FeatureKind {
    /// True for the default kind (left out when the spec is written).
    pub fn is_continuous(&self) -> bool {
        *self == FeatureKind::Continuous
    }
}

/// How an action channel takes its values.
#[derive(Debug, Clone, PartialEq)]
pub enum ChannelKind {
    /// A real number in `[low, high]`.
    Continuous {
        /// Lower bound (inclusive).
        low: f64,
        /// Upper bound (inclusive).
        high: f64,
    },
    /// One of a set of named choices; stored as the choice's index.
    Discrete {
        /// The choice names, in index order.
        choices: Vec<String>,
    },
}

/// One action channel.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "RawChannel", into = "RawChannel")]
pub struct ActionChannel {
    /// Column name, unique within the spec.
    pub name: String,
    /// Physical unit ("rad", "m/s^2"; empty for discrete channels).
    pub unit: String,
    /// Continuous range or discrete choices.
    pub kind: ChannelKind,
}

#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawChannel {
    name: String,
    #[serde(default)]
    unit: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    low: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    high: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    choices: Option<Vec<String>>,
}

impl TryFrom<RawChannel> for ActionChannel {
    type Error = String;
    fn try_from(raw: RawChannel) -> Result<Self, String> {
        let kind = match (raw.low, raw.high, raw.choices) {
            (Some(low), Some(high), None) => ChannelKind::Continuous { low, high },
            (None, None, Some(choices)) => ChannelKind::Discrete { choices },
            (_, _, Some(_)) => {
                return Err(format!(
                    "action channel `{}` has both `choices` and `low`/`high`",
                    raw.name
                ));
            }
            _ => {
                return Err(format!(
                    "action channel `{}` needs either `low` and `high` or `choices`",
                    raw.name
                ));
            }
        };
        Ok(ActionChannel {
            name: raw.name,
            unit: raw.unit,
            kind,
        })
    }
}

impl From<ActionChannel> for RawChannel {
    fn from(c: ActionChannel) -> Self {
        let (low, high, choices) = match c.kind {
            ChannelKind::Continuous { low, high } => (Some(low), Some(high), None),
            ChannelKind::Discrete { choices } => (None, None, Some(choices)),
        };
        RawChannel {
            name: c.name,
            unit: c.unit,
            low,
            high,
            choices,
        }
    }
}

impl ActionChannel {
    /// Width of the channel's value range: `high - low`, or the number of choices minus one
    /// (at least 1) for discrete channels. Used to make action gaps comparable across channels.
    pub fn range(&self) -> f64 {
        match &self.kind {
            ChannelKind::Continuous { low, high } => (high - low).max(f64::MIN_POSITIVE),
            ChannelKind::Discrete { choices } => (choices.len().max(2) - 1) as f64,
        }
    }

    /// The discrete choices, if this channel is discrete.
    pub fn choices(&self) -> Option<&[String]> {
        match &self.kind {
            ChannelKind::Discrete { choices } => Some(choices),
            ChannelKind::Continuous { .. } => None,
        }
    }

    /// Shows a stored value as text: the number, or the choice name for discrete channels.
    pub fn format_value(&self, v: f32) -> String {
        match &self.kind {
            ChannelKind::Continuous { .. } => format!("{v}"),
            ChannelKind::Discrete { choices } => choices
                .get(v as usize)
                .cloned()
                .unwrap_or_else(|| format!("#{v}")),
        }
    }
}

/// The campaign's declared state and action layout.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Spec {
    /// State features, in state-vector order.
    pub features: Vec<Feature>,
    /// Action channels, in action-vector order.
    pub actions: Vec<ActionChannel>,
    /// Optional pair of feature names drawn as the map's horizontal and vertical axes.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub position: Option<[String; 2]>,
    /// The episode outcomes the data may name (`"outcome"` of a step); empty means
    /// [`Outcome::defaults`]: `success` and `failure`.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub outcomes: Vec<Outcome>,
}

/// One outcome an episode may end with.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Outcome {
    /// The name the data uses.
    pub name: String,
    /// True when an episode with this outcome failed (the steps before its end become review
    /// candidates, and the trend counts it as a failure).
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub failure: bool,
}

impl Outcome {
    /// The outcomes of a spec that declares none: `success` and `failure` (a failure).
    pub fn defaults() -> Vec<Outcome> {
        vec![
            Outcome {
                name: "success".into(),
                failure: false,
            },
            Outcome {
                name: "failure".into(),
                failure: true,
            },
        ]
    }
}

impl Spec {
    /// Number of state features.
    pub fn state_dim(&self) -> usize {
        self.features.len()
    }

    /// Number of action channels.
    pub fn action_dim(&self) -> usize {
        self.actions.len()
    }

    /// Index of the feature with this name.
    pub fn feature_index(&self, name: &str) -> Option<usize> {
        self.features.iter().position(|f| f.name == name)
    }

    /// Index of the action channel with this name.
    pub fn channel_index(&self, name: &str) -> Option<usize> {
        self.actions.iter().position(|c| c.name == name)
    }

    /// The outcomes the data may name, in index order (the declared ones, else the defaults).
    pub fn outcome_list(&self) -> Vec<Outcome> {
        if self.outcomes.is_empty() {
            Outcome::defaults()
        } else {
            self.outcomes.clone()
        }
    }

    /// Index of an outcome name in [`Spec::outcome_list`].
    pub fn outcome_index(&self, name: &str) -> Option<usize> {
        self.outcome_list().iter().position(|o| o.name == name)
    }

    /// Indices (in [`Spec::outcome_list`]) of the outcomes that are failures.
    pub fn failure_indices(&self) -> Vec<u32> {
        let list = self.outcome_list();
        (0..list.len() as u32)
            .filter(|&i| list[i as usize].failure)
            .collect()
    }

    /// True when the outcome with this index is a failure.
    pub fn is_failure(&self, index: usize) -> bool {
        self.outcome_list().get(index).is_some_and(|o| o.failure)
    }

    /// The map axes as feature indices, when the spec declares a position pair.
    pub fn position_indices(&self) -> Option<[usize; 2]> {
        let [a, b] = self.position.as_ref()?;
        Some([self.feature_index(a)?, self.feature_index(b)?])
    }

    /// Checks the spec itself; returns one message per fault, with the field it concerns.
    pub fn problems(&self) -> Vec<(String, String)> {
        let mut out = Vec::new();
        if self.features.is_empty() {
            out.push((
                "spec.features".into(),
                "at least one state feature is needed".into(),
            ));
        }
        if self.actions.is_empty() {
            out.push((
                "spec.actions".into(),
                "at least one action channel is needed".into(),
            ));
        }
        let reserved = [
            "episode",
            "t",
            "frame",
            "intervention",
            "reward",
            "cost",
            "outcome",
        ];
        let mut seen = std::collections::HashSet::new();
        let names = self.features.iter().map(|f| ("features", &f.name));
        let names = names.chain(self.actions.iter().map(|c| ("actions", &c.name)));
        for (i, (list, name)) in names.enumerate() {
            let field = format!("spec.{list}[{}].name", self.list_index(i));
            if name.trim().is_empty() {
                out.push((field, "name is empty".into()));
            } else if reserved.contains(&name.as_str()) {
                out.push((field, format!("`{name}` is reserved for a step column")));
            } else if !seen.insert(name.clone()) {
                out.push((field, format!("`{name}` is used twice")));
            }
        }
        for (i, f) in self.features.iter().enumerate() {
            if let Some(s) = f.scale
                && !(s.is_finite() && s > 0.0)
            {
                out.push((
                    format!("spec.features[{i}].scale"),
                    format!("{s} is not a positive number"),
                ));
            }
        }
        for (i, c) in self.actions.iter().enumerate() {
            match &c.kind {
                ChannelKind::Continuous { low, high } => {
                    if !(low.is_finite() && high.is_finite() && low < high) {
                        out.push((
                            format!("spec.actions[{i}]"),
                            format!("needs finite low < high, got low {low}, high {high}"),
                        ));
                    }
                }
                ChannelKind::Discrete { choices } => {
                    let unique: std::collections::HashSet<_> = choices.iter().collect();
                    if choices.is_empty() || unique.len() != choices.len() {
                        out.push((
                            format!("spec.actions[{i}].choices"),
                            "needs at least one choice and no name twice".into(),
                        ));
                    }
                }
            }
        }
        let mut names = std::collections::HashSet::new();
        for (i, o) in self.outcomes.iter().enumerate() {
            if o.name.trim().is_empty() || !names.insert(o.name.as_str()) {
                out.push((
                    format!("spec.outcomes[{i}].name"),
                    format!("`{}` is empty or used twice", o.name),
                ));
            }
        }
        if let Some([a, b]) = &self.position {
            for (j, n) in [a, b].into_iter().enumerate() {
                if self.feature_index(n).is_none() {
                    out.push((
                        format!("spec.position[{j}]"),
                        format!("`{n}` is not a state feature"),
                    ));
                }
            }
        }
        out
    }

    fn list_index(&self, i: usize) -> usize {
        if i < self.features.len() {
            i
        } else {
            i - self.features.len()
        }
    }
}

/// Novelty settings stored with the campaign.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct NoveltySettings {
    /// Which neighbour's distance is the novelty score (k-th nearest).
    pub k: usize,
    /// Flag level: a step is flagged when its conformal p-value is at most alpha.
    pub alpha: f64,
}

impl Default for NoveltySettings {
    fn default() -> Self {
        NoveltySettings {
            k: DEFAULT_K,
            alpha: DEFAULT_ALPHA,
        }
    }
}

/// The contents of `campaign.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CampaignFile {
    /// Human-readable campaign name.
    pub name: String,
    /// Optional free-text description.
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub description: String,
    /// Seconds between steps, when the rollouts have a fixed rate (used for playback speed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub step_seconds: Option<f64>,
    /// State and action layout.
    pub spec: Spec,
    /// Novelty settings.
    #[serde(default)]
    pub novelty: NoveltySettings,
}
