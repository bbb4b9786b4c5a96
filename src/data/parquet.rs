//! Reading Parquet: the usual format of in-house tables, so teams need not
//! convert to CSV first.
//!
//! A Parquet file is read row by row and its values written out as the
//! fields a CSV of the same table would hold (numbers in their shortest
//! round-trip form, text as is, booleans as `true`/`false`, dates and times
//! in ISO form, nulls as empty fields); the CSV reader then types the
//! columns and encodes the target exactly as for a CSV. So a table gives
//! byte-identical results in either format, and every CSV rule (numeric or
//! categorical columns, missing values, the target's checks) holds for
//! Parquet unchanged. The table's checksum is that of the Parquet file.

use super::csv::{parse_with, CsvFormat};
use super::table::Table;
use crate::common::checksum::hex_sha256_of;
use crate::common::error::{Error, Result};
use parquet::file::reader::{FileReader, SerializedFileReader};
use parquet::record::Field;
use std::path::Path;

/// The four bytes every Parquet file starts (and ends) with.
pub const MAGIC: &[u8; 4] = b"PAR1";

/// One value as a CSV field, or the name of a type candor cannot read.
fn field_text(value: &Field) -> std::result::Result<String, &'static str> {
    Ok(match value {
        Field::Null => String::new(),
        Field::Bool(v) => v.to_string(),
        Field::Byte(v) => v.to_string(),
        Field::Short(v) => v.to_string(),
        Field::Int(v) => v.to_string(),
        Field::Long(v) => v.to_string(),
        Field::UByte(v) => v.to_string(),
        Field::UShort(v) => v.to_string(),
        Field::UInt(v) => v.to_string(),
        Field::ULong(v) => v.to_string(),
        Field::Float16(v) => f32::from(*v).to_string(),
        Field::Float(v) => v.to_string(),
        Field::Double(v) => v.to_string(),
        Field::Str(v) => v.clone(),
        Field::Decimal(_)
        | Field::Date(_)
        | Field::TimeMillis(_)
        | Field::TimeMicros(_)
        | Field::TimestampMillis(_)
        | Field::TimestampMicros(_) => value.to_string(),
        Field::Bytes(_) => return Err("binary"),
        Field::Group(_) => return Err("a nested group"),
        Field::ListInternal(_) => return Err("a list"),
        Field::MapInternal(_) => return Err("a map"),
    })
}

/// Reads a Parquet file into a table, with the same checks and messages
/// as a CSV of the same table.
pub fn read_parquet(
    path: &Path,
    target: &str,
    positive: Option<&str>,
    format: &CsvFormat,
) -> Result<Table> {
    let file = path.display().to_string();
    let open = || std::fs::File::open(path).map_err(|e| Error::io(path, "read", &e));
    let sha256 = hex_sha256_of(open()?).map_err(|e| Error::io(path, "read", &e))?;
    let corrupt = |e: parquet::errors::ParquetError| {
        Error::Data(format!(
            "{file}: cannot read it as Parquet ({e}); check that the file is complete and is Parquet"
        ))
    };
    let reader = SerializedFileReader::new(open()?).map_err(corrupt)?;
    let names: Vec<String> = reader
        .metadata()
        .file_metadata()
        .schema_descr()
        .root_schema()
        .get_fields()
        .iter()
        .map(|f| f.name().to_string())
        .collect();
    let mut out = csv::Writer::from_writer(Vec::new());
    let written = |e: csv::Error| Error::Data(format!("{file}: cannot convert a row: {e}"));
    out.write_record(&names).map_err(written)?;
    for (i, row) in reader.get_row_iter(None).map_err(corrupt)?.enumerate() {
        let row = row.map_err(corrupt)?;
        let mut fields = Vec::with_capacity(names.len());
        for (name, value) in row.get_column_iter() {
            fields.push(field_text(value).map_err(|kind| {
                Error::Data(format!(
                    "{file}: column `{name}` holds {kind} values (row {}), which candor cannot read; store it as numbers, text or booleans, or leave it out of the file",
                    i + 1
                ))
            })?);
        }
        out.write_record(&fields).map_err(written)?;
    }
    let text = out
        .into_inner()
        .map_err(|e| Error::Data(format!("{file}: cannot convert it: {e}")))?;
    let csv_format = CsvFormat {
        delimiter: b',',
        decimal_comma: false,
        spelling: format.spelling,
    };
    let mut table = parse_with(&text, &file, target, positive, &csv_format)?;
    table.sha256 = sha256;
    Ok(table)
}
