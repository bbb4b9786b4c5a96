//! `candor merge`: the result files and report of a sharded run, once every
//! shard has stored its cells in the shared results folder.

use super::run::{conclude, Finish};
use super::{Output, Status};
use crate::common::error::{Error, Result};
use crate::experiment::merge::{self, MergeOptions, Merged, Missing};
use crate::experiment::shard::Shard;
use std::fmt::Write as _;
use std::path::PathBuf;

/// The arguments of `candor merge`.
#[derive(Debug, Clone, clap::Args)]
pub struct MergeArgs {
    /// The results folder the shards wrote into.
    pub results: PathBuf,
    /// The manifest [default: the one the shards recorded].
    #[arg(long, value_name = "FILE")]
    pub manifest: Option<PathBuf>,
    /// Folder holding the bundled datasets and their catalog.json.
    #[arg(long, value_name = "DIR")]
    pub datasets: Option<PathBuf>,
    #[command(flatten)]
    pub finish: Finish,
}

/// How many missing cells are named one by one.
const SHOWN: usize = 20;

/// Merges, or lists what is missing and which shards to rerun.
pub fn execute(args: MergeArgs, out: &mut Output) -> Result<Status> {
    let merged = merge::merge(&MergeOptions {
        out_dir: args.results.clone(),
        manifest: args.manifest,
        datasets_dir: args.datasets,
    })?;
    let (exp, report, shards) = match merged {
        Merged::Incomplete { missing, manifest } => {
            return Err(incomplete(&missing, &manifest, &args.results, out))
        }
        Merged::Complete {
            experiment,
            report,
            shards,
        } => (experiment, report, shards),
    };
    let status = conclude(&exp, &report, &args.results, &args.finish, out)?;
    if !args.finish.quiet && !shards.is_empty() {
        let _ = writeln!(
            out.text,
            "merged {} shards; their estimated and measured costs: {}",
            shards.len(),
            args.results.join("shards").join("balance.md").display()
        );
    }
    Ok(status)
}

/// Notes naming the missing cells, and the error that ends the merge.
fn incomplete(
    missing: &[Missing],
    manifest: &std::path::Path,
    results: &std::path::Path,
    out: &mut Output,
) -> Error {
    for m in missing.iter().take(SHOWN) {
        match m.shard {
            Some(s) => out.note(format!("missing: {} (shard {s})", m.cell)),
            None => out.note(format!("missing: {}", m.cell)),
        }
    }
    if missing.len() > SHOWN {
        out.note(format!("missing: … and {} more", missing.len() - SHOWN));
    }
    let mut owners: Vec<Shard> = missing.iter().filter_map(|m| m.shard).collect();
    owners.sort_by_key(|s| s.index);
    owners.dedup();
    let rerun = match owners.as_slice() {
        [] => "run the shards first".to_string(),
        [one] => format!(
            "rerun shard {one} with `candor run {} --out {} --shard {one}`",
            manifest.display(),
            results.display()
        ),
        many => format!(
            "rerun shards {} with `candor run {} --out {} --shard I/{}` for each",
            many.iter()
                .map(Shard::to_string)
                .collect::<Vec<_>>()
                .join(", "),
            manifest.display(),
            results.display(),
            many[0].count
        ),
    };
    Error::Data(format!(
        "{}: {} cell(s) are missing, so nothing was merged; {rerun}, then merge again",
        results.display(),
        missing.len()
    ))
}
