//! Reading a dataset: CSV with a header row into typed columns and a
//! class-index target.
//!
//! Columns whose every non-missing field is a number are numeric; any other
//! column is categorical. An empty field (or `NA`) is missing. Nothing is
//! imputed or encoded here: that depends on the training split and happens
//! in [`crate::preprocess`].

use crate::catalog::Catalog;
use crate::error::{Error, Result};
use crate::manifest::{DataSource, DatasetSpec, Evaluation};
use std::path::Path;

/// Marks a missing categorical value.
pub const MISSING_CODE: u32 = u32::MAX;

/// A feature column.
#[derive(Debug, Clone, PartialEq)]
pub enum ColumnData {
    /// Numbers; missing values are NaN.
    Numeric(Vec<f64>),
    /// Category codes into `levels` (sorted); missing is [`MISSING_CODE`].
    Categorical {
        codes: Vec<u32>,
        levels: Vec<String>,
    },
}

/// A named feature column.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    pub name: String,
    pub data: ColumnData,
}

/// A loaded dataset.
#[derive(Debug, Clone)]
pub struct Table {
    /// The dataset's name in the manifest.
    pub name: String,
    /// The file it was read from, for messages.
    pub source: String,
    /// SHA-256 of the file's bytes.
    pub sha256: String,
    pub columns: Vec<Column>,
    /// Class index of every row.
    pub labels: Vec<usize>,
    /// Class labels by index. Binary tasks are ordered `[negative, positive]`.
    pub classes: Vec<String>,
    /// Plain-words notes about dropped columns and the like.
    pub warnings: Vec<String>,
}

impl Table {
    /// Number of rows.
    pub fn rows(&self) -> usize {
        self.labels.len()
    }

    /// Number of classes.
    pub fn n_classes(&self) -> usize {
        self.classes.len()
    }

    /// Rows per class, by class index.
    pub fn class_counts(&self) -> Vec<usize> {
        let mut counts = vec![0; self.n_classes()];
        for &y in &self.labels {
            counts[y] += 1;
        }
        counts
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
            let bytes = std::fs::read(&path).map_err(|e| {
                Error::Io(format!(
                    "{}: cannot read dataset `{}`: {e}; check `path` at {} (relative paths start at the manifest's folder)",
                    path.display(),
                    spec.name,
                    spec.origin
                ))
            })?;
            let target = spec.target.clone().unwrap_or_default();
            (
                bytes,
                path.display().to_string(),
                target,
                spec.positive.clone(),
            )
        }
    };
    let mut table = parse_csv(&bytes, &file, &target, positive.as_deref()).map_err(in_entry)?;
    table.name = spec.name.clone();
    Ok(table)
}

fn is_missing(field: &str) -> bool {
    field.is_empty() || field == "NA"
}

/// Parses CSV bytes; `file` is used in messages only.
pub fn parse_csv(bytes: &[u8], file: &str, target: &str, positive: Option<&str>) -> Result<Table> {
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .from_reader(bytes);
    let headers = reader
        .headers()
        .map_err(|e| csv_error(file, &e))?
        .iter()
        .map(str::to_string)
        .collect::<Vec<_>>();
    if headers.is_empty() || headers.iter().all(String::is_empty) {
        return Err(Error::Data(format!(
            "{file}: no header row; the first line must name the columns"
        )));
    }
    for (i, h) in headers.iter().enumerate() {
        if headers[..i].contains(h) {
            return Err(Error::Data(format!(
                "{file}:1: column name `{h}` appears twice in the header; rename one"
            )));
        }
    }
    let Some(target_idx) = headers.iter().position(|h| h == target) else {
        let shown: Vec<&str> = headers.iter().take(20).map(String::as_str).collect();
        let more = if headers.len() > 20 { ", ..." } else { "" };
        return Err(Error::Data(format!(
            "{file}: no column named `{target}` for the target; columns are: {}{more}; set `target` to one of them",
            shown.join(", ")
        )));
    };

    let mut raw: Vec<Vec<String>> = vec![Vec::new(); headers.len()];
    let mut lines: Vec<u64> = Vec::new();
    let mut record = csv::StringRecord::new();
    while reader
        .read_record(&mut record)
        .map_err(|e| csv_error(file, &e))?
    {
        let line = record.position().map_or(0, |p| p.line());
        if record.iter().all(str::is_empty) {
            continue;
        }
        if is_missing(&record[target_idx]) {
            return Err(Error::Data(format!(
                "{file}:{line}: the target `{target}` is empty; give every row a label or remove the row"
            )));
        }
        for (column, field) in raw.iter_mut().zip(record.iter()) {
            column.push(field.to_string());
        }
        lines.push(line);
    }
    if lines.is_empty() {
        return Err(Error::Data(format!(
            "{file}: no data rows after the header; add rows"
        )));
    }

    let targets = std::mem::take(&mut raw[target_idx]);
    let (labels, classes) = encode_target(file, target, &targets, positive)?;

    let mut columns = Vec::new();
    let mut warnings = Vec::new();
    for (i, (name, values)) in headers.iter().zip(raw).enumerate() {
        if i == target_idx {
            continue;
        }
        let data = type_column(file, name, &values, &lines)?;
        if let Some(why) = uninformative(&data) {
            warnings.push(format!(
                "{file}: column `{name}` {why}, so it is ignored; remove it to silence this note"
            ));
            continue;
        }
        columns.push(Column {
            name: name.clone(),
            data,
        });
    }
    if columns.is_empty() {
        return Err(Error::Data(format!(
            "{file}: no usable feature columns besides the target `{target}`; add at least one varying column"
        )));
    }
    Ok(Table {
        name: String::new(),
        source: file.to_string(),
        sha256: crate::manifest::hex_sha256(bytes),
        columns,
        labels,
        classes,
        warnings,
    })
}

fn csv_error(file: &str, e: &csv::Error) -> Error {
    let line = e.position().map(|p| p.line());
    let msg = match e.kind() {
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => format!(
            "row has {len} fields but the header has {expected_len}; check for a missing or extra delimiter, and quote fields that contain commas"
        ),
        csv::ErrorKind::Utf8 { .. } => {
            "the file is not valid UTF-8 text; save it as UTF-8".to_string()
        }
        csv::ErrorKind::Io(io) => format!("cannot read: {io}"),
        _ => format!("malformed CSV: {e}"),
    };
    match line {
        Some(l) => Error::Data(format!("{file}:{l}: {msg}")),
        None => Error::Data(format!("{file}: {msg}")),
    }
}

/// Orders labels numerically when they are all numbers, else as text.
fn sort_labels(labels: &mut [String]) {
    let numeric: Option<Vec<f64>> = labels.iter().map(|l| l.parse::<f64>().ok()).collect();
    if numeric.is_some() {
        labels.sort_by(|a, b| {
            let (x, y) = (
                a.parse::<f64>().unwrap_or(0.0),
                b.parse::<f64>().unwrap_or(0.0),
            );
            x.total_cmp(&y).then_with(|| a.cmp(b))
        });
    } else {
        labels.sort();
    }
}

fn same_label(label: &str, wanted: &str) -> bool {
    label == wanted
        || matches!((label.parse::<f64>(), wanted.parse::<f64>()), (Ok(a), Ok(b)) if a == b)
        || (label.eq_ignore_ascii_case(wanted)
            && (wanted.eq_ignore_ascii_case("true") || wanted.eq_ignore_ascii_case("false")))
}

fn encode_target(
    file: &str,
    target: &str,
    values: &[String],
    positive: Option<&str>,
) -> Result<(Vec<usize>, Vec<String>)> {
    let mut classes: Vec<String> = values.to_vec();
    classes.sort();
    classes.dedup();
    sort_labels(&mut classes);
    // More than 100 classes, each seen about twice or less on average, is a
    // continuous value or an identifier, not class labels.
    if classes.len() > 100 && classes.len() * 2 > values.len() {
        return Err(Error::Data(format!(
            "{file}: the target `{target}` has {} distinct values in {} rows, so it looks like a measurement or an identifier rather than class labels; choose a categorical target column (or bin the values into classes first)",
            classes.len(),
            values.len()
        )));
    }
    match classes.len() {
        1 => {
            return Err(Error::Data(format!(
                "{file}: the target `{target}` has a single class `{}` ({} rows); a classifier needs at least two classes",
                classes[0],
                values.len()
            )))
        }
        2 => {
            let pos = match positive {
                Some(p) => classes.iter().position(|c| same_label(c, p)).ok_or_else(|| {
                    Error::Data(format!(
                        "{file}: the positive class `{p}` is not a label of `{target}`; its labels are `{}` and `{}`",
                        classes[0], classes[1]
                    ))
                })?,
                None => classes
                    .iter()
                    .position(|c| same_label(c, "1") || same_label(c, "true"))
                    .filter(|_| {
                        classes
                            .iter()
                            .any(|c| same_label(c, "0") || same_label(c, "false"))
                    })
                    .ok_or_else(|| {
                        Error::Data(format!(
                            "{file}: the binary target `{target}` has labels `{}` and `{}`; set `positive` to the one whose probability you want",
                            classes[0], classes[1]
                        ))
                    })?,
            };
            if pos == 0 {
                classes.swap(0, 1);
            }
        }
        k => {
            if let Some(p) = positive {
                return Err(Error::Data(format!(
                    "{file}: `positive = \"{p}\"` applies to binary targets, but `{target}` has {k} classes; remove `positive`"
                )));
            }
        }
    }
    let labels = values
        .iter()
        .map(|v| classes.iter().position(|c| c == v).unwrap_or(0))
        .collect();
    Ok((labels, classes))
}

fn type_column(file: &str, name: &str, values: &[String], lines: &[u64]) -> Result<ColumnData> {
    let parsed: Option<Vec<f64>> = values
        .iter()
        .map(|v| {
            if is_missing(v) {
                Some(f64::NAN)
            } else {
                v.parse::<f64>().ok()
            }
        })
        .collect();
    if let Some(numbers) = parsed {
        for (i, (v, x)) in values.iter().zip(&numbers).enumerate() {
            if !is_missing(v) && !x.is_finite() {
                return Err(Error::Data(format!(
                    "{file}:{}: column `{name}` holds `{v}`, which is not a finite number; fix it, or leave the field empty to mark it missing",
                    lines[i]
                )));
            }
        }
        return Ok(ColumnData::Numeric(numbers));
    }
    let mut levels: Vec<String> = values.iter().filter(|v| !is_missing(v)).cloned().collect();
    levels.sort();
    levels.dedup();
    let codes = values
        .iter()
        .map(|v| {
            if is_missing(v) {
                MISSING_CODE
            } else {
                levels.binary_search(v).map_or(MISSING_CODE, |i| i as u32)
            }
        })
        .collect();
    Ok(ColumnData::Categorical { codes, levels })
}

/// Why a column carries no information, if it does not.
fn uninformative(data: &ColumnData) -> Option<&'static str> {
    match data {
        ColumnData::Numeric(v) => {
            let mut present = v.iter().filter(|x| !x.is_nan());
            match present.next() {
                None => Some("is empty in every row"),
                Some(first) if present.all(|x| x == first) => Some("has a single value"),
                _ => None,
            }
        }
        ColumnData::Categorical { levels, .. } => match levels.len() {
            0 => Some("is empty in every row"),
            1 => Some("has a single value"),
            _ => None,
        },
    }
}

/// Checks that every class has enough rows for the fold counts: each outer
/// fold must hold one of its rows, and each outer training split must hold
/// one per inner fold.
pub fn check_class_counts(table: &Table, eval: &Evaluation) -> Result<()> {
    let k = eval.outer_folds;
    let m = eval.inner_folds;
    let enough = |c: usize| c >= k && c - c.div_ceil(k) >= m;
    for (class, &count) in table.classes.iter().zip(&table.class_counts()) {
        if !enough(count) {
            let needed = (1..).find(|&c| enough(c)).unwrap_or(k.max(m));
            return Err(Error::Data(format!(
                "{}: class `{class}` of dataset `{}` has {count} rows, too few for {k} outer and {m} inner folds (needs at least {needed}); lower `outer_folds` or `inner_folds` in [evaluation], or merge or drop the class",
                table.source, table.name
            )));
        }
    }
    Ok(())
}
