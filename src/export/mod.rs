//! Exporters: each renders a [`Table`] in one format, one module per format.
//!
//! May import only `common`, where the table lives, so any stage can render.

mod csv;
mod json;
mod markdown;
mod text;

pub use self::csv::Csv;
pub use self::json::Json;
pub use self::markdown::Markdown;
pub use self::text::Text;

use crate::common::table::Table;

/// Renders a table in one format.
pub trait Exporter {
    /// The file extension, without the dot.
    fn extension(&self) -> &'static str;
    fn render(&self, table: &Table) -> String;
}

/// Escapes text for XML and HTML content and attribute values.
pub fn escape_xml(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// The formats every report table is written in.
pub const TABLE_FORMATS: &[&dyn Exporter] = &[&Markdown, &Csv, &Json];
