//! `candor data`: the bundled datasets, and the checks and manifest entry
//! for an in-house CSV.

use super::args::CsvArgs;
use super::{Output, Status};
use crate::common::defaults;
use crate::common::error::Result;
use crate::data::inspect::inspect;
use crate::data::source::read_file;
use crate::experiment::add::{append_dataset, NewDataset};
use crate::export::{Exporter, Text};
use std::fmt::Write as _;
use std::path::PathBuf;

/// The subcommands of `candor data`. The bundled datasets are listed by
/// `candor list datasets`, beside everything else a manifest can name.
#[derive(Debug, Clone, clap::Subcommand)]
pub enum DataCommand {
    /// Schema, missing values, class balance against the folds, and
    /// columns that look like identifiers or leak the target.
    Inspect {
        /// The data file: CSV (plain or gzip-compressed) or Parquet.
        file: PathBuf,
        #[command(flatten)]
        csv: CsvArgs,
        /// Outer folds the data must support (`outer_folds` in a manifest).
        #[arg(long, alias = "folds", default_value_t = defaults::OUTER_FOLDS)]
        outer_folds: usize,
        /// Inner folds the data must support (`inner_folds` in a manifest).
        #[arg(long, default_value_t = defaults::INNER_FOLDS)]
        inner_folds: usize,
        /// Feature columns to leave out, comma-separated (`exclude` in a
        /// manifest).
        #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
        exclude: Vec<String>,
    },
    /// Check a CSV and append a dataset entry for it to a manifest,
    /// keeping the manifest's comments and layout.
    Add {
        /// The data file: CSV (plain or gzip-compressed) or Parquet.
        file: PathBuf,
        #[command(flatten)]
        csv: CsvArgs,
        /// The manifest to extend; created, with two families to start
        /// from, when it does not exist.
        #[arg(long, value_name = "MANIFEST")]
        to: PathBuf,
        /// Feature columns to leave out, comma-separated: identifiers,
        /// leaks, free text. Written as the entry's `exclude`.
        #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
        exclude: Vec<String>,
        /// The dataset's name in the manifest [default: the file name].
        #[arg(long)]
        name: Option<String>,
    },
}

/// Runs one `data` subcommand.
pub fn execute(command: DataCommand, out: &mut Output) -> Result<Status> {
    match command {
        DataCommand::Inspect {
            file,
            csv,
            outer_folds,
            inner_folds,
            exclude,
        } => {
            let mut table = read_file(&file, &csv.target, csv.positive.as_deref(), &csv.format()?)?;
            table
                .exclude(&exclude)
                .map_err(|m| crate::common::error::Error::Manifest(format!("--exclude: {m}")))?;
            let found = inspect(&table, outer_folds, inner_folds);
            out.text.push_str(&Text.render(&found.schema));
            out.text.push('\n');
            out.text.push_str(&Text.render(&found.classes));
            out.text.push('\n');
            if found.warnings.is_empty() {
                out.text.push_str("No warnings.\n");
            }
            for w in &found.warnings {
                let _ = writeln!(out.text, "warning: {w}");
            }
            Ok(Status::Success)
        }
        DataCommand::Add {
            file,
            csv,
            to,
            name,
            exclude,
        } => {
            let format = csv.format()?;
            let table = read_file(&file, &csv.target, csv.positive.as_deref(), &format)?;
            let entry = append_dataset(
                &to,
                &NewDataset {
                    file: &file,
                    name: name.as_deref(),
                    target: &csv.target,
                    positive: csv.positive.as_deref(),
                    format: &format,
                    exclude: &exclude,
                },
                &table,
            )?;
            let _ = writeln!(
                out.text,
                "added dataset `{entry}` ({} rows, {} classes) to {}; check it with `candor check {}`",
                table.rows(),
                table.n_classes(),
                to.display(),
                to.display()
            );
            Ok(Status::Success)
        }
    }
}
