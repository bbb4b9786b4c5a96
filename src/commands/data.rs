//! `candor data`: the bundled datasets, and the checks and manifest entry
//! for an in-house CSV.

use super::args::CsvArgs;
use super::{Output, Status};
use crate::common::error::Result;
use crate::common::table::Table;
use crate::data::catalog::Catalog;
use crate::data::csv::read_csv;
use crate::data::inspect::inspect;
use crate::experiment::manifest::append_dataset;
use crate::export::{Exporter, Text};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// The subcommands of `candor data`.
#[derive(Debug, Clone, clap::Subcommand)]
pub enum DataCommand {
    /// The bundled datasets: rows, features, classes, balance and licence.
    List {
        /// Folder holding the bundled datasets and their catalog.json.
        #[arg(long)]
        datasets: Option<PathBuf>,
    },
    /// Schema, missing values, class balance against the folds, and
    /// columns that look like identifiers or leak the target.
    Inspect {
        /// The CSV (plain or gzip-compressed).
        file: PathBuf,
        #[command(flatten)]
        csv: CsvArgs,
        /// Outer folds the data must support.
        #[arg(long, default_value_t = 5)]
        folds: usize,
        /// Inner folds the data must support.
        #[arg(long, default_value_t = 5)]
        inner_folds: usize,
    },
    /// Check a CSV and append a dataset entry for it to a manifest,
    /// keeping the manifest's comments and layout.
    Add {
        /// The CSV (plain or gzip-compressed).
        file: PathBuf,
        #[command(flatten)]
        csv: CsvArgs,
        /// The manifest to extend.
        #[arg(long)]
        to: PathBuf,
        /// The dataset's name in the manifest [default: the file name].
        #[arg(long)]
        name: Option<String>,
    },
}

/// Runs one `data` subcommand.
pub fn execute(command: DataCommand, out: &mut Output) -> Result<Status> {
    match command {
        DataCommand::List { datasets } => list(datasets, out),
        DataCommand::Inspect {
            file,
            csv,
            folds,
            inner_folds,
        } => {
            let table = read_csv(&file, &csv.target, csv.positive.as_deref(), &csv.format()?)?;
            let found = inspect(&table, folds, inner_folds);
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
        } => {
            let format = csv.format()?;
            let table = read_csv(&file, &csv.target, csv.positive.as_deref(), &format)?;
            let entry = append_dataset(
                &to,
                &file,
                name.as_deref(),
                &csv.target,
                csv.positive.as_deref(),
                &format,
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

/// The catalog as a table, with licences in their short forms.
fn list(datasets: Option<PathBuf>, out: &mut Output) -> Result<Status> {
    let cat = Catalog::locate(datasets.as_deref(), Path::new("."))?;
    let mut t = Table::new(
        "datasets",
        &format!("Bundled datasets in {}", cat.dir.display()),
        &[
            "id",
            "task",
            "rows",
            "features",
            "classes",
            "rarest class",
            "data licence",
            "package licence",
        ],
    );
    for e in &cat.entries {
        // "package: X (pkg); data: Y (notes)" -> the short forms.
        let part = |key: &str| -> String {
            e.license
                .split(';')
                .find_map(|p| p.trim().strip_prefix(key))
                .map(|v| v.split(" (").next().unwrap_or_default().trim().to_string())
                .unwrap_or_else(|| "see PROVENANCE.md".into())
        };
        t.rows.push(vec![
            e.id.as_str().into(),
            e.task.as_str().into(),
            e.rows.into(),
            e.n_features.into(),
            e.n_classes.into(),
            format!("{:.1}%", e.minority_share * 100.0).into(),
            part("data:").into(),
            part("package:").into(),
        ]);
    }
    t.notes.push(format!(
        "Full licences and provenance: {}/PROVENANCE.md",
        cat.dir.display()
    ));
    out.text.push_str(&Text.render(&t));
    Ok(Status::Success)
}
