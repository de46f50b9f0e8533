//! Located problems in campaign files, and the library's campaign error type.

use std::fmt;
use std::path::{Path, PathBuf};

/// Where in a file a problem sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Location {
    /// The file as a whole (unreadable, empty, missing array).
    File,
    /// A 1-based text line (JSON Lines, CSV with its header as line 1, `campaign.json`).
    Line(u64),
    /// A 0-based record index in a binary array file (.npy/.npz row).
    Record(u64),
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Location::File => Ok(()),
            Location::Line(n) => write!(f, ":{n}"),
            Location::Record(n) => write!(f, " record {n}"),
        }
    }
}

/// What kind of fault a problem is; stable names for tests and scripts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ProblemKind {
    /// The file or folder could not be read.
    Unreadable,
    /// The file holds no steps.
    Empty,
    /// JSON that does not parse, or a record of the wrong shape.
    MalformedJson,
    /// CSV that does not parse.
    MalformedCsv,
    /// A NumPy file that does not parse or has the wrong dtype or shape.
    MalformedNumpy,
    /// A state or action vector of the wrong length.
    WrongDimension,
    /// NaN or infinity, or a value that overflows f32.
    NonFinite,
    /// `t` does not increase strictly within an episode.
    TimeOrder,
    /// The same (episode, t) twice.
    DuplicateStep,
    /// A column the spec does not know.
    UnknownColumn,
    /// A column the spec needs is absent.
    MissingColumn,
    /// A continuous action outside the channel's bounds (clipped; a warning).
    OutOfBounds,
    /// A discrete action that names no declared choice.
    UnknownChoice,
    /// A frame path that is absolute or leaves the campaign folder.
    BadFramePath,
    /// A frame path that names no file (a warning).
    MissingFrame,
    /// A fault in `campaign.json` itself.
    BadSpec,
    /// A line longer than the loader accepts.
    TooLong,
    /// More records in one file than the record cap allows.
    TooMany,
    /// A file or folder that is a link leading outside the campaign folder.
    OutsideCampaign,
    /// An episode name holding a control character (NUL, line break, tab...).
    BadEpisodeName,
    /// Text in an encoding other than UTF-8 (e.g. a UTF-16 byte-order mark).
    NotUtf8,
    /// Two different outcomes given for one episode.
    ConflictingOutcome,
    /// A frame image that does not decode (or declares more than the decoder's limits).
    BadFrame,
    /// A CSV header names one column twice.
    DuplicateColumn,
    /// A file or folder in a data folder that is not read (a warning), or a round folder
    /// whose name is not a plain number (an error).
    Skipped,
}

/// Whether a problem stops the campaign from loading.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Severity {
    /// The data cannot be used as it is.
    Error,
    /// The data was used, with the change described (e.g. clipped to bounds).
    Warning,
}

/// One located fault in one file.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Error or warning.
    pub severity: Severity,
    /// What kind of fault.
    pub kind: ProblemKind,
    /// The file, relative to the campaign folder where possible.
    pub file: PathBuf,
    /// Line or record.
    pub location: Location,
    /// The field or column concerned (`state[3]`, `action.steer`, `t`), empty for whole-file faults.
    pub field: String,
    /// What is wrong, in words.
    pub message: String,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let sev = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        write!(f, "{sev}: {}{}", self.file.display(), self.location)?;
        if !self.field.is_empty() {
            write!(f, ": field `{}`", self.field)?;
        }
        write!(f, ": {}", self.message)
    }
}

/// Collects problems of one file, up to a cap, counting what it did not keep.
#[derive(Debug, Clone)]
pub struct ProblemLog {
    file: PathBuf,
    cap: usize,
    kept: Vec<Problem>,
    errors: usize,
    warnings: usize,
}

impl ProblemLog {
    /// A log for `file` that keeps at most `cap` problems.
    pub fn new(file: &Path, cap: usize) -> Self {
        ProblemLog {
            file: file.to_path_buf(),
            cap,
            kept: Vec::new(),
            errors: 0,
            warnings: 0,
        }
    }

    /// The file this log is about.
    pub fn file(&self) -> &Path {
        &self.file
    }

    /// Records an error.
    pub fn error(
        &mut self,
        kind: ProblemKind,
        location: Location,
        field: impl Into<String>,
        message: impl Into<String>,
    ) {
        self.push(
            Severity::Error,
            kind,
            location,
            field.into(),
            message.into(),
        );
    }

    /// Records a warning.
    pub fn warn(
        &mut self,
        kind: ProblemKind,
        location: Location,
        field: impl Into<String>,
        message: impl Into<String>,
    ) {
        self.push(
            Severity::Warning,
            kind,
            location,
            field.into(),
            message.into(),
        );
    }

    fn push(
        &mut self,
        severity: Severity,
        kind: ProblemKind,
        location: Location,
        field: String,
        message: String,
    ) {
        match severity {
            Severity::Error => self.errors += 1,
            Severity::Warning => self.warnings += 1,
        }
        if self.kept.len() < self.cap {
            let file = self.file.clone();
            self.kept.push(Problem {
                severity,
                kind,
                file,
                location,
                field,
                message,
            });
        }
    }

    /// Number of errors seen (kept or not).
    pub fn error_count(&self) -> usize {
        self.errors
    }

    /// Number of warnings seen (kept or not).
    pub fn warning_count(&self) -> usize {
        self.warnings
    }

    /// True when the cap is reached and further problems are only counted.
    pub fn is_full(&self) -> bool {
        self.kept.len() >= self.cap
    }

    /// The kept problems, and how many more were counted but not kept.
    pub fn finish(self) -> (Vec<Problem>, usize) {
        let dropped = self.errors + self.warnings - self.kept.len();
        (self.kept, dropped)
    }
}

/// Error from loading a campaign.
#[derive(Debug, thiserror::Error)]
pub enum CampaignError {
    /// The campaign has located faults; `problems` holds them (errors and warnings), `more`
    /// counts faults beyond the per-file cap.
    #[error("{} problem(s) in the campaign; first: {}", .problems.len() + .more, first(.problems))]
    Invalid {
        /// The kept problems, in file order.
        problems: Vec<Problem>,
        /// Problems counted beyond the cap.
        more: usize,
    },
    /// The campaign folder itself cannot be used.
    #[error("{path}: {message}")]
    Folder {
        /// The folder or file.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// Loading was cancelled by the caller.
    #[error("cancelled")]
    Cancelled,
}

fn first(p: &[Problem]) -> String {
    p.iter()
        .find(|p| p.severity == Severity::Error)
        .map(|p| p.to_string())
        .unwrap_or_default()
}

impl CampaignError {
    /// The located problems, if this is a validation error.
    pub fn problems(&self) -> &[Problem] {
        match self {
            CampaignError::Invalid { problems, .. } => problems,
            _ => &[],
        }
    }
}
