//! `candor report`: rewrites the report of a finished results folder, for
//! example with another ranking metric.

use super::{Output, Status};
use crate::common::error::Result;
use crate::report::{self, ReportOptions};
use std::fmt::Write as _;
use std::path::PathBuf;

/// The arguments of `candor report`.
#[derive(Debug, Clone, clap::Args)]
pub struct ReportArgs {
    /// The results folder `candor run` wrote.
    pub results: PathBuf,
    /// Metric that decides "best" and the ranking
    /// [default: brier, else log_loss, else the first computed].
    #[arg(short, long)]
    pub metric: Option<String>,
    /// Also write PNG copies of the figures.
    #[arg(long)]
    pub png: bool,
}

/// Writes the report and names its HTML page.
pub fn execute(args: ReportArgs, out: &mut Output) -> Result<Status> {
    let html = report::generate(
        &args.results,
        &ReportOptions {
            metric: args.metric,
            png: args.png,
        },
    )?;
    let _ = writeln!(out.text, "report: {}", html.display());
    Ok(Status::Success)
}
