//! The manifest written beside every merged set: what went in, what came out, the settings,
//! and the safety caution. It holds no clock time, so the same inputs give the same bytes.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::rows::{Excluded, MergedSet, RowSource};
use super::{ExportOptions, Format};
use crate::campaign::Campaign;
use crate::campaign::Spec;
use crate::consensus::Tally;

pub use crate::campaign::digest::FileDigest;

/// Row counts of the merged set.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct RowCounts {
    /// All rows.
    pub total: usize,
    /// Demonstration rows.
    pub demonstration: usize,
    /// Correction rows.
    pub correction: usize,
    /// Correction rows per round (keys are round numbers).
    pub correction_by_round: BTreeMap<String, usize>,
}

/// The options an export ran with, as recorded.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Settings {
    /// Minimum per-step agreement, if any.
    pub min_agreement: Option<f64>,
    /// Minimum number of annotators who gave an action.
    pub min_annotators: usize,
    /// `uniform` or `agreement`.
    pub weighting: String,
    /// Weight factor of correction rows.
    pub correction_weight: f64,
    /// How the consensus is formed.
    pub consensus: String,
}

/// Agreement of one channel, as recorded.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AgreementEntry {
    /// Channel name (`verdict` for action versus unrecoverable).
    pub channel: String,
    /// `interval` or `nominal`.
    pub metric: String,
    /// Krippendorff's alpha, `null` when undefined.
    pub alpha: Option<f64>,
    /// Steps that entered it.
    pub units: usize,
}

/// The manifest of one export.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// Tool name and version.
    pub tool: String,
    /// Campaign name.
    pub campaign: String,
    /// `jsonl`, `csv` or `npz`.
    pub format: String,
    /// The merged-set file.
    pub output: FileDigest,
    /// Column names in order.
    pub columns: Vec<String>,
    /// The campaign's spec (names, units, bounds, choices).
    pub spec: Spec,
    /// Row counts.
    pub rows: RowCounts,
    /// Corrections left out, by reason.
    pub excluded: Excluded,
    /// Corrections reported and not applied: fingerprint mismatches and unfit records.
    pub not_applied: BTreeMap<String, usize>,
    /// The settings used.
    pub settings: Settings,
    /// Agreement per channel and on the verdict kind.
    pub agreement: Vec<AgreementEntry>,
    /// Every input file: `campaign.json`, demonstration and round files, ledgers.
    pub inputs: Vec<FileDigest>,
    /// The safety caution.
    pub safety: String,
}

/// The manifest's path for a merged-set path: `merged.npz` gives `merged.npz.manifest.json`
/// (the whole file name, so that exports of one name in several formats keep their own).
pub fn manifest_path(out: &Path) -> PathBuf {
    let mut name = out.file_name().unwrap_or_default().to_os_string();
    name.push(".manifest.json");
    out.with_file_name(name)
}

fn rel_name(root: &Path, p: &Path) -> String {
    let rel = p.strip_prefix(root).unwrap_or(p);
    let parts: Vec<String> = rel
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect();
    parts.join("/")
}

/// Digest of a file on disk, read once in blocks (never whole into memory).
pub fn digest_file(root: &Path, path: &Path) -> std::io::Result<FileDigest> {
    let file = std::fs::File::open(path)?;
    crate::campaign::digest::digest_reader(file, rel_name(root, path))
}

/// Digests of the campaign's data inputs (`campaign.json`, demonstrations, round files; not
/// frame images) as they were read when the campaign was loaded, and of the ledgers as they
/// were read for the tally, sorted by path. No file is read again here.
pub fn input_digests(campaign: &Campaign, tally: &Tally) -> Vec<FileDigest> {
    let mut out = campaign.inputs.clone();
    out.extend(tally.ledgers.iter().map(|l| FileDigest {
        file: rel_name(&campaign.root, &l.path),
        bytes: l.bytes,
        sha256: l.sha256.clone(),
    }));
    out.sort_by(|a, b| a.file.cmp(&b.file));
    out
}

pub(crate) fn row_counts(m: &MergedSet) -> RowCounts {
    let mut c = RowCounts {
        total: m.len(),
        ..Default::default()
    };
    for (s, r) in m.source.iter().zip(&m.round) {
        match s {
            RowSource::Demonstration => c.demonstration += 1,
            RowSource::Correction => {
                c.correction += 1;
                let key = r.map(|r| r.to_string()).unwrap_or_default();
                *c.correction_by_round.entry(key).or_default() += 1;
            }
        }
    }
    c
}

pub(crate) fn settings(opts: &ExportOptions) -> Settings {
    Settings {
        min_agreement: opts.min_agreement,
        min_annotators: opts.min_annotators,
        weighting: opts.weighting.name().into(),
        correction_weight: opts.correction_weight,
        consensus: "median per continuous channel; plurality per discrete channel, ties to the \
                    choice listed first; skip abstains; an action needs more action verdicts \
                    than unrecoverable ones"
            .into(),
    }
}

pub(crate) fn agreement(tally: &Tally) -> Vec<AgreementEntry> {
    tally
        .channels
        .iter()
        .chain([&tally.verdicts])
        .map(|c| AgreementEntry {
            channel: c.channel.clone(),
            metric: c.metric.name().into(),
            alpha: c.alpha,
            units: c.units,
        })
        .collect()
}

pub(crate) fn format_name(f: Format) -> &'static str {
    f.extension()
}
