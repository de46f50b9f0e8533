//! The campaign folder: finding its files, loading them all, and collecting every problem.

use std::fs::File;
use std::path::{Path, PathBuf};

use super::confine::{Confinement, Refused, confined};
use super::digest::{FileDigest, HashingReader, digest_open_file, slash_name};
use super::error::{CampaignError, Location, Problem, ProblemKind, ProblemLog, Severity};
use super::jsonl::read_jsonl;
use super::numpy::{NpySetSource, NpzSource, read_numpy};
use super::spec::CampaignFile;
use super::steps::{DEFAULT_RECORD_CAP, StepTable, StepTableBuilder};
use super::validate::RowChecker;
use super::{Campaign, Round};
use crate::progress::Progress;

/// Name of the campaign description file.
pub const CAMPAIGN_FILE: &str = "campaign.json";
/// Folder of demonstration files.
pub const DEMONSTRATIONS_DIR: &str = "demonstrations";
/// Folder of rounds (`rounds/<n>/`).
pub const ROUNDS_DIR: &str = "rounds";
/// Folder of annotators' ledgers.
pub const LEDGERS_DIR: &str = "ledgers";
/// Folder of exports.
pub const EXPORTS_DIR: &str = "exports";

/// How a data file is read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum DataFormat {
    /// `.jsonl`
    JsonLines,
    /// `.csv`
    Csv,
    /// `.npz`
    Npz,
    /// `<stem>.states.npy` and siblings; the path is the `states` file.
    NpySet,
}

/// One data file (or .npy set) in a campaign folder.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DataFile {
    /// Path relative to the campaign folder.
    pub rel: PathBuf,
    /// Format.
    pub format: DataFormat,
}

/// Options for loading.
#[derive(Debug, Clone)]
pub struct LoadOptions {
    /// Problems kept per file; further ones are only counted.
    pub problem_cap: usize,
    /// Treat warnings (clipped actions, missing frames) as errors.
    pub strict: bool,
    /// Most records one data file may hold; a file with more is refused with a located
    /// error (default [`DEFAULT_RECORD_CAP`]).
    pub record_cap: usize,
    /// Decode every frame image (under [`super::frame::frame_limits`]) and report those that
    /// do not decode like missing ones; `countersteer check` does, other loads only check
    /// that the files exist.
    pub decode_frames: bool,
}

impl Default for LoadOptions {
    fn default() -> Self {
        LoadOptions {
            problem_cap: 50,
            strict: false,
            record_cap: DEFAULT_RECORD_CAP,
            decode_frames: false,
        }
    }
}

/// Largest accepted `campaign.json`, in bytes: a spec is a few kilobytes.
pub const MAX_CAMPAIGN_FILE_BYTES: u64 = 4 << 20;

/// Result of [`check_campaign`]: the campaign when it loads, and every problem found.
#[derive(Debug)]
pub struct CheckReport {
    /// The loaded campaign, when no error was found.
    pub campaign: Option<Campaign>,
    /// Problems in file order (errors and warnings).
    pub problems: Vec<Problem>,
    /// Problems beyond the per-file cap, counted but not kept.
    pub more: usize,
}

impl CheckReport {
    /// Number of kept errors.
    pub fn error_count(&self) -> usize {
        self.problems
            .iter()
            .filter(|p| p.severity == Severity::Error)
            .count()
    }
}

/// Lists the data files of one folder (sorted by name). Links are listed too (and checked
/// when read: a link leading outside the campaign is refused). Everything else is skipped:
/// see [`list_folder`].
pub fn data_files(root: &Path, rel_dir: &Path) -> std::io::Result<Vec<DataFile>> {
    list_folder(root, rel_dir).map(|(files, _)| files)
}

/// The data format a file name announces, `None` for a name no loader reads.
fn format_of(name: &str) -> Option<DataFormat> {
    if name.starts_with('.') {
        None
    } else if name.ends_with(".jsonl") {
        Some(DataFormat::JsonLines)
    } else if name.ends_with(".csv") {
        Some(DataFormat::Csv)
    } else if name.ends_with(".npz") {
        Some(DataFormat::Npz)
    } else if name.ends_with(".states.npy") {
        Some(DataFormat::NpySet)
    } else {
        None
    }
}

/// Whether `name` is a sibling array (`<stem>.<array>.npy`) of a `<stem>.states.npy` that
/// is in `names`: read with its set, so not skipped.
fn in_npy_set(name: &str, names: &[String]) -> bool {
    let Some(base) = name.strip_suffix(".npy") else {
        return false;
    };
    super::numpy::ARRAY_NAMES.iter().any(|a| {
        base.strip_suffix(a)
            .and_then(|s| s.strip_suffix('.'))
            .is_some_and(|stem| names.iter().any(|n| *n == format!("{stem}.states.npy")))
    })
}

/// The data files of one folder (sorted by name) and a warning for every other entry,
/// which is not read: folders (except `frames/`), hidden files, and files whose name no
/// loader reads (a `.npy` beside its set's `.states.npy` belongs to the set).
pub fn list_folder(root: &Path, rel_dir: &Path) -> std::io::Result<(Vec<DataFile>, Vec<Problem>)> {
    let mut entries = Vec::new();
    for entry in std::fs::read_dir(root.join(rel_dir))? {
        let entry = entry?;
        let is_dir = entry.path().is_dir();
        entries.push((entry.file_name().to_string_lossy().into_owned(), is_dir));
    }
    entries.sort();
    let names: Vec<String> = entries.iter().map(|(n, _)| n.clone()).collect();
    let (mut files, mut skipped) = (Vec::new(), Vec::new());
    for (name, is_dir) in entries {
        let rel = rel_dir.join(&name);
        let why = match (is_dir, format_of(&name)) {
            (true, _) if name == "frames" => continue,
            (true, _) => "a folder inside a data folder is not read",
            (false, Some(format)) => {
                files.push(DataFile { rel, format });
                continue;
            }
            (false, None) if in_npy_set(&name, &names) => continue,
            (false, None) if name.starts_with('.') => "a hidden file is not read",
            (false, None) => {
                "not a data file (.jsonl, .csv, .npz, or .npy arrays beside a .states.npy)"
            }
        };
        skipped.push(skipped_problem(
            &rel,
            Severity::Warning,
            format!("skipped: {why}"),
        ));
    }
    Ok((files, skipped))
}

fn skipped_problem(rel: &Path, severity: Severity, message: String) -> Problem {
    Problem {
        severity,
        kind: ProblemKind::Skipped,
        file: rel.to_path_buf(),
        location: Location::File,
        field: String::new(),
        message,
    }
}

/// Round numbers found under `rounds/`, ascending (see [`round_folders`]).
pub fn round_numbers(root: &Path) -> std::io::Result<Vec<u32>> {
    round_folders(root).map(|(numbers, _)| numbers)
}

/// The round a folder name stands for: `Ok(n)` for a plain decimal number (`0`, `1`, `12`;
/// no sign, no leading zero, at most `u32::MAX`), `Err(Some(reason))` for a name that is a
/// number written another way (`01`, `+1`, `4294967296`), `Err(None)` for any other name.
fn round_number(name: &str) -> Result<u32, Option<String>> {
    let digits = name.strip_prefix('+').unwrap_or(name);
    if digits.is_empty() || !digits.bytes().all(|b| b.is_ascii_digit()) {
        return Err(None);
    }
    match digits.parse::<u32>() {
        Ok(n) if n.to_string() == name => Ok(n),
        Ok(n) => Err(Some(format!(
            "a round folder is named by its number written plainly (no sign, no leading zero): \
             rename `{name}` to `{n}`"
        ))),
        Err(_) => Err(Some(format!(
            "round number `{name}` is larger than {}",
            u32::MAX
        ))),
    }
}

/// Round numbers under `rounds/` (ascending) and the problems of its other entries. One rule:
/// a round folder is named by its number written plainly (`rounds/1/`, never `rounds/01/`);
/// any other spelling of a number is refused with an error, so that two folders can never
/// stand for one round. Files and folders with other names are skipped with a warning.
pub fn round_folders(root: &Path) -> std::io::Result<(Vec<u32>, Vec<Problem>)> {
    let dir = root.join(ROUNDS_DIR);
    if !dir.is_dir() {
        return Ok((Vec::new(), Vec::new()));
    }
    let mut entries = Vec::new();
    for entry in std::fs::read_dir(dir)? {
        let entry = entry?;
        entries.push((
            entry.file_name().to_string_lossy().into_owned(),
            entry.path().is_dir(),
        ));
    }
    entries.sort();
    let (mut out, mut problems) = (Vec::new(), Vec::new());
    for (name, is_dir) in entries {
        let rel = Path::new(ROUNDS_DIR).join(&name);
        let (severity, why) = match (is_dir, round_number(&name)) {
            (true, Ok(n)) => {
                out.push(n);
                continue;
            }
            (true, Err(Some(why))) => (Severity::Error, why),
            (true, Err(None)) => (
                Severity::Warning,
                "skipped: not a round folder (rounds are folders named by their number, e.g. rounds/1/)".into(),
            ),
            (false, _) => (
                Severity::Warning,
                "skipped: a file directly in rounds/ is not read (a round's files go in rounds/<number>/)".into(),
            ),
        };
        problems.push(skipped_problem(&rel, severity, why));
    }
    out.sort_unstable();
    Ok((out, problems))
}

fn read_spec_bytes(root: &Path) -> Result<Vec<u8>, (ProblemKind, String)> {
    use std::io::Read;
    let path = confined(root, Path::new(CAMPAIGN_FILE)).map_err(|e| match e {
        Refused::Outside(_) => (ProblemKind::OutsideCampaign, e.to_string()),
        _ => (ProblemKind::Unreadable, format!("cannot read: {e}")),
    })?;
    let unreadable = |e: std::io::Error| (ProblemKind::Unreadable, format!("cannot read: {e}"));
    let mut text = Vec::new();
    File::open(path)
        .and_then(|f| f.take(MAX_CAMPAIGN_FILE_BYTES + 1).read_to_end(&mut text))
        .map_err(unreadable)?;
    if text.len() as u64 > MAX_CAMPAIGN_FILE_BYTES {
        let msg = format!("longer than {MAX_CAMPAIGN_FILE_BYTES} bytes; a spec is a few kilobytes");
        return Err((ProblemKind::TooLong, msg));
    }
    Ok(text)
}

/// Reads and checks `campaign.json`.
pub fn read_campaign_file(root: &Path) -> Result<CampaignFile, Problem> {
    read_campaign_file_digest(root).map(|(f, _)| f)
}

/// Reads and checks `campaign.json`; also gives the digest of the bytes read.
fn read_campaign_file_digest(root: &Path) -> Result<(CampaignFile, FileDigest), Problem> {
    let rel = PathBuf::from(CAMPAIGN_FILE);
    let problem = |loc, field: &str, kind, message: String| Problem {
        severity: Severity::Error,
        kind,
        file: rel.clone(),
        location: loc,
        field: field.to_string(),
        message,
    };
    let text =
        read_spec_bytes(root).map_err(|(kind, msg)| problem(Location::File, "", kind, msg))?;
    let mut h = HashingReader::new(text.as_slice());
    let _ = std::io::copy(&mut h, &mut std::io::sink());
    let digest = h.digest(CAMPAIGN_FILE.to_string());
    parse_campaign_file(&text).map(|f| (f, digest))
}

/// Parses and checks the bytes of `campaign.json`; the problem names line and field.
pub fn parse_campaign_file(text: &[u8]) -> Result<CampaignFile, Problem> {
    let rel = PathBuf::from(CAMPAIGN_FILE);
    let problem = |loc, field: &str, kind, message: String| Problem {
        severity: Severity::Error,
        kind,
        file: rel.clone(),
        location: loc,
        field: field.to_string(),
        message,
    };
    if let Some(msg) = super::jsonl::utf16_mark(text) {
        return Err(problem(Location::Line(1), "", ProblemKind::NotUtf8, msg));
    }
    let text = text.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(text);
    let file: CampaignFile = serde_json::from_slice(text).map_err(|e| {
        let msg = e.to_string();
        let field = ["missing field `", "unknown field `"]
            .iter()
            .find_map(|p| {
                msg.split_once(p)
                    .and_then(|(_, r)| r.split_once('`'))
                    .map(|(f, _)| f.to_string())
            })
            .unwrap_or_default();
        problem(
            Location::Line(e.line() as u64),
            &field,
            ProblemKind::BadSpec,
            msg,
        )
    })?;
    if let Some((field, msg)) = file.spec.problems().into_iter().next() {
        return Err(problem(Location::File, &field, ProblemKind::BadSpec, msg));
    }
    if file.novelty.k == 0 || !(file.novelty.alpha > 0.0 && file.novelty.alpha < 1.0) {
        let msg = format!(
            "needs k >= 1 and 0 < alpha < 1, got k {}, alpha {}",
            file.novelty.k, file.novelty.alpha
        );
        return Err(problem(
            Location::File,
            "novelty",
            ProblemKind::BadSpec,
            msg,
        ));
    }
    Ok(file)
}

/// Loads one data file into the builder; returns the digests of the files read (taken from
/// the bytes read, see [`super::digest`]).
pub fn read_data_file(
    root: &Path,
    f: &DataFile,
    checker: &mut RowChecker<'_>,
    b: &mut StepTableBuilder,
    log: &mut ProblemLog,
    progress: &Progress,
) -> Vec<FileDigest> {
    b.begin_source(f.rel.clone());
    let before = b.len();
    let data_dir = f.rel.parent().unwrap_or(Path::new("")).to_path_buf();
    let path = match confined(root, &f.rel) {
        Ok(p) => p,
        Err(e) => {
            let kind = match e {
                Refused::Outside(_) => ProblemKind::OutsideCampaign,
                _ => ProblemKind::Unreadable,
            };
            log.error(kind, Location::File, "", e.to_string());
            return Vec::new();
        }
    };
    let name = slash_name(&f.rel);
    let cannot_open = |log: &mut ProblemLog, e: std::io::Error| {
        log.error(
            ProblemKind::Unreadable,
            Location::File,
            "",
            format!("cannot open: {e}"),
        )
    };
    let mut digests = Vec::new();
    match f.format {
        DataFormat::JsonLines | DataFormat::Csv => match File::open(&path) {
            Ok(file) => {
                let mut h = HashingReader::new(file);
                if f.format == DataFormat::JsonLines {
                    read_jsonl(&mut h, &data_dir, checker, b, log, progress);
                } else {
                    super::csv::read_csv(&mut h, &data_dir, checker, b, log, progress);
                }
                digests.push(h.digest(name));
            }
            Err(e) => cannot_open(log, e),
        },
        DataFormat::Npz => match File::open(&path) {
            Ok(mut file) => match digest_open_file(&mut file, name) {
                Ok(d) => {
                    digests.push(d);
                    match NpzSource::new(std::io::BufReader::new(file)) {
                        Ok(mut src) => read_numpy(&mut src, &data_dir, checker, b, log, progress),
                        Err(msg) => log.error(ProblemKind::MalformedNumpy, Location::File, "", msg),
                    }
                }
                Err(e) => cannot_open(log, e),
            },
            Err(e) => cannot_open(log, e),
        },
        DataFormat::NpySet => {
            let file_name = f
                .rel
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_default();
            let stem = file_name.trim_end_matches(".states.npy").to_string();
            let mut src = NpySetSource {
                root: root.to_path_buf(),
                dir: data_dir.clone(),
                stem: stem.clone(),
            };
            read_numpy(&mut src, &data_dir, checker, b, log, progress);
            digests = npy_set_digests(root, &data_dir, &stem);
        }
    }
    if b.len() == before && log.error_count() == 0 {
        log.error(
            ProblemKind::Empty,
            Location::File,
            "",
            "the file holds no steps",
        );
    }
    digests
}

/// Digests of the `.npy` files of one set (each file read once more, after loading: the
/// set's arrays are opened one by one by name).
fn npy_set_digests(root: &Path, data_dir: &Path, stem: &str) -> Vec<FileDigest> {
    let prefix = format!("{stem}.");
    let Ok(entries) = std::fs::read_dir(root.join(data_dir)) else {
        return Vec::new();
    };
    let mut names: Vec<String> = entries
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(&prefix) && n.ends_with(".npy"))
        .collect();
    names.sort();
    names
        .into_iter()
        .filter_map(|n| {
            let rel = data_dir.join(&n);
            let mut file = File::open(confined(root, &rel).ok()?).ok()?;
            digest_open_file(&mut file, slash_name(&rel)).ok()
        })
        .collect()
}

fn load_table(
    root: &Path,
    rel_dir: &Path,
    file: &CampaignFile,
    opts: &LoadOptions,
    progress: &Progress,
    problems: &mut Vec<Problem>,
    more: &mut usize,
) -> (Option<StepTable>, Vec<FileDigest>) {
    let mut inputs = Vec::new();
    let ok_skipped;
    if let Err(e @ Refused::Outside(_)) = confined(root, rel_dir) {
        problems.push(folder_problem(
            rel_dir,
            ProblemKind::OutsideCampaign,
            e.to_string(),
        ));
        return (None, inputs);
    }
    let files = match list_folder(root, rel_dir) {
        Ok((f, skipped)) => {
            ok_skipped = !opts.strict || skipped.is_empty();
            problems.extend(skipped);
            f
        }
        Err(e) => {
            problems.push(folder_problem(
                rel_dir,
                ProblemKind::Unreadable,
                format!("cannot list the folder: {e}"),
            ));
            return (None, inputs);
        }
    };
    if files.is_empty() {
        problems.push(folder_problem(
            rel_dir,
            ProblemKind::Empty,
            "no .jsonl, .csv, .npz or .states.npy file".into(),
        ));
        return (None, inputs);
    }
    let mut b = StepTableBuilder::new(file.spec.state_dim(), file.spec.action_dim());
    b.set_record_cap(opts.record_cap);
    let mut checker = RowChecker::new(&file.spec);
    let mut ok = ok_skipped;
    for f in &files {
        let mut log = ProblemLog::new(&f.rel, opts.problem_cap);
        inputs.extend(read_data_file(
            root,
            f,
            &mut checker,
            &mut b,
            &mut log,
            progress,
        ));
        ok &= log.error_count() == 0 && (!opts.strict || log.warning_count() == 0);
        let (kept, dropped) = log.finish();
        problems.extend(kept);
        *more += dropped;
        if progress.is_cancelled() {
            return (None, inputs);
        }
    }
    let table = b.finish();
    ok &= check_frames(root, &table, opts, problems, more);
    (ok.then_some(table), inputs)
}

fn check_frames(
    root: &Path,
    table: &StepTable,
    opts: &LoadOptions,
    problems: &mut Vec<Problem>,
    more: &mut usize,
) -> bool {
    let warn_or_error = if opts.strict {
        Severity::Error
    } else {
        Severity::Warning
    };
    let mut shown = 0;
    let mut clean = true;
    let Ok(inside) = Confinement::new(root) else {
        return true; // the folder itself was just read; it cannot vanish in a way worth a line
    };
    for (row, rel) in &table.frames {
        let (severity, kind, message) = match inside.resolve(Path::new(rel)) {
            Ok(p) if p.is_file() && !opts.decode_frames => continue,
            Ok(p) if p.is_file() => match super::frame::decode_frame(root, rel) {
                Ok(_) => continue,
                Err(e) => (
                    warn_or_error,
                    ProblemKind::BadFrame,
                    format!(
                        "does not decode: {}",
                        e.trim_start_matches(&format!("frame `{rel}`: "))
                    ),
                ),
            },
            Ok(_) => (
                warn_or_error,
                ProblemKind::MissingFrame,
                "is not a file".into(),
            ),
            Err(Refused::Missing) => (
                warn_or_error,
                ProblemKind::MissingFrame,
                "does not exist".into(),
            ),
            Err(e) => (Severity::Error, ProblemKind::BadFramePath, e.to_string()),
        };
        clean &= severity != Severity::Error;
        if shown >= opts.problem_cap {
            *more += 1;
            continue;
        }
        shown += 1;
        let row = *row as usize;
        let e = &table.episodes[table.episode_of(row)];
        problems.push(Problem {
            severity,
            kind,
            file: table.sources[e.source].clone(),
            location: Location::Line(table.origins[row]),
            field: "frame".into(),
            message: format!("frame `{rel}` {message}"),
        });
    }
    clean
}

fn folder_problem(rel: &Path, kind: ProblemKind, message: String) -> Problem {
    Problem {
        severity: Severity::Error,
        kind,
        file: rel.to_path_buf(),
        location: Location::File,
        field: String::new(),
        message,
    }
}

fn total_bytes(root: &Path) -> u64 {
    fn walk(p: &Path) -> u64 {
        let Ok(rd) = std::fs::read_dir(p) else {
            return 0;
        };
        rd.flatten()
            .map(|e| match e.file_type() {
                Ok(t) if t.is_dir() && e.file_name() != "frames" => walk(&e.path()),
                Ok(t) if t.is_file() => e.metadata().map(|m| m.len()).unwrap_or(0),
                _ => 0,
            })
            .sum()
    }
    walk(&root.join(DEMONSTRATIONS_DIR)) + walk(&root.join(ROUNDS_DIR))
}

/// Loads and checks a whole campaign, collecting every problem (up to the cap per file).
pub fn check_campaign(root: &Path, opts: &LoadOptions, progress: &Progress) -> CheckReport {
    let mut problems = Vec::new();
    let mut more = 0;
    let (file, spec_digest) = match read_campaign_file_digest(root) {
        Ok(f) => f,
        Err(p) => {
            return CheckReport {
                campaign: None,
                problems: vec![p],
                more: 0,
            };
        }
    };
    progress.stage("loading", total_bytes(root));
    let mut inputs = vec![spec_digest];
    let (demos, read) = load_table(
        root,
        Path::new(DEMONSTRATIONS_DIR),
        &file,
        opts,
        progress,
        &mut problems,
        &mut more,
    );
    inputs.extend(read);
    let mut rounds = Vec::new();
    let mut rounds_ok = true;
    match round_folders(root) {
        Ok((ns, round_problems)) => {
            rounds_ok &= !round_problems
                .iter()
                .any(|p| p.severity == Severity::Error || opts.strict);
            problems.extend(round_problems);
            for n in ns {
                let rel = Path::new(ROUNDS_DIR).join(n.to_string());
                let (loaded, read) =
                    load_table(root, &rel, &file, opts, progress, &mut problems, &mut more);
                inputs.extend(read);
                match loaded {
                    Some(steps) => rounds.push(Round { number: n, steps }),
                    None => rounds_ok = false,
                }
            }
        }
        Err(e) => {
            problems.push(folder_problem(
                Path::new(ROUNDS_DIR),
                ProblemKind::Unreadable,
                e.to_string(),
            ));
            rounds_ok = false;
        }
    }
    let campaign = match (demos, rounds_ok) {
        (Some(demonstrations), true) => Some(Campaign {
            root: root.to_path_buf(),
            file,
            demonstrations,
            rounds,
            inputs,
        }),
        _ => None,
    };
    CheckReport {
        campaign,
        problems,
        more,
    }
}

/// Loads a campaign; any error (or, with `strict`, any warning) fails the load with all
/// problems attached.
pub fn load_campaign(
    root: &Path,
    opts: &LoadOptions,
    progress: &Progress,
) -> Result<Campaign, CampaignError> {
    if !root.is_dir() {
        return Err(CampaignError::Folder {
            path: root.to_path_buf(),
            message: "is not a folder".into(),
        });
    }
    let report = check_campaign(root, opts, progress);
    if progress.is_cancelled() {
        return Err(CampaignError::Cancelled);
    }
    match report.campaign {
        Some(c) => Ok(c),
        None => Err(CampaignError::Invalid {
            problems: report.problems,
            more: report.more,
        }),
    }
}
