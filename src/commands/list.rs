//! `candor list`: what a manifest can name, straight from the registries,
//! so the list can never drift from what the code accepts.

use super::{Output, Status};
use crate::common::error::Result;
use crate::common::params::ParamValue;
use crate::common::table::Table;
use crate::data::catalog::Catalog;
use crate::export::{Exporter, Text};
use crate::{calibrate, learner, metrics};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// What `candor list` lists.
#[derive(Debug, Clone, Copy, clap::ValueEnum)]
pub enum ListWhat {
    /// Model family kinds and their parameters.
    Families,
    /// Calibration methods.
    Methods,
    /// Metrics.
    Metrics,
    /// Bundled datasets: rows, features, classes, balance and licences.
    Datasets,
}

/// The arguments of `candor list`.
#[derive(Debug, Clone, clap::Args)]
pub struct ListArgs {
    #[arg(value_enum)]
    pub what: ListWhat,
    /// Folder holding the bundled datasets (for `list datasets`).
    #[arg(long, value_name = "DIR")]
    pub datasets: Option<PathBuf>,
}

/// Writes one line per entry (and per parameter, for families).
pub fn execute(args: ListArgs, out: &mut Output) -> Result<Status> {
    let text = &mut out.text;
    match args.what {
        ListWhat::Families => {
            // Columns as wide as the longest kind and parameter name.
            let kw = learner::FAMILIES
                .iter()
                .map(|f| f.kind.len())
                .max()
                .unwrap_or(0);
            let pw = learner::FAMILIES
                .iter()
                .flat_map(|f| f.params)
                .map(|p| p.name.len())
                .max()
                .unwrap_or(0);
            for f in learner::FAMILIES {
                let growth = if f.cost.is_superlinear() {
                    "; time grows with the square of the rows"
                } else {
                    ""
                };
                let _ = writeln!(text, "{:kw$}  {}{growth}", f.kind, f.about);
                for p in f.params {
                    let _ = writeln!(
                        text,
                        "    {:pw$}  default {}: {}",
                        p.name,
                        param_value(&p.default),
                        p.about
                    );
                }
            }
        }
        ListWhat::Methods => {
            for m in calibrate::METHODS {
                let _ = writeln!(text, "{:12} {}", m.name, m.about);
            }
        }
        ListWhat::Metrics => {
            for m in metrics::METRICS {
                let _ = writeln!(text, "{:12} {}", m.name, m.about);
            }
        }
        ListWhat::Datasets => datasets(args.datasets.as_deref(), text)?,
    }
    Ok(Status::Success)
}

/// The catalog as a table, with licences in their short forms.
fn datasets(dir: Option<&Path>, text: &mut String) -> Result<()> {
    let cat = Catalog::locate(dir, Path::new("."))?;
    let mut t = Table::new(
        "datasets",
        &format!("Bundled datasets in {}", cat.dir.display()),
        &[
            "id",
            "task",
            "rows",
            "features",
            "classes",
            "positive",
            "rarest class",
            "data licence",
            "package licence",
        ],
    );
    for e in &cat.entries {
        // "package: X (pkg); data: Y (notes)" -> the short forms.
        let part = |key: &str| -> String {
            e.license
                .split(';')
                .find_map(|p| p.trim().strip_prefix(key))
                .map(|v| v.split(" (").next().unwrap_or_default().trim().to_string())
                .unwrap_or_else(|| "see PROVENANCE.md".into())
        };
        t.rows.push(vec![
            e.id.as_str().into(),
            e.task.as_str().into(),
            e.rows.into(),
            e.n_features.into(),
            e.n_classes.into(),
            e.positive.as_deref().unwrap_or("-").into(),
            format!("{:.1}%", e.minority_share * 100.0).into(),
            part("data:").into(),
            part("package:").into(),
        ]);
    }
    t.notes.push(format!(
        "Full licences and provenance: {}/PROVENANCE.md",
        cat.dir.display()
    ));
    text.push_str(&Text.render(&t));
    Ok(())
}

/// A default as a manifest would spell it (floats keep their point).
fn param_value(v: &ParamValue) -> String {
    match v {
        ParamValue::Float(x) => format!("{x:?}"),
        ParamValue::Int(i) => format!("{i}"),
        ParamValue::Choice(c) => format!("\"{c}\""),
    }
}
