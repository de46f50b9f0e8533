//! Checks shared by every step loader: dimensions, finiteness, bounds, choices, frame paths.

use std::path::{Component, Path, PathBuf};

use super::error::{Location, ProblemKind, ProblemLog};
use super::outcome::{RawOutcome, RowOutcome, check_outcome};
use super::spec::{ChannelKind, Spec};

/// One action value as written in a file: a number, or a discrete choice's name.
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(untagged)]
pub enum RawValue {
    /// A number (continuous value, or a discrete choice's index).
    Number(f64),
    /// A discrete choice's name.
    Name(String),
}

/// Converts and checks rows against a spec, reporting faults to a [`ProblemLog`].
#[derive(Debug)]
pub struct RowChecker<'s> {
    spec: &'s Spec,
    /// Scratch state vector of the last checked row.
    pub state: Vec<f32>,
    /// Scratch action vector of the last checked row.
    pub action: Vec<f32>,
    /// Scratch flat samples of the last checked row.
    pub samples: Vec<f32>,
    /// Outcome fields of the last checked row.
    pub outcome: RowOutcome,
}

impl<'s> RowChecker<'s> {
    /// A checker for `spec`.
    pub fn new(spec: &'s Spec) -> Self {
        RowChecker {
            spec,
            state: Vec::new(),
            action: Vec::new(),
            samples: Vec::new(),
            outcome: RowOutcome::default(),
        }
    }

    /// Fills `self.outcome` from a row's raw outcome fields; false (with problems logged) when
    /// unusable. Loaders call it for every row (with empty fields when the file has none).
    pub fn outcome(&mut self, raw: RawOutcome<'_>, log: &mut ProblemLog, at: Location) -> bool {
        match check_outcome(self.spec, raw, log, at) {
            Some(o) => {
                self.outcome = o;
                true
            }
            None => {
                self.outcome = RowOutcome::default();
                false
            }
        }
    }

    /// Fills `self.state` from raw values; false (with problems logged) when unusable.
    pub fn state<I: ExactSizeIterator<Item = f64>>(
        &mut self,
        values: I,
        log: &mut ProblemLog,
        at: Location,
    ) -> bool {
        let want = self.spec.state_dim();
        if values.len() != want {
            let msg = format!(
                "expected {want} state values (one per spec feature), found {}",
                values.len()
            );
            log.error(ProblemKind::WrongDimension, at, "state", msg);
            return false;
        }
        self.state.clear();
        let mut ok = true;
        for (i, v) in values.enumerate() {
            let x = v as f32;
            if !x.is_finite() {
                let name = &self.spec.features[i].name;
                log.error(
                    ProblemKind::NonFinite,
                    at,
                    format!("state.{name}"),
                    not_finite(v),
                );
                ok = false;
            }
            self.state.push(x);
        }
        ok
    }

    /// Fills `self.action` from raw values, clipping out-of-bounds values with a warning.
    pub fn action<'v, I>(
        &mut self,
        values: I,
        log: &mut ProblemLog,
        at: Location,
        field: &str,
    ) -> bool
    where
        I: ExactSizeIterator<Item = &'v RawValue>,
    {
        self.action.clear();
        convert_action(self.spec, values, log, at, field, &mut self.action)
    }

    /// Appends one ensemble sample to `self.samples` (call `self.samples.clear()` per row).
    pub fn sample<'v, I>(
        &mut self,
        values: I,
        log: &mut ProblemLog,
        at: Location,
        field: &str,
    ) -> bool
    where
        I: ExactSizeIterator<Item = &'v RawValue>,
    {
        convert_action(self.spec, values, log, at, field, &mut self.samples)
    }
}

fn convert_action<'v, I>(
    spec: &Spec,
    values: I,
    log: &mut ProblemLog,
    at: Location,
    field: &str,
    out: &mut Vec<f32>,
) -> bool
where
    I: ExactSizeIterator<Item = &'v RawValue>,
{
    let want = spec.action_dim();
    if values.len() != want {
        let msg = format!(
            "expected {want} action values (one per spec channel), found {}",
            values.len()
        );
        log.error(ProblemKind::WrongDimension, at, field, msg);
        return false;
    }
    let mut ok = true;
    for (ch, v) in spec.actions.iter().zip(values) {
        let f = format!("{field}.{}", ch.name);
        match action_value(&ch.kind, v) {
            Ok((x, None)) => out.push(x),
            Ok((x, Some(msg))) => {
                log.warn(ProblemKind::OutOfBounds, at, f, msg);
                out.push(x);
            }
            Err((kind, msg)) => {
                log.error(kind, at, f, msg);
                out.push(0.0);
                ok = false;
            }
        }
    }
    ok
}

type ValueResult = Result<(f32, Option<String>), (ProblemKind, String)>;

/// Converts one raw action value for a channel: the stored value and an optional clip warning.
pub fn action_value(kind: &ChannelKind, v: &RawValue) -> ValueResult {
    match (kind, v) {
        (ChannelKind::Continuous { low, high }, RawValue::Number(x)) => {
            if !x.is_finite() {
                return Err((ProblemKind::NonFinite, not_finite(*x)));
            }
            if *x < *low || *x > *high {
                let c = x.clamp(*low, *high);
                let msg = format!("{x} is outside [{low}, {high}]; clipped to {c}");
                return Ok((c as f32, Some(msg)));
            }
            Ok((*x as f32, None))
        }
        (ChannelKind::Continuous { .. }, RawValue::Name(s)) => Err((
            ProblemKind::UnknownChoice,
            format!("`{s}` is text but the channel is continuous"),
        )),
        (ChannelKind::Discrete { choices }, RawValue::Name(s)) => {
            match choices.iter().position(|c| c == s) {
                Some(i) => Ok((i as f32, None)),
                None => Err((
                    ProblemKind::UnknownChoice,
                    format!("`{s}` is not one of {}", choices.join(", ")),
                )),
            }
        }
        (ChannelKind::Discrete { choices }, RawValue::Number(x)) => {
            if x.fract() == 0.0 && *x >= 0.0 && (*x as usize) < choices.len() {
                Ok((*x as f32, None))
            } else {
                let msg = format!(
                    "{x} is no choice index (0..{}) of {}",
                    choices.len(),
                    choices.join(", ")
                );
                Err((ProblemKind::UnknownChoice, msg))
            }
        }
    }
}

/// Parses a CSV/text cell as an action value: a number if it parses, else a name.
pub fn raw_from_text(s: &str) -> RawValue {
    let s = s.trim();
    match s.parse::<f64>() {
        Ok(x) => RawValue::Number(x),
        Err(_) => RawValue::Name(s.to_string()),
    }
}

fn not_finite(v: f64) -> String {
    if v.is_finite() {
        format!("{v:e} overflows a 32-bit float")
    } else {
        format!("{v} is not a finite number")
    }
}

/// Resolves a frame path written in a data file that lives in `data_dir` (relative to the
/// campaign folder). The result is relative to the campaign folder with `/` separators; a path
/// that is absolute or that leaves the campaign folder is refused.
pub fn resolve_frame(data_dir: &Path, frame: &str) -> Result<String, String> {
    if frame.is_empty() {
        return Err("frame path is empty".into());
    }
    let p = Path::new(frame);
    if p.is_absolute() || frame.starts_with('/') || frame.starts_with('\\') || p.has_root() {
        return Err(format!(
            "`{frame}` is absolute; frame paths must be relative to the data file"
        ));
    }
    let mut parts: Vec<String> = Vec::new();
    let joined: PathBuf = data_dir.join(p);
    for c in joined.components() {
        match c {
            Component::Normal(s) => parts.push(s.to_string_lossy().into_owned()),
            Component::CurDir => {}
            Component::ParentDir => {
                if parts.pop().is_none() {
                    return Err(format!("`{frame}` leaves the campaign folder"));
                }
            }
            Component::Prefix(_) | Component::RootDir => {
                return Err(format!(
                    "`{frame}` is absolute; frame paths must be relative"
                ));
            }
        }
    }
    if parts.is_empty() {
        return Err(format!("`{frame}` names no file"));
    }
    Ok(parts.join("/"))
}

impl<'s> RowChecker<'s> {
    /// The spec rows are checked against.
    pub fn spec(&self) -> &'s Spec {
        self.spec
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn frame_paths_stay_inside_the_campaign() {
        let d = Path::new("rounds/1");
        assert_eq!(
            resolve_frame(d, "frames/a.png").as_deref(),
            Ok("rounds/1/frames/a.png")
        );
        assert_eq!(resolve_frame(d, "../../x.png").as_deref(), Ok("x.png"));
        assert!(resolve_frame(d, "../../../x.png").is_err());
        assert!(resolve_frame(d, "/etc/passwd").is_err());
        assert!(resolve_frame(d, "").is_err());
    }

    #[test]
    fn discrete_values_by_name_or_index() {
        let k = ChannelKind::Discrete {
            choices: vec!["a".into(), "b".into()],
        };
        assert_eq!(
            action_value(&k, &RawValue::Name("b".into())),
            Ok((1.0, None))
        );
        assert_eq!(action_value(&k, &RawValue::Number(0.0)), Ok((0.0, None)));
        assert!(action_value(&k, &RawValue::Number(2.0)).is_err());
        assert!(action_value(&k, &RawValue::Number(0.5)).is_err());
        assert_eq!(
            action_value(&k, &RawValue::Name("c".into())).map_err(|e| e.0),
            Err(ProblemKind::UnknownChoice)
        );
    }

    #[test]
    fn continuous_values_clip_with_a_warning() {
        let k = ChannelKind::Continuous {
            low: -1.0,
            high: 1.0,
        };
        let (v, w) = action_value(&k, &RawValue::Number(1.5)).unwrap();
        assert_eq!(v, 1.0);
        assert!(w.unwrap().contains("clipped to 1"));
        assert_eq!(
            action_value(&k, &RawValue::Number(1e300)).map(|x| x.0),
            Ok(1.0)
        );
    }
}
