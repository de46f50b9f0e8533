//! `countersteer export DIR --out PATH`: write the merged set and its manifest.

use std::path::PathBuf;

use clap::{Args, ValueEnum};

use super::CliError;
use super::correct::load;
use super::progress_bar::Bar;
use countersteer::export::{ExportError, ExportOptions, Format, Weighting, export, manifest_path};
use countersteer::progress::Progress;

/// Merged-set file formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormatArg {
    /// JSON Lines.
    Jsonl,
    /// Comma-separated values.
    Csv,
    /// NumPy archive.
    Npz,
}

/// Correction weightings.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum WeightingArg {
    /// Every row weighs 1.
    Uniform,
    /// A correction weighs its step agreement.
    Agreement,
}

/// Arguments of `export`.
#[derive(Debug, Args)]
pub struct ExportArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// The merged-set file to write; the manifest goes beside it (`<file name>.manifest.json`).
    #[arg(long)]
    pub out: PathBuf,
    /// File format (default: from the extension of --out).
    #[arg(long, value_enum)]
    pub format: Option<FormatArg>,
    /// Leave out corrections whose step agreement is below this (0..1).
    #[arg(long)]
    pub min_agreement: Option<f64>,
    /// Leave out corrections with fewer annotators giving an action.
    #[arg(long, default_value_t = 1)]
    pub min_annotators: usize,
    /// How correction rows are weighted.
    #[arg(long, value_enum, default_value = "uniform")]
    pub weighting: WeightingArg,
    /// Factor on every correction row's weight.
    #[arg(long, default_value_t = 1.0)]
    pub correction_weight: f64,
}

fn options(a: &ExportArgs) -> Result<ExportOptions, CliError> {
    let format = match a.format {
        Some(FormatArg::Jsonl) => Format::JsonLines,
        Some(FormatArg::Csv) => Format::Csv,
        Some(FormatArg::Npz) => Format::Npz,
        None => Format::from_path(&a.out).ok_or_else(|| {
            CliError::usage("say --format jsonl|csv|npz, or end --out in .jsonl, .csv or .npz")
        })?,
    };
    if let Some(m) = a.min_agreement
        && !(0.0..=1.0).contains(&m)
    {
        return Err(CliError::usage(format!(
            "--min-agreement {m} is not within 0..1"
        )));
    }
    if !(a.correction_weight.is_finite() && a.correction_weight >= 0.0) {
        return Err(CliError::usage("--correction-weight needs a number >= 0"));
    }
    Ok(ExportOptions {
        format,
        min_agreement: a.min_agreement,
        min_annotators: a.min_annotators,
        weighting: match a.weighting {
            WeightingArg::Uniform => Weighting::Uniform,
            WeightingArg::Agreement => Weighting::Agreement,
        },
        correction_weight: a.correction_weight,
    })
}

/// Runs `export`.
pub fn run(a: ExportArgs) -> Result<(), CliError> {
    let opts = options(&a)?;
    let c = load(&a.dir)?;
    let t = countersteer::workflow::tally_campaign(&c)?.tally;
    super::correct::warn_skipped_ledgers(&c.root);
    let progress = Progress::new();
    let m = {
        let _bar = Bar::follow(&progress);
        export(&c, &t, &opts, &a.out, &progress)
    }
    .map_err(|e| match e {
        ExportError::Invalid { .. } => CliError::invalid(e.to_string()),
        _ => CliError::usage(e.to_string()),
    })?;
    say!(
        "wrote {}: {} rows ({} demonstration, {} correction)",
        a.out.display(),
        m.rows.total,
        m.rows.demonstration,
        m.rows.correction
    );
    let x = &m.excluded;
    say!(
        "left out: {} without a consensus action, {} below --min-agreement, {} with too few annotators",
        x.no_consensus_action,
        x.below_agreement,
        x.too_few_annotators
    );
    if !t.mismatches.is_empty() || !t.unapplied.is_empty() {
        say!(
            "not applied: {} correction(s) whose step data changed, {} that fit no step (see `countersteer tally`)",
            t.mismatches.len(),
            t.unapplied.len()
        );
    }
    say!("manifest: {}", manifest_path(&a.out).display());
    Ok(())
}
