//! Reading CSV: a header row into typed columns and a class-index target.
//!
//! Columns whose every non-missing field is a number are numeric; any other
//! column is categorical. An empty field (or `NA`) is missing. Nothing is
//! imputed or encoded here: that depends on the training split and happens
//! in [`super::preprocess`].

use super::table::{Column, ColumnData, Table, MISSING_CODE};
use crate::common::checksum::{hex_sha256, hex_sha256_of};
use crate::common::error::{Error, Result};
use flate2::read::MultiGzDecoder;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;
use std::io::{BufRead, Read};
use std::path::Path;

fn is_missing(field: &str) -> bool {
    field.is_empty() || field == "NA"
}

/// How a CSV file is written: its field delimiter and decimal mark.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct CsvFormat {
    pub delimiter: u8,
    /// Numbers are written with a decimal comma (`3,14`); needs a
    /// delimiter other than the comma.
    pub decimal_comma: bool,
}

impl Default for CsvFormat {
    fn default() -> Self {
        CsvFormat {
            delimiter: b',',
            decimal_comma: false,
        }
    }
}

impl CsvFormat {
    /// True for the default format, so manifests that never set it keep
    /// their recorded settings and fingerprints.
    pub fn is_default(&self) -> bool {
        *self == CsvFormat::default()
    }

    fn number(&self, field: &str) -> Option<f64> {
        if self.decimal_comma && field.contains(',') {
            field.replace(',', ".").parse().ok()
        } else {
            field.parse().ok()
        }
    }
}

/// Opens a fresh reader over the data for each of the two passes.
type Opener<'a> = dyn FnMut() -> Result<Box<dyn Read + 'a>> + 'a;

/// Parses CSV bytes in the default format; `file` is used in messages only.
pub fn parse_csv(bytes: &[u8], file: &str, target: &str, positive: Option<&str>) -> Result<Table> {
    let sha = hex_sha256(bytes);
    parse_stream(
        &mut || Ok(Box::new(bytes) as Box<dyn Read>),
        file,
        target,
        positive,
        &CsvFormat::default(),
        sha,
    )
}

/// Reads a CSV file, gzip-compressed or not (by its first bytes), without
/// holding the text in memory: one pass finds each column's type, a second
/// fills typed columns, so memory stays near the size of the columns.
pub fn read_csv(
    path: &Path,
    target: &str,
    positive: Option<&str>,
    format: &CsvFormat,
) -> Result<Table> {
    let file = path.display().to_string();
    let fail = |e: std::io::Error| Error::Io(format!("{file}: cannot read: {e}; check the path"));
    let sha = std::fs::File::open(path)
        .and_then(hex_sha256_of)
        .map_err(fail)?;
    let mut open = || -> Result<Box<dyn Read>> {
        let mut f =
            std::io::BufReader::with_capacity(1 << 20, std::fs::File::open(path).map_err(fail)?);
        let gzip = f.fill_buf().map_err(fail)?.starts_with(&[0x1f, 0x8b]);
        Ok(if gzip {
            Box::new(std::io::BufReader::with_capacity(
                1 << 20,
                MultiGzDecoder::new(f),
            ))
        } else {
            Box::new(f)
        })
    };
    parse_stream(&mut open, &file, target, positive, format, sha)
}

fn csv_reader<'a>(r: Box<dyn Read + 'a>, format: &CsvFormat) -> csv::Reader<Box<dyn Read + 'a>> {
    csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .delimiter(format.delimiter)
        .from_reader(r)
}

fn parse_stream(
    open: &mut Opener<'_>,
    file: &str,
    target: &str,
    positive: Option<&str>,
    format: &CsvFormat,
    sha256: String,
) -> Result<Table> {
    if format.decimal_comma && format.delimiter == b',' {
        return Err(Error::Data(format!(
            "{file}: decimal commas need another field delimiter, such as `;`"
        )));
    }
    // Pass 1: the header, the target, and which columns are all numbers.
    let mut rdr = csv_reader(open()?, format);
    let headers = rdr
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
        let hint = if headers.len() == 1 && format.delimiter == b',' {
            " (one column only: if the file uses `;` or tabs, set `delimiter`)"
        } else {
            ""
        };
        return Err(Error::Data(format!(
            "{file}: no column named `{target}` for the target; columns are: {}{more}{hint}; set `target` to one of them",
            shown.join(", ")
        )));
    };
    // One pass fills typed columns: a column stays numeric while every
    // field is a number or missing. A column that meets text after numbers
    // is re-read as categorical in a second pass over those columns only.
    enum Building {
        Numbers(Vec<f64>, Option<(u64, String)>),
        Codes(Vec<u32>, HashMap<String, u32>),
        Pending,
    }
    let code = |codes: &mut Vec<u32>, seen: &mut HashMap<String, u32>, field: &str| {
        if is_missing(field) {
            codes.push(MISSING_CODE);
        } else if let Some(&c) = seen.get(field) {
            codes.push(c);
        } else {
            let c = seen.len() as u32;
            seen.insert(field.to_string(), c);
            codes.push(c);
        }
    };
    let mut building: Vec<Building> = (0..headers.len())
        .map(|_| Building::Numbers(Vec::new(), None))
        .collect();
    let mut targets: Vec<String> = Vec::new();
    let mut record = csv::StringRecord::new();
    while rdr
        .read_record(&mut record)
        .map_err(|e| csv_error(file, &e))?
    {
        if record.iter().all(str::is_empty) {
            continue;
        }
        let line = record.position().map_or(0, |p| p.line());
        if is_missing(&record[target_idx]) {
            return Err(Error::Data(format!(
                "{file}:{line}: the target `{target}` is empty; give every row a label or remove the row"
            )));
        }
        targets.push(record[target_idx].to_string());
        for (c, field) in record.iter().enumerate() {
            if c == target_idx {
                continue;
            }
            let b = &mut building[c];
            match b {
                Building::Numbers(v, bad) => {
                    if is_missing(field) {
                        v.push(f64::NAN);
                    } else if let Some(x) = format.number(field) {
                        if !x.is_finite() && bad.is_none() {
                            *bad = Some((line, field.to_string()));
                        }
                        v.push(x);
                    } else if v.iter().all(|x| x.is_nan()) {
                        // Only missing values so far: categorical from here.
                        let mut codes = vec![MISSING_CODE; v.len()];
                        let mut seen = HashMap::new();
                        code(&mut codes, &mut seen, field);
                        *b = Building::Codes(codes, seen);
                    } else {
                        *b = Building::Pending;
                    }
                }
                Building::Codes(codes, seen) => code(codes, seen, field),
                Building::Pending => {}
            }
        }
    }
    if targets.is_empty() {
        return Err(Error::Data(format!(
            "{file}: no data rows after the header; add rows"
        )));
    }
    let (labels, classes) = encode_target(file, target, &targets, positive)?;
    drop(targets);
    if building.iter().any(|b| matches!(b, Building::Pending)) {
        let pending: Vec<usize> = (0..headers.len())
            .filter(|&c| matches!(building[c], Building::Pending))
            .collect();
        for &c in &pending {
            building[c] = Building::Codes(Vec::with_capacity(labels.len()), HashMap::new());
        }
        let mut rdr = csv_reader(open()?, format);
        rdr.headers().map_err(|e| csv_error(file, &e))?;
        while rdr
            .read_record(&mut record)
            .map_err(|e| csv_error(file, &e))?
        {
            if record.iter().all(str::is_empty) {
                continue;
            }
            for &c in &pending {
                if let Building::Codes(codes, seen) = &mut building[c] {
                    code(codes, seen, &record[c]);
                }
            }
        }
    }

    let mut columns = Vec::new();
    let mut warnings = Vec::new();
    for (c, (name, b)) in headers.iter().zip(building).enumerate() {
        if c == target_idx {
            continue;
        }
        let data = match b {
            Building::Numbers(v, bad) => {
                if let Some((line, field)) = bad {
                    return Err(Error::Data(format!(
                        "{file}:{line}: column `{name}` holds `{field}`, which is not a finite number; fix it, or leave the field empty to mark it missing"
                    )));
                }
                ColumnData::Numeric(v)
            }
            Building::Codes(codes, seen) => {
                // Levels sorted, as the one-hot columns are ordered by them.
                let mut levels: Vec<(String, u32)> = seen.into_iter().collect();
                levels.sort();
                let mut remap = vec![0u32; levels.len()];
                for (i, (_, old)) in levels.iter().enumerate() {
                    remap[*old as usize] = i as u32;
                }
                ColumnData::Categorical {
                    codes: codes
                        .into_iter()
                        .map(|x| {
                            if x == MISSING_CODE {
                                x
                            } else {
                                remap[x as usize]
                            }
                        })
                        .collect(),
                    levels: levels.into_iter().map(|(l, _)| l).collect(),
                }
            }
            // Cannot happen: the second pass turned every pending column
            // into codes.
            Building::Pending => continue,
        };
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
        sha256,
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
