//! `candor check`: loads a manifest and its datasets, with every check a run
//! would make before training, so mistakes surface in seconds.

use super::{Output, Status};
use crate::common::error::Result;
use crate::common::files::check_writable_dir;
use crate::experiment::{manifest, runner, shard};
use crate::gate::baseline;
use crate::report::deciding_metric;
use std::fmt::Write as _;
use std::path::PathBuf;

/// The arguments of `candor check`.
#[derive(Debug, Clone, clap::Args)]
pub struct CheckArgs {
    /// The experiment manifest (TOML).
    pub manifest: PathBuf,
    /// Folder holding the bundled datasets and their catalog.json.
    #[arg(long, value_name = "DIR")]
    pub datasets: Option<PathBuf>,
    /// The report's deciding metric to check against the manifest's
    /// `metrics` [default: brier, else log_loss, else the first computed].
    #[arg(short, long)]
    pub metric: Option<String>,
    /// A gate baseline whose rules must fit the manifest's metrics,
    /// datasets, families and methods.
    #[arg(short, long, value_name = "FILE")]
    pub baseline: Option<PathBuf>,
    /// The results folder a run would write [default: results/<experiment
    /// name>]; checked to be writable.
    #[arg(short, long, value_name = "DIR")]
    pub out: Option<PathBuf>,
}

/// Describes each dataset and the cells a run would compute.
pub fn execute(args: CheckArgs, out: &mut Output) -> Result<Status> {
    let exp = manifest::load(&args.manifest)?;
    // Everything a run would refuse, refused before any data is read.
    let (metric, why) = deciding_metric(args.metric.as_deref(), &exp.metrics)?;
    if let Some(why) = why {
        out.note(format!("note: {why}"));
    }
    let out_dir = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("results").join(&exp.name));
    check_writable_dir(&out_dir)?;
    let rules = match &args.baseline {
        Some(b) => Some((b, baseline::check_against(b, &exp)?)),
        None => None,
    };
    let tables = runner::load_datasets(&exp, args.datasets.as_deref())?;
    for t in &tables {
        for w in &t.warnings {
            out.note(format!("note: {w}"));
        }
        let counts: Vec<String> = t
            .classes
            .iter()
            .zip(t.class_counts())
            .map(|(c, n)| format!("{c}: {n}"))
            .collect();
        let _ = writeln!(
            out.text,
            "{}: {} rows, {} feature columns, classes {{{}}}",
            t.name,
            t.rows(),
            t.columns.len(),
            counts.join(", ")
        );
    }
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    for w in shard::slow_family_warnings(&exp, &tables, threads) {
        out.note(format!("warning: {w}"));
    }
    if let Some((b, n)) = rules {
        let _ = writeln!(out.text, "{}: {n} rules fit this manifest", b.display());
    }
    let _ = writeln!(
        out.text,
        "report: \"best\" and the ranking by {}; results in {}",
        metric.name,
        out_dir.display()
    );
    let e = exp.evaluation;
    let _ = writeln!(
        out.text,
        "{}: ok; {} datasets x {} families x {} repeats x {} folds = {} cells, methods: {}",
        args.manifest.display(),
        exp.datasets.len(),
        exp.families.len(),
        e.repeats,
        e.outer_folds,
        exp.datasets.len() * exp.families.len() * e.repeats * e.outer_folds,
        exp.methods.join(", ")
    );
    Ok(Status::Success)
}
