//! Markdown: a heading, the notes as a list, then a pipe table with numbers
//! to four decimals.

use super::Exporter;
use crate::common::table::{short, Table};

/// The Markdown exporter.
pub struct Markdown;

fn escape(s: &str) -> String {
    s.replace('|', "\\|")
}

impl Exporter for Markdown {
    fn extension(&self) -> &'static str {
        "md"
    }

    fn render(&self, t: &Table) -> String {
        let mut out = format!("## {}\n\n", t.title);
        for n in &t.notes {
            out.push_str(&format!("- {}\n", escape(n)));
        }
        if !t.notes.is_empty() {
            out.push('\n');
        }
        out.push_str(&format!("| {} |\n", t.columns.join(" | ")));
        out.push_str(&format!("|{}\n", "---|".repeat(t.columns.len())));
        for row in &t.rows {
            let cells: Vec<String> = row.iter().map(|v| escape(&short(v))).collect();
            out.push_str(&format!("| {} |\n", cells.join(" | ")));
        }
        out
    }
}
