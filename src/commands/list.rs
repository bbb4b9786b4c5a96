//! `candor list`: what a manifest can name, straight from the registries,
//! so the list can never drift from what the code accepts.

use super::{Output, Status};
use crate::common::error::Result;
use crate::common::params::ParamValue;
use crate::data::catalog::Catalog;
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
    /// Bundled datasets.
    Datasets,
}

/// The arguments of `candor list`.
#[derive(Debug, Clone, clap::Args)]
pub struct ListArgs {
    #[arg(value_enum)]
    pub what: ListWhat,
    /// Folder holding the bundled datasets (for `list datasets`).
    #[arg(long)]
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
                let _ = writeln!(text, "{:kw$}  {}", f.kind, f.about);
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
        ListWhat::Datasets => {
            let cat = Catalog::locate(args.datasets.as_deref(), Path::new("."))?;
            for e in &cat.entries {
                let positive = e
                    .positive
                    .as_deref()
                    .map(|p| format!(", positive `{p}`"))
                    .unwrap_or_default();
                let _ = writeln!(
                    text,
                    "{:34} {:10} {:>6} rows{positive}  {}",
                    e.id, e.task, e.rows, e.name
                );
            }
        }
    }
    Ok(Status::Success)
}

/// A default as a manifest would spell it (floats keep their point).
fn param_value(v: &ParamValue) -> String {
    match v {
        ParamValue::Float(x) => format!("{x:?}"),
        ParamValue::Int(i) => format!("{i}"),
    }
}
