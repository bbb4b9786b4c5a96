//! Reading CSV: a header row into typed columns and a class-index target.
//!
//! Columns whose every non-missing field is a number are numeric; any other
//! column is categorical. An empty field (or `NA`) is missing. Nothing is
//! imputed or encoded here: that depends on the training split and happens
//! in [`super::preprocess`].

use super::table::{Column, ColumnData, Table, MISSING_CODE};
use super::target::encode_target;
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
    /// How the user gave the settings, so errors name what they typed.
    /// Not part of the format: it never changes what is read.
    #[serde(skip)]
    pub spelling: Spelling,
}

/// Where the reading settings came from: a manifest's dataset keys or a
/// command's flags. Errors name the key (`positive`) to a manifest's author
/// and the flag (`--positive`) to someone at the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Spelling {
    #[default]
    Manifest,
    Flags,
}

impl Spelling {
    /// The setting `key` as the user writes it.
    pub fn key(self, key: &str) -> String {
        match self {
            Spelling::Manifest => format!("`{key}`"),
            Spelling::Flags => format!("--{key}"),
        }
    }
}

impl Default for CsvFormat {
    fn default() -> Self {
        CsvFormat {
            delimiter: b',',
            decimal_comma: false,
            spelling: Spelling::Manifest,
        }
    }
}

impl CsvFormat {
    /// True for the default format, so manifests that never set it keep
    /// their recorded settings and fingerprints.
    pub fn is_default(&self) -> bool {
        !self.decimal_comma && self.delimiter == b','
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
    parse_with(bytes, file, target, positive, &CsvFormat::default())
}

/// Parses CSV bytes in a given format; `file` is used in messages only.
pub fn parse_with(
    bytes: &[u8],
    file: &str,
    target: &str,
    positive: Option<&str>,
    format: &CsvFormat,
) -> Result<Table> {
    let sha = hex_sha256(bytes);
    parse_stream(
        &mut || Ok(Box::new(bytes) as Box<dyn Read>),
        file,
        target,
        positive,
        format,
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
    let mut rdr = csv_reader(open()?, format);
    let headers = read_header(&mut rdr, file)?;
    let target_idx = find_target(&headers, file, target, format)?;
    let (mut building, targets) =
        first_pass(&mut rdr, file, target, target_idx, headers.len(), format)?;
    let (labels, classes) = encode_target(file, target, &targets, positive, format.spelling)?;
    drop(targets);
    second_pass(open, file, format, &mut building, labels.len())?;
    let (columns, warnings) = finish_columns(file, &headers, building, target_idx)?;
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
        levels: Default::default(),
        groups: None,
        order: None,
    })
}

/// The column names, which must exist and be unique.
fn read_header(rdr: &mut csv::Reader<Box<dyn Read + '_>>, file: &str) -> Result<Vec<String>> {
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
    Ok(headers)
}

/// The target's position, or an error listing the columns there are.
fn find_target(headers: &[String], file: &str, target: &str, format: &CsvFormat) -> Result<usize> {
    if let Some(i) = headers.iter().position(|h| h == target) {
        return Ok(i);
    }
    let shown: Vec<&str> = headers.iter().take(20).map(String::as_str).collect();
    let more = if headers.len() > 20 { ", ..." } else { "" };
    let hint = if headers.len() == 1 && format.delimiter == b',' {
        format!(
            " (one column only: if the file uses `;` or tabs, set {})",
            format.spelling.key("delimiter")
        )
    } else {
        String::new()
    };
    Err(Error::Data(format!(
        "{file}: no column named `{target}` for the target; columns are: {}{more}{hint}; set {} to one of them",
        shown.join(", "),
        format.spelling.key("target")
    )))
}

/// A column while it is read. It stays numeric while every field is a
/// number or missing; a column that meets text after numbers is `Pending`
/// and re-read as categorical in a second pass over those columns only.
enum Building {
    /// The values, and the first non-finite one with its line.
    Numbers(Vec<f64>, Option<(u64, String)>),
    /// Level codes in order of first appearance, and the levels seen.
    Codes(Vec<u32>, HashMap<String, u32>),
    Pending,
}

impl Building {
    fn push(&mut self, field: &str, line: u64, format: &CsvFormat) {
        match self {
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
                    push_code(&mut codes, &mut seen, field);
                    *self = Building::Codes(codes, seen);
                } else {
                    *self = Building::Pending;
                }
            }
            Building::Codes(codes, seen) => push_code(codes, seen, field),
            Building::Pending => {}
        }
    }
}

fn push_code(codes: &mut Vec<u32>, seen: &mut HashMap<String, u32>, field: &str) {
    if is_missing(field) {
        codes.push(MISSING_CODE);
    } else if let Some(&c) = seen.get(field) {
        codes.push(c);
    } else {
        let c = seen.len() as u32;
        seen.insert(field.to_string(), c);
        codes.push(c);
    }
}

/// Reads every row once: the target's labels and each other column's
/// values (the target's slot stays an empty, unused column).
fn first_pass(
    rdr: &mut csv::Reader<Box<dyn Read + '_>>,
    file: &str,
    target: &str,
    target_idx: usize,
    n_columns: usize,
    format: &CsvFormat,
) -> Result<(Vec<Building>, Vec<String>)> {
    let mut building: Vec<Building> = (0..n_columns)
        .map(|_| Building::Numbers(Vec::new(), None))
        .collect();
    let mut targets: Vec<String> = Vec::new();
    for_each_row(rdr, file, |record| {
        let line = record.position().map_or(0, |p| p.line());
        if is_missing(&record[target_idx]) {
            return Err(Error::Data(format!(
                "{file}:{line}: the target `{target}` is empty; give every row a label or remove the row"
            )));
        }
        targets.push(record[target_idx].to_string());
        for (c, field) in record.iter().enumerate() {
            if c != target_idx {
                building[c].push(field, line, format);
            }
        }
        Ok(())
    })?;
    if targets.is_empty() {
        return Err(Error::Data(format!(
            "{file}: no data rows after the header; add rows"
        )));
    }
    Ok((building, targets))
}

/// Re-reads the file for the pending columns only, as categorical.
fn second_pass(
    open: &mut Opener<'_>,
    file: &str,
    format: &CsvFormat,
    building: &mut [Building],
    rows: usize,
) -> Result<()> {
    let pending: Vec<usize> = (0..building.len())
        .filter(|&c| matches!(building[c], Building::Pending))
        .collect();
    if pending.is_empty() {
        return Ok(());
    }
    for &c in &pending {
        building[c] = Building::Codes(Vec::with_capacity(rows), HashMap::new());
    }
    let mut rdr = csv_reader(open()?, format);
    rdr.headers().map_err(|e| csv_error(file, &e))?;
    for_each_row(&mut rdr, file, |record| {
        for &c in &pending {
            if let Building::Codes(codes, seen) = &mut building[c] {
                push_code(codes, seen, &record[c]);
            }
        }
        Ok(())
    })
}

/// Calls `each` on every data row, skipping blank lines, with one record
/// buffer reused for the whole file.
fn for_each_row(
    rdr: &mut csv::Reader<Box<dyn Read + '_>>,
    file: &str,
    mut each: impl FnMut(&csv::StringRecord) -> Result<()>,
) -> Result<()> {
    let mut record = csv::StringRecord::new();
    while rdr
        .read_record(&mut record)
        .map_err(|e| csv_error(file, &e))?
    {
        if !record.iter().all(str::is_empty) {
            each(&record)?;
        }
    }
    Ok(())
}

/// The finished feature columns, with a note for each one dropped as
/// uninformative.
fn finish_columns(
    file: &str,
    headers: &[String],
    building: Vec<Building>,
    target_idx: usize,
) -> Result<(Vec<Column>, Vec<String>)> {
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
            Building::Codes(codes, seen) => categorical(codes, seen),
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
    Ok((columns, warnings))
}

/// A categorical column with its levels sorted, as the one-hot columns are
/// ordered by them.
fn categorical(codes: Vec<u32>, seen: HashMap<String, u32>) -> ColumnData {
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
