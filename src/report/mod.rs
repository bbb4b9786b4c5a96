//! `candor report`: turns a results folder into the tables, diagnosis,
//! ranking, figures and the one-file HTML report a team reads to choose a
//! family and a calibration method. Everything is derived from
//! `records.jsonl` and `run.json`, so a report can be rebuilt at any time
//! and gives the same bytes for the same results.
//!
//! May import `common`, `metrics`, `export`, `calibrate` (for the order of
//! methods, which fixes their look in figures) and `experiment` (the
//! manifest, store records and summary it reads back); `gate` and
//! `commands` build on it.

mod choices;
mod diagnosis;
mod figures;
mod html;
mod ranking;
mod segments;
mod style;
mod tables;

pub use choices::{standings, Standing};
pub use diagnosis::{diagnose, summarise, Bias, Diagnosis, Shape};
pub use ranking::Ranking;
pub use tables::{intervals, Interval};

use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::common::table::Table;
use crate::data::source::DatasetSpec;
use crate::experiment::manifest::{Experiment, ManifestSource};
use crate::experiment::store::CellRecord;
use crate::export::TABLE_FORMATS;
use std::path::{Path, PathBuf};

/// Choices a reader can make about the report.
#[derive(Debug, Clone, Default)]
pub struct ReportOptions {
    /// The metric that decides "best" and the ranking; `None` picks one
    /// with [`deciding_metric`].
    pub metric: Option<String>,
    /// Also write PNG copies of the figures.
    pub png: bool,
}

/// The metrics preferred to decide "best" when none is named, in order:
/// proper scoring rules first, because calibration error alone rewards a
/// model that always predicts the base rate.
const PREFERRED: [&str; 2] = ["brier", "log_loss"];

/// The metric that decides "best" and the ranking, from the one asked for
/// (which must be known and among `computed`) or, when none is, the first
/// of Brier score and log loss that was computed, else the first computed
/// metric with a better direction. The second value says why, when the
/// choice was not the usual Brier score. Runs check this before any
/// training, so a bad `--metric` costs seconds, not a whole run.
pub fn deciding_metric(
    asked: Option<&str>,
    computed: &[String],
) -> Result<(&'static crate::metrics::Metric, Option<String>)> {
    let has = |m: &str| computed.iter().any(|x| x == m);
    if let Some(name) = asked {
        let Some(metric) = crate::metrics::find(name) else {
            return Err(Error::Manifest(format!(
                "--metric {name}: unknown metric; choose one of: {}",
                crate::metrics::known_metrics()
            )));
        };
        if !has(name) {
            return Err(Error::Manifest(format!(
                "--metric {name}: the manifest's `metrics` do not include it; choose one of: {}, or add it to `metrics`",
                computed.join(", ")
            )));
        }
        return Ok((metric, None));
    }
    let pick = PREFERRED
        .iter()
        .copied()
        .find(|m| has(m))
        .or_else(|| {
            computed
                .iter()
                .map(String::as_str)
                .find(|m| crate::metrics::find(m).is_some_and(|x| x.higher_is_better.is_some()))
        })
        .or_else(|| computed.first().map(String::as_str));
    let Some(metric) = pick.and_then(crate::metrics::find) else {
        return Err(Error::Manifest(
            "these results computed no metric that can decide \"best\"; list `brier` in the manifest's `metrics`".into(),
        ));
    };
    let why = (metric.name != PREFERRED[0]).then(|| {
        format!(
            "\"best\" and the ranking use {} (brier was not computed; choose another with --metric)",
            metric.name
        )
    });
    Ok((metric, why))
}

/// A finished results folder, read back.
pub struct Results {
    pub dir: PathBuf,
    pub exp: Experiment,
    /// `run.json` as written by the run.
    pub info: serde_json::Value,
    pub records: Vec<CellRecord>,
}

impl Results {
    /// Reads `run.json` and `records.jsonl` from a results folder.
    pub fn load(dir: &Path) -> Result<Results> {
        let read = |path: &Path| {
            std::fs::read_to_string(path).map_err(|e| {
                Error::Io(format!(
                    "{}: cannot read: {e}; give a results folder that `candor run` or `candor score` finished",
                    path.display()
                ))
            })
        };
        let run_path = dir.join("run.json");
        let text = read(&run_path)?;
        let info: serde_json::Value = serde_json::from_str(&text).map_err(|e| {
            Error::Io(format!(
                "{}: not a candor run.json ({e}); rerun `candor run` to rewrite it",
                run_path.display()
            ))
        })?;
        let mut exp: Experiment =
            serde_json::from_value(info["settings"].clone()).map_err(|e| {
                Error::Io(format!(
                    "{}: its `settings` cannot be read ({e}); rerun `candor run` to rewrite it",
                    run_path.display()
                ))
            })?;
        exp.source = ManifestSource {
            path: run_path.clone(),
            sha256: info["manifest_sha256"]
                .as_str()
                .unwrap_or_default()
                .to_string(),
            text: info["manifest"].as_str().unwrap_or_default().to_string(),
        };
        let rec_path = dir.join("records.jsonl");
        let lines = read(&rec_path)?;
        let mut records = Vec::new();
        for (i, line) in lines
            .lines()
            .enumerate()
            .filter(|(_, l)| !l.trim().is_empty())
        {
            let r: CellRecord = serde_json::from_str(line).map_err(|e| {
                Error::Io(format!(
                    "{}:{}: not a cell record ({e}); rerun `candor run` to rewrite it",
                    rec_path.display(),
                    i + 1
                ))
            })?;
            records.push(r);
        }
        Ok(Results {
            dir: dir.to_path_buf(),
            exp,
            info,
            records,
        })
    }

    /// The independent datasets: every dataset but the segments of another.
    /// Rankings, medians across datasets and diagnosis counts use these
    /// alone, since a segment repeats rows of its whole.
    pub fn datasets(&self) -> impl Iterator<Item = &DatasetSpec> {
        self.exp.datasets.iter().filter(|d| d.segment_of.is_none())
    }

    /// The segments of other datasets, reported in their own table.
    pub fn segments(&self) -> impl Iterator<Item = &DatasetSpec> {
        self.exp.datasets.iter().filter(|d| d.segment_of.is_some())
    }

    /// The cells of one (dataset, family), in (repeat, fold) order, so that
    /// per-fold values of two methods pair up.
    pub fn cells(&self, dataset: &str, family: &str) -> Vec<&CellRecord> {
        let mut cells: Vec<&CellRecord> = self
            .records
            .iter()
            .filter(|r| r.dataset == dataset && r.family == family)
            .collect();
        cells.sort_by_key(|r| (r.repeat, r.fold));
        cells
    }

    /// Number of classes of a dataset, from its cells.
    pub fn classes(&self, dataset: &str) -> usize {
        self.records
            .iter()
            .find(|r| r.dataset == dataset)
            .map_or(0, |r| r.n_classes)
    }
}

/// Test rows over training rows, averaged over cells, for the corrected
/// fold interval.
pub fn test_over_train(cells: &[&CellRecord]) -> f64 {
    let n = cells.len().max(1) as f64;
    cells
        .iter()
        .map(|c| c.n_test as f64 / c.n_train.max(1) as f64)
        .sum::<f64>()
        / n
}

/// Draws a figure as PNG into a file.
pub type PngWriter = Box<dyn Fn(&Path) -> Result<()>>;

/// One figure: its path under `report/`, its SVG text and a caption.
pub struct Figure {
    pub path: String,
    pub caption: String,
    pub svg: String,
    /// Draws the same figure as PNG.
    png: PngWriter,
}

/// Everything a report holds before it is written.
pub struct Report {
    pub tables: Vec<Table>,
    pub ranking: Option<Ranking>,
    pub figures: Vec<Figure>,
    pub html: String,
}

/// Builds the report for a results folder.
pub fn build(results: &Results, opts: &ReportOptions) -> Result<Report> {
    let (metric, why) = deciding_metric(opts.metric.as_deref(), &results.exp.metrics)?;
    let intervals = tables::intervals(results);
    let standings = choices::all(results, metric);
    let mut all = vec![
        tables::metric_table(results, &intervals),
        tables::family_table(results, metric, &intervals),
        {
            let mut t = tables::dataset_table(results, metric, &intervals, &standings);
            t.notes.splice(0..0, why);
            t
        },
        choices::table(results, metric, &standings),
    ];
    let diagnoses = diagnosis::table(results);
    all.push(diagnoses);
    all.extend(segments::table(results, metric));
    let ranking = ranking::rank(results, metric);
    if let Some(r) = &ranking {
        all.push(r.table());
    }
    let figures = figures::all(results, ranking.as_ref())?;
    let html = html::render(results, &all, &figures);
    Ok(Report {
        tables: all,
        ranking,
        figures,
        html,
    })
}

/// Writes a report under `<results>/report/`; every file is written
/// atomically. Returns the HTML report's path.
pub fn write(results: &Results, report: &Report, opts: &ReportOptions) -> Result<PathBuf> {
    let dir = results.dir.join("report");
    let make = |d: &Path| {
        std::fs::create_dir_all(d).map_err(|e| Error::io(d, "create the report folder", &e))
    };
    make(&dir)?;
    // Tables a report may lack (no ranking with one dataset, no segments
    // without groups): an earlier report's copies would mislead.
    for name in ["ranking", "segments"] {
        if report.tables.iter().all(|t| t.name != name) {
            for ex in TABLE_FORMATS {
                let stale = dir.join(format!("{name}.{}", ex.extension()));
                if stale.exists() {
                    std::fs::remove_file(&stale).map_err(|e| Error::io(&stale, "remove", &e))?;
                }
            }
        }
    }
    for t in &report.tables {
        for ex in TABLE_FORMATS {
            write_atomic(
                &dir.join(format!("{}.{}", t.name, ex.extension())),
                ex.render(t).as_bytes(),
            )?;
        }
    }
    for f in &report.figures {
        let path = dir.join(&f.path);
        if let Some(parent) = path.parent() {
            make(parent)?;
        }
        write_atomic(&path, f.svg.as_bytes())?;
        if opts.png {
            (f.png)(&path.with_extension("png"))?;
        }
    }
    let html = dir.join("report.html");
    write_atomic(&html, report.html.as_bytes())?;
    Ok(html)
}

/// Loads, builds and writes in one call, as `candor report` and the end of
/// `candor run` do.
pub fn generate(dir: &Path, opts: &ReportOptions) -> Result<PathBuf> {
    let results = Results::load(dir)?;
    let report = build(&results, opts)?;
    write(&results, &report, opts)
}
