//! Where a dataset comes from: a bundled catalog entry or a CSV path, with
//! the target, positive class and file format the manifest gives, and the
//! loading of either into a [`Table`].

use super::catalog::Catalog;
use super::csv::{parse_csv, read_csv, CsvFormat};
use super::parquet::{read_parquet, MAGIC};
use super::table::{LevelCap, Table};
use crate::common::error::{Error, Result};
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// Where a dataset's CSV comes from.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DataSource {
    /// An entry of the bundled catalog, by id.
    Bundled(String),
    /// A CSV path, relative to the manifest's folder unless absolute.
    Path(PathBuf),
}

/// One dataset entry.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct DatasetSpec {
    /// The label used in tables and result paths.
    pub name: String,
    pub source: DataSource,
    /// The target column; bundled datasets default to the catalog's.
    pub target: Option<String>,
    /// The positive class of a binary target; bundled datasets default to the
    /// catalog's, other files to `1` or `true` when those are the labels.
    pub positive: Option<String>,
    /// The file's delimiter and decimal mark (`delimiter`, `decimal`).
    #[serde(default, skip_serializing_if = "CsvFormat::is_default")]
    pub format: CsvFormat,
    /// `file:line:column` of the entry, for later error messages.
    #[serde(skip)]
    pub origin: String,
    /// For a segment of another dataset (`candor score --group`), that
    /// dataset's name: a segment shares its rows, so it is reported in its
    /// own table and never counted as an independent dataset.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub segment_of: Option<String>,
    /// Feature columns to drop: identifiers, leaks, free text.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub exclude: Vec<String>,
    /// A column of group ids (a customer, patient or device): folds keep
    /// each group whole. The column is not a feature.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub group: Option<String>,
    /// A column of dates or times: folds become an expanding window over
    /// time, and calibration scores come from the past only. Not a feature.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time: Option<String>,
    /// The cap on categorical encodings (`max_levels`, `min_level_rows`).
    #[serde(default, skip_serializing_if = "LevelCap::is_default")]
    pub levels: LevelCap,
}

/// Reads a data file as CSV (plain or gzip) or Parquet, chosen by its first
/// bytes, so the file's name does not matter.
pub fn read_file(
    path: &Path,
    target: &str,
    positive: Option<&str>,
    format: &CsvFormat,
) -> Result<Table> {
    let mut head = [0u8; 4];
    let is_parquet = std::fs::File::open(path)
        .and_then(|mut f| std::io::Read::read_exact(&mut f, &mut head))
        .is_ok()
        && &head == MAGIC;
    if is_parquet {
        read_parquet(path, target, positive, format)
    } else {
        read_csv(path, target, positive, format)
    }
}

/// Loads a manifest's dataset entry, from the catalog or from a path
/// relative to `manifest_dir`.
pub fn load(spec: &DatasetSpec, catalog: Option<&Catalog>, manifest_dir: &Path) -> Result<Table> {
    let in_entry = |e: Error| match e {
        Error::Data(m) => Error::Data(format!("{m} (dataset `{}` at {})", spec.name, spec.origin)),
        other => other,
    };
    let (bytes, file, target, positive) = match &spec.source {
        DataSource::Bundled(id) => {
            let catalog = catalog.ok_or_else(|| {
                Error::Data(format!(
                    "{}: dataset `{}` is bundled but no catalog was found; pass --datasets DIR",
                    spec.origin, spec.name
                ))
            })?;
            let entry = catalog.get(id).map_err(|e| match e {
                Error::Data(m) => Error::Data(format!("{}: {m}", spec.origin)),
                other => other,
            })?;
            let bytes = catalog.read_verified(entry)?;
            let file = catalog.dir.join(&entry.file).display().to_string();
            let target = spec.target.clone().unwrap_or_else(|| entry.target.clone());
            let positive = spec.positive.clone().or_else(|| entry.positive.clone());
            (bytes, file, target, positive)
        }
        DataSource::Path(p) => {
            let path = if p.is_absolute() {
                p.clone()
            } else {
                manifest_dir.join(p)
            };
            if !path.is_file() {
                return Err(Error::Io(format!(
                    "{}: cannot read dataset `{}`: no such file; check `path` at {} (relative paths start at the manifest's folder)",
                    path.display(),
                    spec.name,
                    spec.origin
                )));
            }
            let target = spec.target.clone().unwrap_or_default();
            let table = read_file(&path, &target, spec.positive.as_deref(), &spec.format)
                .map_err(in_entry)?;
            return finish(table, spec);
        }
    };
    let table = parse_csv(&bytes, &file, &target, positive.as_deref()).map_err(in_entry)?;
    finish(table, spec)
}

/// Applies the entry's own settings to a table as read: its name, the
/// columns it excludes and its encoding cap, with a note for each column
/// that still looks like an identifier.
fn finish(mut table: Table, spec: &DatasetSpec) -> Result<Table> {
    table.name = spec.name.clone();
    table
        .exclude(&spec.exclude)
        .map_err(|m| Error::Manifest(format!("{}: dataset `{}`: {m}", spec.origin, spec.name)))?;
    if let Some(g) = &spec.group {
        table.take_groups(g).map_err(|m| {
            Error::Manifest(format!("{}: dataset `{}`: {m}", spec.origin, spec.name))
        })?;
    }
    if spec.time.is_some() && spec.group.is_some() {
        return Err(Error::Manifest(format!(
            "{}: dataset `{}` names both `group` and `time`; folds are either grouped or time-ordered, so keep one",
            spec.origin, spec.name
        )));
    }
    if let Some(t) = &spec.time {
        table.take_order(t).map_err(|m| {
            Error::Manifest(format!("{}: dataset `{}`: {m}", spec.origin, spec.name))
        })?;
    }
    table.levels = spec.levels;
    let notes = table.identifier_notes();
    table.warnings.extend(notes);
    Ok(table)
}
