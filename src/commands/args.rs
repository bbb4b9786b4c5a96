//! Argument groups that more than one command shares: how a dataset CSV is
//! written, and how a predictions CSV is laid out.
//!
//! The same words mean the same things in every command: `--target` is the
//! column of true classes, `--positive` the positive class, `--outer-folds`
//! and `--inner-folds` the manifest's `[evaluation]` fold counts, and
//! `--out` always a folder. Defaults come from [`crate::common::defaults`].

use crate::common::error::{Error, Result};
use crate::data::csv::{CsvFormat, Spelling};
use crate::data::predictions::{Layout, ScoreScale};

/// Where the target is and how the CSV is written.
#[derive(Debug, Clone, clap::Args)]
pub struct CsvArgs {
    /// The column of true classes.
    #[arg(short, long, alias = "label")]
    pub target: String,
    /// The positive class of a binary target.
    #[arg(short, long)]
    pub positive: Option<String>,
    /// Field delimiter: one character, or `tab`.
    #[arg(long, default_value = ",")]
    pub delimiter: String,
    /// Decimal mark: `.` or `,`.
    #[arg(long, default_value = ".")]
    pub decimal: String,
}

impl CsvArgs {
    /// The reader's format, or an error naming the option to fix. Errors
    /// about the data then name these options, not manifest keys.
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
            spelling: Spelling::Flags,
        })
    }
}

/// How a predictions CSV is laid out.
#[derive(Debug, Clone, clap::Args)]
pub struct LayoutArgs {
    /// The column of true classes (optional for `apply`).
    #[arg(short, long, alias = "label")]
    pub target: Option<String>,
    /// A column of segments, e.g. a region: `score` also reports on each
    /// segment separately, and `apply` keeps the column as it is.
    #[arg(short, long)]
    pub group: Option<String>,
    /// The positive class of a binary task [default: `1` or `true`].
    #[arg(short, long)]
    pub positive: Option<String>,
    /// Probability columns, comma-separated [default: every other column].
    #[arg(long, value_delimiter = ',')]
    pub columns: Option<Vec<String>>,
    /// Largest allowed distance of a row's probability sum from 1.
    #[arg(long, default_value_t = 1e-3)]
    pub tolerance: f64,
    /// What the columns hold: `probability`, `log-odds` (logits for
    /// several columns) or `margin` (unbounded scores, such as an SVM's,
    /// with no probability meaning). Calibrators use log-odds and margins
    /// as the native score.
    #[arg(long, default_value = "probability", value_name = "KIND", value_parser = score_scale)]
    pub scores: ScoreScale,
}

fn score_scale(name: &str) -> std::result::Result<ScoreScale, String> {
    ScoreScale::from_name(name).ok_or_else(|| {
        let names: Vec<&str> = ScoreScale::ALL.iter().map(|s| s.name()).collect();
        format!("choose one of: {}", names.join(", "))
    })
}

impl LayoutArgs {
    /// The layout to read predictions with.
    pub fn layout(self) -> Layout {
        Layout {
            label: self.target,
            group: self.group,
            positive: self.positive,
            columns: self.columns,
            tolerance: self.tolerance,
            scores: self.scores,
        }
    }
}
