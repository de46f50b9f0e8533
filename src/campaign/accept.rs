//! The last check every loader shares: a row's place in its episode, then into the table.

use super::error::{Location, ProblemKind, ProblemLog};
use super::steps::{OrderFault, StepRow, StepTableBuilder};
use super::validate::RowChecker;

/// Everything about one row apart from the vectors held by the checker.
#[derive(Debug, Default)]
pub struct RowMeta {
    /// Episode name.
    pub episode: String,
    /// Time index.
    pub t: i64,
    /// Frame path relative to the campaign folder.
    pub frame: Option<String>,
    /// Intervention flag.
    pub intervention: Option<bool>,
}

/// Adds a checked row to the builder unless its (episode, t) is out of order or repeated.
/// Returns false when the file already holds as many records as the cap allows: the row is
/// refused with an error and the caller stops reading the file.
pub fn accept(
    b: &mut StepTableBuilder,
    log: &mut ProblemLog,
    at: Location,
    meta: RowMeta,
    c: &RowChecker<'_>,
) -> bool {
    if b.source_full() {
        let cap = b.record_cap();
        let msg = format!(
            "more than {cap} records in one file (split it, or raise the record cap); \
             reading stopped here"
        );
        log.error(ProblemKind::TooMany, at, "", msg);
        return false;
    }
    if let Some(c) = meta.episode.chars().find(|c| c.is_control()) {
        // NumPy's fixed-width strings drop trailing NULs and CSV readers split on line
        // breaks: such a name would not survive an export.
        let msg = format!(
            "episode name `{}` holds the control character U+{:04X}",
            meta.episode.escape_debug(),
            u32::from(c)
        );
        log.error(ProblemKind::BadEpisodeName, at, "episode", msg);
        return true;
    }
    if let Some(fault) = b.order_fault(&meta.episode, meta.t) {
        let (kind, msg) = match fault {
            OrderFault::Duplicate { previous_origin } => {
                let unit = if matches!(at, Location::Record(_)) {
                    "record"
                } else {
                    "line"
                };
                let msg = format!(
                    "episode `{}` has t = {} twice (first at {unit} {previous_origin})",
                    meta.episode, meta.t
                );
                (ProblemKind::DuplicateStep, msg)
            }
            OrderFault::Backwards { previous_t } => (
                ProblemKind::TimeOrder,
                format!(
                    "t = {} after t = {previous_t} in episode `{}`: t must increase strictly",
                    meta.t, meta.episode
                ),
            ),
            OrderFault::OtherFile { source } => (
                ProblemKind::DuplicateStep,
                format!(
                    "episode `{}` already appears in another file (source #{source}); keep an episode in one file",
                    meta.episode
                ),
            ),
        };
        let field = if kind == ProblemKind::TimeOrder {
            "t"
        } else {
            "episode"
        };
        log.error(kind, at, field, msg);
        return true;
    }
    if let Some((had, line)) = b.outcome_conflict(&meta.episode, c.outcome.outcome) {
        let names = c.spec().outcome_list();
        let name = |i: u32| {
            names
                .get(i as usize)
                .map_or("?", |o| o.name.as_str())
                .to_string()
        };
        let msg = format!(
            "episode `{}` has outcome `{}` here but `{}` at {} {line}; give one outcome per episode",
            meta.episode,
            c.outcome.outcome.map_or(String::new(), name),
            name(had),
            if matches!(at, Location::Record(_)) {
                "record"
            } else {
                "line"
            },
        );
        log.error(ProblemKind::ConflictingOutcome, at, "outcome", msg);
        return true;
    }
    let origin = match at {
        Location::Line(n) | Location::Record(n) => n,
        Location::File => 0,
    };
    b.push(StepRow {
        episode: &meta.episode,
        t: meta.t,
        state: &c.state,
        action: &c.action,
        frame: meta.frame,
        intervention: meta.intervention,
        samples: &c.samples,
        origin,
        outcome: c.outcome,
    });
    true
}
