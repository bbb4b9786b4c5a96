//! `candor check`: loads a manifest and its datasets, with every check a run
//! would make before training, so mistakes surface in seconds.

use super::{Output, Status};
use crate::common::error::Result;
use crate::experiment::{manifest, runner};
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
}

/// Describes each dataset and the cells a run would compute.
pub fn execute(args: CheckArgs, out: &mut Output) -> Result<Status> {
    let exp = manifest::load(&args.manifest)?;
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
