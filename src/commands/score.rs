//! `candor score` and `candor apply`: the same metrics, diagnosis and
//! cross-fitted calibration for predictions made outside candor, and the
//! use of a saved calibration map on new predictions.

use super::args::LayoutArgs;
use super::{Output, Status};
use crate::calibrate;
use crate::common::defaults;
use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::experiment::score::{self, ScoreOptions};
use crate::experiment::summary::summarise;
use crate::export::{Exporter, Text};
use crate::report::{self, ReportOptions};
use std::fmt::Write as _;
use std::path::PathBuf;

/// The arguments of `candor score`.
// The field comments are also the `--help` text, where `<name>` reads as
// a placeholder, not as HTML.
#[allow(rustdoc::invalid_html_tags)]
#[derive(Debug, Clone, clap::Args)]
pub struct ScoreArgs {
    /// CSV of true labels and predicted probabilities.
    pub predictions: PathBuf,
    #[command(flatten)]
    pub layout: LayoutArgs,
    /// Folds the rows are split into: each is calibrated by maps fitted on
    /// the others (`outer_folds` in a manifest).
    #[arg(long, alias = "folds", default_value_t = defaults::OUTER_FOLDS)]
    pub outer_folds: usize,
    /// Seed of the fold split and the bootstrap.
    #[arg(short, long, default_value_t = defaults::SEED)]
    pub seed: u64,
    /// Equal-width bins for ECE and the reliability diagrams.
    #[arg(long, default_value_t = defaults::BINS)]
    pub bins: usize,
    /// Bootstrap resamples per fold for the ECE and Brier intervals.
    #[arg(long, default_value_t = defaults::BOOTSTRAP)]
    pub bootstrap: usize,
    /// The model's name in the tables.
    #[arg(long, default_value = "model")]
    pub model: String,
    /// Results folder [default: results/score-<file name>].
    #[arg(short, long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Print the predictions' metrics as JSON on standard output (the
    /// results folder is still written, and named on standard error).
    #[arg(long)]
    pub json: bool,
    /// Fit this method on every row and save it (with --save).
    #[arg(long, requires = "save")]
    pub fit: Option<String>,
    /// Where --fit writes the calibration map (JSON).
    #[arg(long, requires = "fit", value_name = "FILE")]
    pub save: Option<PathBuf>,
}

/// Scores the predictions into a results folder with its report.
pub fn execute(args: ScoreArgs, out: &mut Output) -> Result<Status> {
    if args.outer_folds < 2 {
        return Err(Error::Manifest("--outer-folds must be at least 2".into()));
    }
    if args.layout.target.is_none() {
        return Err(Error::Manifest(
            "name the column of true classes with --target COLUMN".into(),
        ));
    }
    if let Some(m) = args.fit.as_deref().filter(|m| calibrate::find(m).is_none()) {
        return Err(Error::Manifest(format!(
            "--fit {m}: unknown method; choose one of: {}",
            calibrate::known_methods()
        )));
    }
    let stem = args
        .predictions
        .file_stem()
        .map_or("predictions".into(), |s| s.to_string_lossy().to_string());
    let out_dir = args
        .out
        .unwrap_or_else(|| PathBuf::from("results").join(format!("score-{stem}")));
    let opts = ScoreOptions {
        layout: args.layout.layout(),
        folds: args.outer_folds,
        seed: args.seed,
        bins: args.bins,
        bootstrap: args.bootstrap,
        model: args.model,
        out_dir: out_dir.clone(),
    };
    let scored = score::score(&args.predictions, &opts)?;
    let html = report::generate(&out_dir, &ReportOptions::default())?;
    if let (Some(method), Some(file)) = (args.fit, args.save) {
        score::save_fit(&scored.predictions, &method, &file)?;
        out.note(format!("saved the {method} map to {}", file.display()));
    }
    if args.json {
        // Standard output holds the JSON alone; say where the rest went.
        out.note(format!(
            "results in {}; report: {}",
            out_dir.display(),
            html.display()
        ));
        let v = score::metrics_json(&scored.predictions, args.bins);
        let _ = writeln!(
            out.text,
            "{}",
            serde_json::to_string_pretty(&v).unwrap_or_default()
        );
        return Ok(Status::Success);
    }
    let summary = summarise(&scored.experiment, &scored.records);
    for metric in ["ece", "brier"] {
        if let Some(t) = summary.by_method(metric) {
            out.text.push_str(&Text.render(&t));
            out.text.push('\n');
        }
    }
    let _ = writeln!(
        out.text,
        "results in {}; report: {}",
        out_dir.display(),
        html.display()
    );
    Ok(Status::Success)
}

/// The arguments of `candor apply`.
#[derive(Debug, Clone, clap::Args)]
pub struct ApplyArgs {
    /// The map `candor score --fit METHOD --save FILE` wrote.
    pub map: PathBuf,
    /// CSV of predicted probabilities (a label column is optional).
    pub predictions: PathBuf,
    #[command(flatten)]
    pub layout: LayoutArgs,
    /// Folder for the calibrated CSV, written as `<file name>.calibrated.csv`
    /// [default: standard output].
    #[arg(short, long, value_name = "DIR")]
    pub out: Option<PathBuf>,
}

/// Writes the predictions with calibrated columns added.
pub fn apply(args: ApplyArgs, out: &mut Output) -> Result<Status> {
    let csv = score::apply(&args.map, &args.predictions, &args.layout.layout())?;
    match args.out {
        Some(dir) => {
            let stem = args
                .predictions
                .file_stem()
                .map_or("predictions".into(), |s| s.to_string_lossy().to_string());
            std::fs::create_dir_all(&dir).map_err(|e| Error::io(&dir, "create the folder", &e))?;
            let path = dir.join(format!("{stem}.calibrated.csv"));
            write_atomic(&path, csv.as_bytes())?;
            out.note(format!("wrote {}", path.display()));
        }
        None => out.text.push_str(&csv),
    }
    Ok(Status::Success)
}
