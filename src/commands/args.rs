//! Argument groups that more than one command shares: how a dataset CSV is
//! written, and how a predictions CSV is laid out.

use crate::common::error::{Error, Result};
use crate::data::csv::CsvFormat;
use crate::data::predictions::Layout;
use std::path::Path;

/// Where the target is and how the CSV is written.
#[derive(Debug, Clone, clap::Args)]
pub struct CsvArgs {
    /// The target column.
    #[arg(long)]
    pub target: String,
    /// The positive class of a binary target.
    #[arg(long)]
    pub positive: Option<String>,
    /// Field delimiter: one character, or `tab`.
    #[arg(long, default_value = ",")]
    pub delimiter: String,
    /// Decimal mark: `.` or `,`.
    #[arg(long, default_value = ".")]
    pub decimal: String,
}

impl CsvArgs {
    /// The reader's format, or an error naming the option to fix.
    pub fn format(&self) -> Result<CsvFormat> {
        let delimiter = match self.delimiter.as_str() {
            "tab" | "\\t" => b'\t',
            d if d.len() == 1 => d.as_bytes()[0],
            d => {
                return Err(Error::Manifest(format!(
                    "--delimiter {d}: give one character, or `tab`"
                )))
            }
        };
        let decimal_comma = match self.decimal.as_str() {
            "." => false,
            "," => true,
            d => return Err(Error::Manifest(format!("--decimal {d}: give `.` or `,`"))),
        };
        Ok(CsvFormat {
            delimiter,
            decimal_comma,
        })
    }
}

/// How a predictions CSV is laid out.
#[derive(Debug, Clone, clap::Args)]
pub struct LayoutArgs {
    /// The true-label column.
    #[arg(long, default_value = "label")]
    pub label: String,
    /// A column of segments, e.g. a region; `score` also reports on each
    /// segment separately.
    #[arg(long)]
    pub group: Option<String>,
    /// The positive label of a binary task [default: `1` or `true`].
    #[arg(long)]
    pub positive: Option<String>,
    /// Probability columns, comma-separated [default: every other column].
    #[arg(long, value_delimiter = ',')]
    pub columns: Option<Vec<String>>,
    /// Largest allowed distance of a row's probability sum from 1.
    #[arg(long, default_value_t = 1e-3)]
    pub tolerance: f64,
}

impl LayoutArgs {
    /// The layout of `path`. With `label_required` false (as for `apply`),
    /// the label column is taken only if the file's header has one.
    pub fn layout(self, label_required: bool, path: &Path) -> Layout {
        let has_label = label_required
            || std::fs::File::open(path)
                .ok()
                .and_then(|f| {
                    // The header line only; the file may be large.
                    let mut header = String::new();
                    std::io::BufRead::read_line(&mut std::io::BufReader::new(f), &mut header)
                        .ok()?;
                    Some(header.split(',').any(|c| c.trim() == self.label))
                })
                .unwrap_or(false);
        Layout {
            label: has_label.then_some(self.label),
            group: self.group,
            positive: self.positive,
            columns: self.columns,
            tolerance: self.tolerance,
        }
    }
}
