//! `candor run`: the main job. Runs every cell a manifest implies, prints
//! calibration error before and after each method, and writes the report.

use super::{Output, Status};
use crate::common::error::Result;
use crate::experiment::manifest;
use crate::experiment::runner::{self, RunOptions};
use crate::experiment::shard::{self, Shard};
use crate::export::{Exporter, Text};
use crate::report::{self, deciding_metric, ReportOptions};
use std::fmt::Write as _;
use std::path::PathBuf;

/// The arguments of `candor run`.
// The field comments are also the `--help` text, where `<name>` reads as
// a placeholder, not as HTML.
#[allow(rustdoc::invalid_html_tags)]
#[derive(Debug, Clone, clap::Args)]
pub struct RunArgs {
    /// The experiment manifest (TOML).
    pub manifest: PathBuf,
    /// Results folder [default: results/<experiment name>].
    #[arg(short, long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Worker threads; 0 uses every core. Results do not depend on it.
    #[arg(short = 'j', long, default_value_t = 0)]
    pub threads: usize,
    /// Folder holding the bundled datasets and their catalog.json.
    #[arg(long, value_name = "DIR")]
    pub datasets: Option<PathBuf>,
    #[command(flatten)]
    pub finish: Finish,
    /// Compute only shard I of N (`2/3`) of the cells, into a results folder
    /// the other shards share; `auto` reads the shard from a Slurm job array
    /// or a Kubernetes Indexed Job (`auto/N` gives N there). Then `candor
    /// merge` writes the results.
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
}

/// Runs the manifest. `progress` draws a progress bar on standard error
/// (the binary passes whether that is a terminal).
pub fn execute(args: RunArgs, progress: bool, out: &mut Output) -> Result<Status> {
    let exp = manifest::load(&args.manifest)?;
    // Checked before any training: a bad --metric costs seconds, not a run.
    let (_, why) = deciding_metric(args.finish.metric.as_deref(), &exp.metrics)?;
    if let Some(why) = why {
        out.note(format!("note: {why}"));
    }
    let out_dir = args
        .out
        .unwrap_or_else(|| PathBuf::from("results").join(&exp.name));
    let shard = args
        .shard
        .as_deref()
        .map(|spec| Shard::parse(spec, |name| std::env::var(name).ok()))
        .transpose()?;
    let options = RunOptions {
        out_dir: out_dir.clone(),
        threads: args.threads,
        datasets_dir: args.datasets,
        progress: progress && !args.finish.quiet,
        shard,
    };
    let done = runner::run(&exp, &options)?;
    if let Some(status) = &done.shard {
        return Ok(shard_done(status, &done, &out_dir, args.finish.quiet, out));
    }
    conclude(&exp, &done, &out_dir, &args.finish, out)
}

/// What the end of a run or merge shows: what is printed and how the
/// report is drawn.
#[derive(Debug, Clone, clap::Args)]
pub struct Finish {
    /// No progress bar and no table; errors only.
    #[arg(long, short)]
    pub quiet: bool,
    /// Metric that decides "best" and the ranking in the report
    /// [default: brier, else log_loss, else the first computed].
    #[arg(short, long)]
    pub metric: Option<String>,
    /// Also write PNG copies of the report's figures.
    #[arg(long)]
    pub png: bool,
}

/// The shard's one-line account, its failures, and what to do next.
fn shard_done(
    status: &shard::Status,
    done: &runner::RunReport,
    out_dir: &std::path::Path,
    quiet: bool,
    out: &mut Output,
) -> Status {
    if !quiet {
        let _ = writeln!(
            out.text,
            "shard {}: {} cells ({} computed, {} reused) in {:.1} s, estimated {:.1} s; when every shard is done: candor merge {}",
            status.shard,
            status.cells,
            status.computed,
            status.reused,
            status.measured_seconds,
            status.estimated_seconds,
            out_dir.display()
        );
    }
    failed(&done.failures, out, |n| {
        format!(
            "error: {n} cell(s) or method(s) of shard {} failed; their errors are in the cell records under {}/cells",
            status.shard,
            out_dir.display()
        )
    })
}

/// Notes each failure and then `closing` (given their count), if any
/// failed; the run's status either way.
fn failed(failures: &[String], out: &mut Output, closing: impl FnOnce(usize) -> String) -> Status {
    for f in failures {
        out.note(format!("failed: {f}"));
    }
    if failures.is_empty() {
        Status::Success
    } else {
        out.note(closing(failures.len()));
        Status::CellsFailed
    }
}

/// Notes, tables, the report and the failures of a finished run (or
/// merge), and its status.
pub(super) fn conclude(
    exp: &crate::experiment::manifest::Experiment,
    done: &runner::RunReport,
    out_dir: &std::path::Path,
    finish: &Finish,
    out: &mut Output,
) -> Result<Status> {
    for w in &done.warnings {
        out.note(format!("note: {w}"));
    }
    if done.fallbacks > 0 {
        out.note(format!(
            "note: {} method result(s) took a documented fallback or safeguard (a single class or equal scores in a calibration fold, separated scores, outlying scores clipped, a Platt slope held at 0); see \"warnings\" in {}/records.jsonl",
            done.fallbacks,
            out_dir.display()
        ));
    }
    if !finish.quiet {
        // ECE and Brier when the manifest has them, else its first two.
        let mut shown: Vec<&str> = ["ece", "brier"]
            .into_iter()
            .filter(|m| exp.metrics.iter().any(|x| x == m))
            .collect();
        if shown.is_empty() {
            shown = exp.metrics.iter().take(2).map(String::as_str).collect();
        }
        for metric in shown {
            if let Some(t) = done.summary.by_method(metric) {
                out.text.push_str(&Text.render(&t));
                out.text.push('\n');
            }
        }
        let _ = writeln!(
            out.text,
            "{} cells computed, {} reused; results in {}",
            done.computed,
            done.reused,
            out_dir.display()
        );
    }
    let html = report::generate(
        out_dir,
        &ReportOptions {
            metric: finish.metric.clone(),
            png: finish.png,
        },
    )?;
    if !finish.quiet {
        let _ = writeln!(out.text, "report: {}", html.display());
    }
    Ok(failed(&done.failures, out, |n| {
        format!(
            "error: {n} cell(s) or method(s) failed; their errors are in {}/records.jsonl, the other results are complete",
            out_dir.display()
        )
    }))
}
