//! `countersteer check DIR`: validate a campaign and print a summary or every problem.

use std::path::PathBuf;

use clap::Args;

use super::{CliError, json, progress_bar::Bar};
use countersteer::campaign::summary::summarize_campaign;
use countersteer::campaign::{LoadOptions, Severity, check_campaign};
use countersteer::novelty::model::{
    calibration_count, check_alpha, few_episodes_warning, without_spread,
};
use countersteer::novelty::scale::scales_with_origin;
use countersteer::progress::Progress;
use serde_json::{Value, json};

/// Arguments of `check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Campaign folder (holds campaign.json).
    pub dir: PathBuf,
    /// Problems shown per file before the rest are only counted.
    #[arg(long, default_value_t = 50)]
    pub max_problems: usize,
    /// Treat warnings (actions clipped to bounds, missing frame images) as errors.
    #[arg(long)]
    pub strict: bool,
    /// Most records one data file may hold; a file with more is refused.
    #[arg(long, default_value_t = countersteer::campaign::steps::DEFAULT_RECORD_CAP)]
    pub max_records: usize,
    /// Print one JSON object on standard output instead of the text summary (see README).
    #[arg(long)]
    pub json: bool,
}

/// The novelty settings against the demonstrations: an alpha below what the calibration can
/// resolve is refused; demonstrations without spread are warned about. Returns the warnings.
fn novelty_checks(c: &countersteer::campaign::Campaign) -> Result<usize, CliError> {
    if let Ok(n) = calibration_count(&c.demonstrations, c.file.novelty.alpha) {
        check_alpha(c.file.novelty.alpha, n).map_err(|e| CliError::invalid(e.to_string()))?;
    }
    if without_spread(&c.demonstrations) {
        tell!(
            "warning: demonstrations: every demonstration state is the same; novelty is then \
             0 only for that state and every other state is flagged"
        );
        return Ok(1);
    }
    if let Some(w) = few_episodes_warning(c.demonstrations.episodes.len()) {
        tell!("warning: demonstrations: {w}");
        return Ok(1);
    }
    Ok(0)
}

/// Runs `check`.
pub fn run(a: CheckArgs) -> Result<(), CliError> {
    if !a.dir.is_dir() {
        return Err(CliError::usage(format!(
            "{}: not a folder",
            a.dir.display()
        )));
    }
    let opts = LoadOptions {
        problem_cap: a.max_problems.max(1),
        strict: a.strict,
        record_cap: a.max_records.max(1),
        decode_frames: true,
    };
    let progress = Progress::new();
    let report = {
        let _bar = Bar::follow(&progress);
        check_campaign(&a.dir, &opts, &progress)
    };
    for p in &report.problems {
        tell!("{p}");
    }
    if report.more > 0 {
        tell!(
            "... and {} more problem(s) not shown (raise --max-problems)",
            report.more
        );
    }
    let warnings = report
        .problems
        .iter()
        .filter(|p| p.severity == Severity::Warning)
        .count();
    let problems: Vec<Value> = report.problems.iter().map(json::problem).collect();
    let Some(c) = report.campaign else {
        let n = report.error_count();
        let e = CliError::invalid(format!(
            "{}: {n} error(s){}; the campaign cannot be used as it is",
            a.dir.display(),
            if report.more > 0 { " shown" } else { "" }
        ));
        if !a.json {
            return Err(e);
        }
        let mut v = json::failure(&e);
        v["errors"] = json!(n);
        v["problems"] = json!(problems);
        v["more"] = json!(report.more);
        json::print(&v);
        return Err(e.reported());
    };
    let warnings = warnings + novelty_checks(&c)?;
    if a.json {
        json::print_ok(json!({
            "campaign": c.file.name,
            "dir": a.dir.display().to_string(),
            "state_features": c.spec().state_dim(),
            "action_channels": c.spec().action_dim(),
            "tables": summary_json(&c),
            "warnings": warnings,
            "problems": problems,
            "more": report.more,
        }));
        return Ok(());
    }
    print_text(&c, &a, warnings);
    Ok(())
}

/// The per-table summaries as JSON.
fn summary_json(c: &countersteer::campaign::Campaign) -> Value {
    let tables: Vec<Value> = summarize_campaign(c)
        .iter()
        .map(|s| {
            let features: Vec<Value> = s
                .features
                .iter()
                .map(|f| {
                    json!({"name": f.name, "min": f.min, "max": f.max, "mean": f.mean, "unit": f.unit})
                })
                .collect();
            json!({
                "label": s.label,
                "episodes": s.episodes,
                "steps": s.steps,
                "interventions": s.interventions,
                "frames": s.frames,
                "with_samples": s.with_samples,
                "features": features,
            })
        })
        .collect();
    json!(tables)
}

fn print_text(c: &countersteer::campaign::Campaign, a: &CheckArgs, warnings: usize) {
    say!("campaign `{}` in {}", c.file.name, a.dir.display());
    say!(
        "  spec: {} state features, {} action channels",
        c.spec().state_dim(),
        c.spec().action_dim()
    );
    for s in summarize_campaign(c) {
        say!(
            "{}: {} episodes, {} steps, {} interventions, {} frames, {} with ensemble samples",
            s.label,
            s.episodes,
            s.steps,
            s.interventions,
            s.frames,
            s.with_samples
        );
        for f in &s.features {
            say!(
                "    {:<24} {:>12.4} .. {:<12.4} mean {:>10.4} {}",
                f.name,
                f.min,
                f.max,
                f.mean,
                f.unit
            );
        }
    }
    if !c.demonstrations.is_empty() {
        let scales = scales_with_origin(c.spec(), &c.demonstrations);
        let scale: Vec<f32> = scales.iter().map(|s| s.scale as f32).collect();
        let origin: Vec<_> = scales.iter().map(|s| s.origin).collect();
        super::score::print_scales(c.spec(), &scale, &origin);
    }
    if warnings > 0 {
        say!("{warnings} warning(s) above; the data was used as described in each");
    }
    say!("ok");
}
