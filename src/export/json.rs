//! JSON: `{title, notes, columns, rows}`, rows as arrays in column order,
//! undefined numbers as null.

use super::Exporter;
use crate::common::table::Table;

/// The JSON exporter.
pub struct Json;

impl Exporter for Json {
    fn extension(&self) -> &'static str {
        "json"
    }

    fn render(&self, t: &Table) -> String {
        let mut s = serde_json::to_string_pretty(t).unwrap_or_default();
        s.push('\n');
        s
    }
}
