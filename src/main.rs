//! The `candor` command line: a thin layer over the library.

use candor::data::catalog;
use candor::experiment::manifest;
use candor::experiment::runner::{self, RunOptions};
use candor::export::{Exporter, Text};
use candor::report::ReportOptions;
use candor::{calibrate, learner, metrics};
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
    /// Score predictions made elsewhere: every metric, the diagnosis, the
    /// reliability diagrams, and every calibration method cross-fitted over
    /// the rows, written as a results folder with its report.
    Score {
        /// CSV of true labels and predicted probabilities.
        predictions: PathBuf,
        #[command(flatten)]
        layout: LayoutArgs,
        /// Cross-fitting folds.
        #[arg(long, default_value_t = 5)]
        folds: usize,
        /// Seed of the fold split and the bootstrap.
        #[arg(long, default_value_t = 20261202)]
        seed: u64,
        /// Equal-width bins for ECE and the reliability diagrams.
        #[arg(long, default_value_t = 15)]
        bins: usize,
        /// Bootstrap resamples per fold for the ECE and Brier intervals.
        #[arg(long, default_value_t = 200)]
        bootstrap: usize,
        /// The model's name in the tables.
        #[arg(long, default_value = "model")]
        model: String,
        /// Results folder [default: results/score-<file name>].
        #[arg(long)]
        out: Option<PathBuf>,
        /// Print the predictions' metrics as JSON on standard output.
        #[arg(long)]
        json: bool,
        /// Fit this method on every row and save it (with --save).
        #[arg(long, requires = "save")]
        fit: Option<String>,
        /// Where --fit writes the calibration map (JSON).
        #[arg(long, requires = "fit")]
        save: Option<PathBuf>,
    },
    /// Apply a saved calibration map to predictions; writes the CSV with a
    /// `calibrated_<class>` column per class added.
    Apply {
        /// The map `candor score --fit METHOD --save FILE` wrote.
        map: PathBuf,
        /// CSV of predicted probabilities (a label column is optional).
        predictions: PathBuf,
        #[command(flatten)]
        layout: LayoutArgs,
        /// Output CSV [default: standard output].
        #[arg(long)]
        out: Option<PathBuf>,
    },
    /// Write the demo scenario's synthetic predictions (see the README).
    Demo {
        /// Rows to generate.
        #[arg(long, default_value_t = 5000)]
        rows: usize,
        #[arg(long, default_value_t = 7)]
        seed: u64,
        /// The model's predictions (late, region, p_late).
        #[arg(long, default_value = "deliveries.csv")]
        out: PathBuf,
        /// The parcels' records (region, distance_km, rain, late), for
        /// `candor data add` and training families.
        #[arg(long, default_value = "parcels.csv")]
        features: PathBuf,
    },
    /// Bundled datasets, and checking or adding an in-house CSV.
    Data {
        #[command(subcommand)]
        command: DataCommand,
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

#[derive(Subcommand)]
enum DataCommand {
    /// The bundled datasets: rows, features, classes, balance and licence.
    List {
        /// Folder holding the bundled datasets and their catalog.json.
        #[arg(long)]
        datasets: Option<PathBuf>,
    },
    /// Schema, missing values, class balance against the folds, and
    /// columns that look like identifiers or leak the target.
    Inspect {
        /// The CSV (plain or gzip-compressed).
        file: PathBuf,
        #[command(flatten)]
        csv: CsvArgs,
        /// Outer folds the data must support.
        #[arg(long, default_value_t = 5)]
        folds: usize,
        /// Inner folds the data must support.
        #[arg(long, default_value_t = 5)]
        inner_folds: usize,
    },
    /// Check a CSV and append a dataset entry for it to a manifest,
    /// keeping the manifest's comments and layout.
    Add {
        /// The CSV (plain or gzip-compressed).
        file: PathBuf,
        #[command(flatten)]
        csv: CsvArgs,
        /// The manifest to extend.
        #[arg(long)]
        to: PathBuf,
        /// The dataset's name in the manifest [default: the file name].
        #[arg(long)]
        name: Option<String>,
    },
}

/// Where the target is and how the CSV is written.
#[derive(clap::Args)]
struct CsvArgs {
    /// The target column.
    #[arg(long)]
    target: String,
    /// The positive class of a binary target.
    #[arg(long)]
    positive: Option<String>,
    /// Field delimiter: one character, or `tab`.
    #[arg(long, default_value = ",")]
    delimiter: String,
    /// Decimal mark: `.` or `,`.
    #[arg(long, default_value = ".")]
    decimal: String,
}

impl CsvArgs {
    fn format(&self) -> candor::Result<candor::data::csv::CsvFormat> {
        let delimiter = match self.delimiter.as_str() {
            "tab" | "\\t" => b'\t',
            d if d.len() == 1 => d.as_bytes()[0],
            d => {
                return Err(candor::Error::Manifest(format!(
                    "--delimiter {d}: give one character, or `tab`"
                )))
            }
        };
        let decimal_comma = match self.decimal.as_str() {
            "." => false,
            "," => true,
            d => {
                return Err(candor::Error::Manifest(format!(
                    "--decimal {d}: give `.` or `,`"
                )))
            }
        };
        Ok(candor::data::csv::CsvFormat {
            delimiter,
            decimal_comma,
        })
    }
}

/// How a predictions CSV is laid out.
#[derive(clap::Args)]
struct LayoutArgs {
    /// The true-label column.
    #[arg(long, default_value = "label")]
    label: String,
    /// A column of segments to report on separately, e.g. a region.
    #[arg(long)]
    group: Option<String>,
    /// The positive label of a binary task [default: `1` or `true`].
    #[arg(long)]
    positive: Option<String>,
    /// Probability columns, comma-separated [default: every other column].
    #[arg(long, value_delimiter = ',')]
    columns: Option<Vec<String>>,
    /// Largest allowed distance of a row's probability sum from 1.
    #[arg(long, default_value_t = 1e-3)]
    tolerance: f64,
}

impl LayoutArgs {
    fn layout(
        self,
        label_required: bool,
        path: &std::path::Path,
    ) -> candor::data::predictions::Layout {
        // `apply` takes the label column only if the file has one.
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
        candor::data::predictions::Layout {
            label: has_label.then_some(self.label),
            group: self.group,
            positive: self.positive,
            columns: self.columns,
            tolerance: self.tolerance,
        }
    }
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

fn param_value(v: &candor::common::params::ParamValue) -> String {
    match v {
        candor::common::params::ParamValue::Float(x) => format!("{x:?}"),
        candor::common::params::ParamValue::Int(i) => format!("{i}"),
    }
}

fn execute(command: Command) -> candor::Result<ExitCode> {
    let mut out = String::new();
    let code = run_command(command, &mut out);
    emit(&out);
    code
}

fn data_command(command: DataCommand, text: &mut String) -> candor::Result<ExitCode> {
    use candor::common::table::Table;
    match command {
        DataCommand::List { datasets } => {
            let cat = catalog::Catalog::locate(datasets.as_deref(), std::path::Path::new("."))?;
            let mut t = Table::new(
                "datasets",
                &format!("Bundled datasets in {}", cat.dir.display()),
                &[
                    "id",
                    "task",
                    "rows",
                    "features",
                    "classes",
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
            Ok(ExitCode::SUCCESS)
        }
        DataCommand::Inspect {
            file,
            csv,
            folds,
            inner_folds,
        } => {
            let table = candor::data::csv::read_csv(
                &file,
                &csv.target,
                csv.positive.as_deref(),
                &csv.format()?,
            )?;
            let found = candor::data::inspect::inspect(&table, folds, inner_folds);
            text.push_str(&Text.render(&found.schema));
            text.push('\n');
            text.push_str(&Text.render(&found.classes));
            text.push('\n');
            if found.warnings.is_empty() {
                text.push_str("No warnings.\n");
            }
            for w in &found.warnings {
                let _ = writeln!(text, "warning: {w}");
            }
            Ok(ExitCode::SUCCESS)
        }
        DataCommand::Add {
            file,
            csv,
            to,
            name,
        } => {
            let format = csv.format()?;
            let table =
                candor::data::csv::read_csv(&file, &csv.target, csv.positive.as_deref(), &format)?;
            let entry = candor::experiment::manifest::append_dataset(
                &to,
                &file,
                name.as_deref(),
                &csv.target,
                csv.positive.as_deref(),
                &format,
                &table,
            )?;
            let _ = writeln!(
                text,
                "added dataset `{entry}` ({} rows, {} classes) to {}; check it with `candor check {}`",
                table.rows(),
                table.n_classes(),
                to.display(),
                to.display()
            );
            Ok(ExitCode::SUCCESS)
        }
    }
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
                candor::gate::baseline::update(&loaded, &baseline)?;
                let _ = writeln!(
                    text,
                    "baseline updated: {}; review and commit the diff",
                    baseline.display()
                );
                return Ok(ExitCode::SUCCESS);
            }
            let outcome = candor::gate::check(&loaded, &baseline)?;
            if let Some(path) = junit {
                candor::common::files::write_atomic(
                    &path,
                    candor::gate::render::junit(&outcome).as_bytes(),
                )?;
            }
            if let Some(path) = markdown {
                candor::common::files::write_atomic(
                    &path,
                    candor::gate::render::markdown(&outcome).as_bytes(),
                )?;
            }
            text.push_str(&candor::gate::render::human(&outcome));
            Ok(if outcome.passed() {
                ExitCode::SUCCESS
            } else {
                ExitCode::from(1)
            })
        }
        Command::Score {
            predictions,
            layout,
            folds,
            seed,
            bins,
            bootstrap,
            model,
            out,
            json,
            fit,
            save,
        } => {
            if folds < 2 {
                return Err(candor::Error::Manifest("--folds must be at least 2".into()));
            }
            if let Some(m) = fit
                .as_deref()
                .filter(|m| candor::calibrate::find(m).is_none())
            {
                return Err(candor::Error::Manifest(format!(
                    "--fit {m}: unknown method; choose one of: {}",
                    candor::calibrate::known_methods()
                )));
            }
            let stem = predictions
                .file_stem()
                .map_or("predictions".into(), |s| s.to_string_lossy().to_string());
            let out_dir =
                out.unwrap_or_else(|| PathBuf::from("results").join(format!("score-{stem}")));
            let opts = candor::experiment::score::ScoreOptions {
                layout: layout.layout(true, &predictions),
                folds,
                seed,
                bins,
                bootstrap,
                model,
                out_dir: out_dir.clone(),
            };
            let scored = candor::experiment::score::score(&predictions, &opts)?;
            let html = candor::report::generate(&out_dir, &ReportOptions::default())?;
            if let (Some(method), Some(file)) = (fit, save) {
                candor::experiment::score::save_fit(&scored.predictions, &method, &file)?;
                eprintln!("saved the {method} map to {}", file.display());
            }
            if json {
                let v = candor::experiment::score::metrics_json(&scored.predictions, bins);
                let _ = writeln!(
                    text,
                    "{}",
                    serde_json::to_string_pretty(&v).unwrap_or_default()
                );
            } else {
                let summary =
                    candor::experiment::summary::summarise(&scored.experiment, &scored.records);
                for metric in ["ece", "brier"] {
                    if let Some(t) = summary.by_method(metric) {
                        text.push_str(&Text.render(&t));
                        text.push('\n');
                    }
                }
                let _ = writeln!(
                    text,
                    "results in {}; report: {}",
                    out_dir.display(),
                    html.display()
                );
            }
            Ok(ExitCode::SUCCESS)
        }
        Command::Apply {
            map,
            predictions,
            layout,
            out,
        } => {
            let csv = candor::experiment::score::apply(
                &map,
                &predictions,
                &layout.layout(false, &predictions),
            )?;
            match out {
                Some(path) => candor::common::files::write_atomic(&path, csv.as_bytes())?,
                None => text.push_str(&csv),
            }
            Ok(ExitCode::SUCCESS)
        }
        Command::Demo {
            rows,
            seed,
            out,
            features,
        } => {
            let demo = candor::data::demo::generate(rows, seed);
            candor::common::files::write_atomic(&out, demo.csv().as_bytes())?;
            candor::common::files::write_atomic(&features, demo.features_csv().as_bytes())?;
            let _ = writeln!(
                text,
                "{rows} parcels: the co-op model's predictions in {}, the parcels' records in {}; the model's true ECE (15 bins) is {:.4}",
                out.display(),
                features.display(),
                candor::data::demo::true_ece(15)
            );
            Ok(ExitCode::SUCCESS)
        }
        Command::Data { command } => data_command(command, text),
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
