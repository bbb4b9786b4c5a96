//! Exporters: each renders the summary table in one format.

mod csv;
mod text;

pub use self::csv::Csv;
pub use self::text::Text;

use crate::summary::Summary;

/// Renders a summary table as text in one format.
pub trait Exporter {
    fn render(&self, summary: &Summary) -> String;
}
