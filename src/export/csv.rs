//! CSV: a header row, then one record per row at full precision; undefined
//! numbers are empty fields. Titles and notes are left to the other formats
//! so the file loads straight into a data frame.

use super::Exporter;
use crate::common::table::{exact, Table};

/// The CSV exporter.
pub struct Csv;

impl Exporter for Csv {
    fn extension(&self) -> &'static str {
        "csv"
    }

    fn render(&self, t: &Table) -> String {
        let mut w = ::csv::WriterBuilder::new().from_writer(Vec::new());
        // Writing to memory cannot fail.
        let _ = w.write_record(&t.columns);
        for row in &t.rows {
            let _ = w.write_record(row.iter().map(exact));
        }
        String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
    }
}
