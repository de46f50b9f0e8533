//! The merged-set export: demonstrations plus consensus corrections, one row per state, with
//! provenance, in JSON Lines, CSV or NumPy `.npz`, and a manifest beside it.
//!
//! Writes go through [`crate::durable`] (temporary file, fsync, rename, folder fsync; a failed
//! or cancelled export leaves no file under the final name) and are deterministic (same inputs and options, same bytes: rows in
//! a fixed order, no clock time, `.npz` members with a fixed date).
//!
//! Weights: every row weighs 1 by default. [`Weighting::Agreement`] multiplies a correction's
//! weight by its step agreement (steps with one annotator keep 1), and
//! [`ExportOptions::correction_weight`] scales all correction rows.

pub mod manifest;
pub mod read;
pub mod rows;
pub mod target;
pub mod write;

use std::path::{Path, PathBuf};

pub use crate::SAFETY_CAUTION;
pub use manifest::{Manifest, manifest_path};
pub use read::read_merged;
pub use rows::{Excluded, MergedSet, RowSource, merge};

use crate::campaign::Campaign;
use crate::consensus::Tally;
use crate::durable::Staged;
use crate::progress::Progress;

/// File format of a merged set.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// JSON Lines (`.jsonl`).
    JsonLines,
    /// CSV (`.csv`).
    Csv,
    /// NumPy archive (`.npz`).
    Npz,
}

impl Format {
    /// The usual file extension, also the format's name.
    pub fn extension(self) -> &'static str {
        match self {
            Format::JsonLines => "jsonl",
            Format::Csv => "csv",
            Format::Npz => "npz",
        }
    }

    /// The format a file name's extension names.
    pub fn from_path(path: &Path) -> Option<Format> {
        match path.extension()?.to_str()? {
            "jsonl" => Some(Format::JsonLines),
            "csv" => Some(Format::Csv),
            "npz" => Some(Format::Npz),
            _ => None,
        }
    }
}

/// How correction rows are weighted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Weighting {
    /// Every row weighs the same.
    #[default]
    Uniform,
    /// A correction weighs its step agreement (1 with a single annotator).
    Agreement,
}

impl Weighting {
    /// The weighting's name.
    pub fn name(self) -> &'static str {
        match self {
            Weighting::Uniform => "uniform",
            Weighting::Agreement => "agreement",
        }
    }
}

/// Options of an export.
#[derive(Debug, Clone, PartialEq)]
pub struct ExportOptions {
    /// File format.
    pub format: Format,
    /// Leave out corrections whose step agreement is below this (steps with a single
    /// annotator have no agreement and are kept; use `min_annotators` for those).
    pub min_agreement: Option<f64>,
    /// Leave out corrections with fewer action verdicts than this (default 1).
    pub min_annotators: usize,
    /// Correction weighting.
    pub weighting: Weighting,
    /// Factor on every correction row's weight (default 1).
    pub correction_weight: f64,
}

impl ExportOptions {
    /// Default options for a format.
    pub fn new(format: Format) -> Self {
        ExportOptions {
            format,
            min_agreement: None,
            min_annotators: 1,
            weighting: Weighting::Uniform,
            correction_weight: 1.0,
        }
    }
}

/// Why an export or a read-back failed.
#[derive(Debug, thiserror::Error)]
pub enum ExportError {
    /// Reading or writing a file failed.
    #[error("{}: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating system's error.
        source: std::io::Error,
    },
    /// The export was cancelled; nothing was written under the final name.
    #[error("export cancelled; nothing was written")]
    Cancelled,
    /// A merged-set file does not read back.
    #[error("{}{}: field `{field}`: {message}", path.display(), location.map(|l| format!(":{l}")).unwrap_or_default())]
    Invalid {
        /// The file.
        path: PathBuf,
        /// 1-based line (text formats) or 0-based row (`.npz`), when known.
        location: Option<u64>,
        /// The field or column.
        field: String,
        /// What is wrong.
        message: String,
    },
}

fn io_err(path: &Path, progress: &Progress) -> impl FnOnce(std::io::Error) -> ExportError {
    let path = path.to_path_buf();
    let cancelled = progress.is_cancelled();
    move |source| {
        if cancelled || source.kind() == std::io::ErrorKind::Interrupted {
            ExportError::Cancelled
        } else {
            ExportError::Io { path, source }
        }
    }
}

/// Exports the merged set of a campaign to `out` and its manifest beside it
/// ([`manifest_path`]); returns the manifest.
pub fn export(
    campaign: &Campaign,
    tally: &Tally,
    opts: &ExportOptions,
    out: &Path,
    progress: &Progress,
) -> Result<Manifest, ExportError> {
    progress.stage("merging", tally.steps.len() as u64);
    let (merged, excluded) = merge(campaign, tally, opts);
    let inputs = manifest::input_digests(campaign, tally);
    target::prepare(&campaign.root, out).map_err(io_err(out, progress))?;
    progress.stage("writing", merged.len() as u64);
    let spec = campaign.spec();
    let staged = Staged::write(out, |w| match opts.format {
        Format::JsonLines => write::write_jsonl(&merged, spec, w, progress),
        Format::Csv => write::write_csv(&merged, spec, w, progress),
        Format::Npz => write::write_npz(&merged, w, progress),
    })
    .map_err(|e| io_err(out, progress)(e))?;
    let mut output =
        manifest::digest_file(Path::new(""), staged.temp_path()).map_err(io_err(out, progress))?;
    output.file = out
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let manifest = Manifest {
        tool: format!("countersteer {}", crate::VERSION),
        campaign: campaign.file.name.clone(),
        format: manifest::format_name(opts.format).into(),
        output,
        columns: write::csv_header(spec),
        spec: spec.clone(),
        rows: manifest::row_counts(&merged),
        excluded,
        not_applied: [
            ("fingerprint_mismatch".to_string(), tally.mismatches.len()),
            ("unfit".to_string(), tally.unapplied.len()),
        ]
        .into(),
        settings: manifest::settings(opts),
        agreement: manifest::agreement(tally),
        inputs,
        safety: SAFETY_CAUTION.into(),
    };
    let mpath = manifest_path(out);
    let mut text = serde_json::to_vec_pretty(&manifest).unwrap_or_default();
    text.push(b'\n');
    let staged_manifest = Staged::write(&mpath, |w| std::io::Write::write_all(w, &text))
        .map_err(io_err(&mpath, progress))?;
    if progress.is_cancelled() {
        return Err(ExportError::Cancelled);
    }
    staged.commit().map_err(io_err(out, progress))?;
    staged_manifest.commit().map_err(io_err(&mpath, progress))?;
    Ok(manifest)
}
