//! `candor gate`: the CI check of a results folder against a baseline.

use super::{Output, Status};
use crate::common::error::Result;
use crate::common::files::write_atomic;
use crate::gate::{self, baseline, render};
use crate::report::Results;
use std::fmt::Write as _;
use std::path::PathBuf;

/// The arguments of `candor gate`.
#[derive(Debug, Clone, clap::Args)]
pub struct GateArgs {
    /// The results folder `candor run` wrote.
    pub results: PathBuf,
    /// The baseline file (TOML) with the rules and accepted values.
    #[arg(short, long, value_name = "FILE")]
    pub baseline: PathBuf,
    /// Write the current values into the baseline instead of checking.
    #[arg(long)]
    pub update: bool,
    /// Also write JUnit XML here, one test case per rule.
    #[arg(long, value_name = "FILE")]
    pub junit: Option<PathBuf>,
    /// Also write a Markdown summary here (for a CI job summary).
    #[arg(long, value_name = "FILE")]
    pub markdown: Option<PathBuf>,
}

/// Checks the rules, or with `--update` accepts the current values.
/// A broken rule is [`Status::Regression`]; an error is the caller's to
/// map (the binary exits 2 on one, so CI can tell it from a regression).
pub fn execute(args: GateArgs, out: &mut Output) -> Result<Status> {
    let loaded = Results::load(&args.results)?;
    if args.update {
        baseline::update(&loaded, &args.baseline)?;
        let _ = writeln!(
            out.text,
            "baseline updated: {}; review and commit the diff",
            args.baseline.display()
        );
        return Ok(Status::Success);
    }
    let outcome = gate::check(&loaded, &args.baseline)?;
    if let Some(path) = args.junit {
        write_atomic(&path, render::junit(&outcome).as_bytes())?;
    }
    if let Some(path) = args.markdown {
        write_atomic(&path, render::markdown(&outcome).as_bytes())?;
    }
    out.text.push_str(&render::human(&outcome));
    Ok(if outcome.passed() {
        Status::Success
    } else {
        Status::Regression
    })
}
