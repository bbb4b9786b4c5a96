//! The `candor` command line: a thin layer over the library.

use candor::export::{Exporter, Text};
use candor::report::ReportOptions;
use candor::runner::{self, RunOptions};
use candor::{calibrate, catalog, learner, manifest, metrics};
use clap::{Parser, Subcommand, ValueEnum};
use std::fmt::Write as _;
use std::io::{IsTerminal, Write as _};
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "candor",
    version,
    about = "Compare model families and post-hoc calibration methods with cross-fitted calibration folds"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Train, calibrate and evaluate everything a manifest lists, then print
    /// calibration error before and after each method.
    Run {
        /// The experiment manifest (TOML).
        manifest: PathBuf,
        /// Results folder [default: results/<experiment name>].
        #[arg(long)]
        out: Option<PathBuf>,
        /// Worker threads; 0 uses every core. Results do not depend on it.
        #[arg(long, default_value_t = 0)]
        threads: usize,
        /// Folder holding the bundled datasets and their catalog.json.
        #[arg(long)]
        datasets: Option<PathBuf>,
        /// No progress bar and no table; errors only.
        #[arg(long, short)]
        quiet: bool,
        /// Metric that decides "best" and the ranking in the report.
        #[arg(long, default_value = "brier")]
        metric: String,
        /// Also write PNG copies of the report's figures.
        #[arg(long)]
        png: bool,
    },
    /// Write the tables, diagnosis, ranking, figures and HTML report of a
    /// finished results folder into its `report/` folder.
    Report {
        /// The results folder `candor run` wrote.
        results: PathBuf,
        /// Metric that decides "best" and the ranking.
        #[arg(long, default_value = "brier")]
        metric: String,
        /// Also write PNG copies of the figures.
        #[arg(long)]
        png: bool,
    },
    /// Check a results folder against a baseline's rules: exit 0 when every
    /// rule holds, 1 on a regression, 2 on a usage or input error.
    Gate {
        /// The results folder `candor run` wrote.
        results: PathBuf,
        /// The baseline file (TOML) with the rules and accepted values.
        #[arg(long)]
        baseline: PathBuf,
        /// Write the current values into the baseline instead of checking.
        #[arg(long)]
        update: bool,
        /// Also write JUnit XML here, one test case per rule.
        #[arg(long)]
        junit: Option<PathBuf>,
        /// Also write a Markdown summary here (for a CI job summary).
        #[arg(long)]
        markdown: Option<PathBuf>,
    },
    /// Check a manifest and its datasets without training anything.
    Check {
        /// The experiment manifest (TOML).
        manifest: PathBuf,
        /// Folder holding the bundled datasets and their catalog.json.
        #[arg(long)]
        datasets: Option<PathBuf>,
    },
    /// List what a manifest can name.
    List {
        #[arg(value_enum)]
        what: ListWhat,
        /// Folder holding the bundled datasets (for `list datasets`).
        #[arg(long)]
        datasets: Option<PathBuf>,
    },
}

#[derive(Clone, Copy, ValueEnum)]
enum ListWhat {
    /// Model family kinds and their parameters.
    Families,
    /// Calibration methods.
    Methods,
    /// Metrics.
    Metrics,
    /// Bundled datasets.
    Datasets,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    if let Command::Gate { .. } = cli.command {
        // The gate's contract: 2 for usage and input errors (clap already
        // exits with 2 on bad arguments).
        return match execute(cli.command) {
            Ok(code) => code,
            Err(e) => {
                eprintln!("error: {e}");
                ExitCode::from(2)
            }
        };
    }
    match execute(cli.command) {
        Ok(code) => code,
        Err(e) => {
            eprintln!("error: {e}");
            ExitCode::FAILURE
        }
    }
}

/// Writes to standard output; a closed pipe (as with `| head`) ends the
/// program quietly instead of panicking.
fn emit(text: &str) {
    let mut stdout = std::io::stdout().lock();
    if let Err(e) = stdout
        .write_all(text.as_bytes())
        .and_then(|()| stdout.flush())
    {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            std::process::exit(0);
        }
        eprintln!("error: cannot write to standard output: {e}");
        std::process::exit(1);
    }
}

fn param_value(v: &candor::params::ParamValue) -> String {
    match v {
        candor::params::ParamValue::Float(x) => format!("{x:?}"),
        candor::params::ParamValue::Int(i) => format!("{i}"),
    }
}

fn execute(command: Command) -> candor::Result<ExitCode> {
    let mut out = String::new();
    let code = run_command(command, &mut out);
    emit(&out);
    code
}

fn run_command(command: Command, text: &mut String) -> candor::Result<ExitCode> {
    match command {
        Command::Run {
            manifest: path,
            out,
            threads,
            datasets,
            quiet,
            metric,
            png,
        } => {
            let exp = manifest::load(&path)?;
            let out_dir = out.unwrap_or_else(|| PathBuf::from("results").join(&exp.name));
            let options = RunOptions {
                out_dir: out_dir.clone(),
                threads,
                datasets_dir: datasets,
                progress: !quiet && std::io::stderr().is_terminal(),
            };
            let report = runner::run(&exp, &options)?;
            for w in &report.warnings {
                eprintln!("note: {w}");
            }
            if report.fallbacks > 0 {
                eprintln!(
                    "note: {} method result(s) took a documented fallback (a single class or equal scores in a calibration fold, separated scores); see \"warnings\" in {}/records.jsonl",
                    report.fallbacks,
                    out_dir.display()
                );
            }
            if !quiet {
                let shown: Vec<String> = ["ece", "brier"]
                    .iter()
                    .filter(|m| exp.metrics.iter().any(|x| x == *m))
                    .map(|m| m.to_string())
                    .collect();
                let shown = if shown.is_empty() {
                    exp.metrics.iter().take(2).cloned().collect()
                } else {
                    shown
                };
                for metric in &shown {
                    if let Some(t) = report.summary.by_method(metric) {
                        text.push_str(&Text.render(&t));
                        text.push('\n');
                    }
                }
                let _ = writeln!(
                    text,
                    "{} cells computed, {} reused; results in {}",
                    report.computed,
                    report.reused,
                    out_dir.display()
                );
            }
            let html = candor::report::generate(&out_dir, &ReportOptions { metric, png })?;
            if !quiet {
                let _ = writeln!(text, "report: {}", html.display());
            }
            if report.failures.is_empty() {
                Ok(ExitCode::SUCCESS)
            } else {
                for f in &report.failures {
                    eprintln!("failed: {f}");
                }
                eprintln!("error: {} cell(s) or method(s) failed; their errors are in {}/records.jsonl, the other results are complete",
                    report.failures.len(),
                    out_dir.display()
                );
                Ok(ExitCode::from(3))
            }
        }
        Command::Report {
            results,
            metric,
            png,
        } => {
            let html = candor::report::generate(&results, &ReportOptions { metric, png })?;
            let _ = writeln!(text, "report: {}", html.display());
            Ok(ExitCode::SUCCESS)
        }
        Command::Gate {
            results,
            baseline,
            update,
            junit,
            markdown,
        } => {
            let loaded = candor::report::Results::load(&results)?;
            if update {
                candor::gate::update(&loaded, &baseline)?;
                let _ = writeln!(
                    text,
                    "baseline updated: {}; review and commit the diff",
                    baseline.display()
                );
                return Ok(ExitCode::SUCCESS);
            }
            let outcome = candor::gate::check(&loaded, &baseline)?;
            if let Some(path) = junit {
                candor::store::write_atomic(&path, candor::gate::junit(&outcome).as_bytes())?;
            }
            if let Some(path) = markdown {
                candor::store::write_atomic(&path, candor::gate::markdown(&outcome).as_bytes())?;
            }
            text.push_str(&candor::gate::human(&outcome));
            Ok(if outcome.passed() {
                ExitCode::SUCCESS
            } else {
                ExitCode::from(1)
            })
        }
        Command::Check {
            manifest: path,
            datasets,
        } => {
            let exp = manifest::load(&path)?;
            let tables = runner::load_datasets(&exp, datasets.as_deref())?;
            for t in &tables {
                for w in &t.warnings {
                    eprintln!("note: {w}");
                }
                let counts: Vec<String> = t
                    .classes
                    .iter()
                    .zip(t.class_counts())
                    .map(|(c, n)| format!("{c}: {n}"))
                    .collect();
                let _ = writeln!(
                    text,
                    "{}: {} rows, {} feature columns, classes {{{}}}",
                    t.name,
                    t.rows(),
                    t.columns.len(),
                    counts.join(", ")
                );
            }
            let e = exp.evaluation;
            let _ = writeln!(
                text,
                "{}: ok; {} datasets x {} families x {} repeats x {} folds = {} cells, methods: {}",
                path.display(),
                exp.datasets.len(),
                exp.families.len(),
                e.repeats,
                e.outer_folds,
                exp.datasets.len() * exp.families.len() * e.repeats * e.outer_folds,
                exp.methods.join(", ")
            );
            Ok(ExitCode::SUCCESS)
        }
        Command::List { what, datasets } => {
            match what {
                ListWhat::Families => {
                    for f in learner::FAMILIES {
                        let _ = writeln!(text, "{:12} {}", f.kind, f.about);
                        for p in f.params {
                            let _ = writeln!(
                                text,
                                "    {:14} default {}: {}",
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
                    let cat =
                        catalog::Catalog::locate(datasets.as_deref(), std::path::Path::new("."))?;
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
            Ok(ExitCode::SUCCESS)
        }
    }
}
