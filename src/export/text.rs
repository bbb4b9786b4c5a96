//! Plain text for the terminal: the title, aligned columns (text left,
//! numbers right) and the notes underneath.

use super::Exporter;
use crate::common::table::{short, Table, Value};

/// The terminal exporter.
pub struct Text;

impl Exporter for Text {
    fn extension(&self) -> &'static str {
        "txt"
    }

    fn render(&self, t: &Table) -> String {
        let cells: Vec<Vec<String>> = t
            .rows
            .iter()
            .map(|r| r.iter().map(short).collect())
            .collect();
        let widths: Vec<usize> = (0..t.columns.len())
            .map(|c| {
                cells
                    .iter()
                    .map(|r| r.get(c).map_or(0, |s| s.chars().count()))
                    .chain([t.columns[c].chars().count()])
                    .max()
                    .unwrap_or(0)
            })
            .collect();
        // Text columns align left; numbers, and number-like text such as
        // "0.0421*", align right.
        let left = |c: usize| {
            t.rows.first().is_some_and(|r| match r.get(c) {
                Some(Value::Text(s)) => s.trim_end_matches(['*', ' ']).parse::<f64>().is_err(),
                _ => false,
            })
        };
        let pad = |s: &str, c: usize| {
            let fill = " ".repeat(widths[c] - s.chars().count());
            if left(c) {
                format!("{s}{fill}")
            } else {
                format!("{fill}{s}")
            }
        };
        let mut out = format!("{}\n", t.title);
        let header: Vec<String> = t
            .columns
            .iter()
            .enumerate()
            .map(|(c, h)| pad(h, c))
            .collect();
        out.push_str(header.join("  ").trim_end());
        out.push('\n');
        for row in &cells {
            let line: Vec<String> = row.iter().enumerate().map(|(c, s)| pad(s, c)).collect();
            out.push_str(line.join("  ").trim_end());
            out.push('\n');
        }
        for n in &t.notes {
            out.push_str(&format!("  {n}\n"));
        }
        out
    }
}
