//! Running an experiment: every (dataset, family, repeat, fold) cell in
//! parallel, each seeded by its identity alone, each record saved the moment
//! it is done, and the tables written once all cells are in.

use crate::calibrate::{self, Calibrator};
use crate::common::error::{Error, Result};
use crate::common::files::write_atomic;
use crate::common::rng::derive_seed;
use crate::data::catalog::Catalog;
use crate::data::folds;
use crate::data::source::{self, DataSource};
use crate::data::table::Table;
use crate::experiment::manifest::{check_class_counts, Experiment};
use crate::experiment::protocol::{run_cell, CellPlan};
use crate::experiment::store::{CellRecord, Store};
use crate::experiment::summary::{summarise, Summary};
use crate::export::{Csv, Exporter};
use crate::learner::{self, Learner};
use crate::metrics::{self, Metric, MetricOptions};
use indicatif::{ProgressBar, ProgressStyle};
use rayon::prelude::*;
use serde::Serialize;
use std::path::{Path, PathBuf};

/// How to run.
#[derive(Debug, Clone)]
pub struct RunOptions {
    /// The results folder.
    pub out_dir: PathBuf,
    /// Worker threads; 0 uses every core. Results do not depend on it.
    pub threads: usize,
    /// The bundled datasets folder, if not found next to the manifest.
    pub datasets_dir: Option<PathBuf>,
    /// Show a progress bar on the terminal.
    pub progress: bool,
}

/// What a run did.
#[derive(Debug)]
pub struct RunReport {
    pub summary: Summary,
    /// Cells computed in this run.
    pub computed: usize,
    /// Cells reused from an earlier, interrupted or identical run.
    pub reused: usize,
    /// One line per failed cell or method.
    pub failures: Vec<String>,
    /// Notes about the data, such as ignored columns.
    pub warnings: Vec<String>,
    /// How many (cell, method) results took a documented fallback; their
    /// warnings are in `records.jsonl`.
    pub fallbacks: usize,
}

/// Loads and checks every dataset of an experiment before any training, so
/// a data problem stops the run at once with a precise message.
pub fn load_datasets(exp: &Experiment, datasets_dir: Option<&Path>) -> Result<Vec<Table>> {
    let needs_catalog = exp
        .datasets
        .iter()
        .any(|d| matches!(d.source, DataSource::Bundled(_)));
    let catalog = if needs_catalog {
        Some(Catalog::locate(datasets_dir, exp.source.dir())?)
    } else {
        None
    };
    let mut tables = Vec::with_capacity(exp.datasets.len());
    for spec in &exp.datasets {
        let table = source::load(spec, catalog.as_ref(), exp.source.dir())?;
        check_class_counts(&table, &exp.evaluation)?;
        tables.push(table);
    }
    Ok(tables)
}

/// The settings that can change one (dataset, family) pair's cells. The
/// repeat count is left out: adding repeats adds cells but changes none.
#[derive(Serialize)]
struct FingerprintInput<'a> {
    candor_version: &'a str,
    seed: u64,
    outer_folds: usize,
    inner_folds: usize,
    bins: usize,
    hl_groups: usize,
    bootstrap: usize,
    bootstrap_seed: u64,
    dataset: &'a crate::data::source::DatasetSpec,
    data_sha256: &'a str,
    family: &'a crate::experiment::manifest::FamilySpec,
    /// Left out at zero, so cells made before revisions existed keep their
    /// fingerprints.
    #[serde(skip_serializing_if = "is_zero")]
    family_revision: u32,
    methods: &'a [String],
    calibration: &'a crate::calibrate::Settings,
    metrics: &'a [String],
}

fn is_zero(n: &u32) -> bool {
    *n == 0
}

fn fingerprint(exp: &Experiment, d: usize, f: usize, table: &Table) -> String {
    let input = FingerprintInput {
        candor_version: crate::VERSION,
        seed: exp.seed,
        outer_folds: exp.evaluation.outer_folds,
        inner_folds: exp.evaluation.inner_folds,
        bins: exp.evaluation.bins,
        hl_groups: exp.evaluation.hl_groups,
        bootstrap: exp.evaluation.bootstrap,
        bootstrap_seed: exp.evaluation.bootstrap_seed,
        dataset: &exp.datasets[d],
        data_sha256: &table.sha256,
        family: &exp.families[f],
        family_revision: learner::find(&exp.families[f].kind).map_or(0, |k| k.revision),
        methods: &exp.methods,
        calibration: &exp.calibration,
        metrics: &exp.metrics,
    };
    let json = serde_json::to_vec(&input).unwrap_or_default();
    crate::common::checksum::hex_sha256(&json)[..16].to_string()
}

struct Cell {
    dataset: usize,
    family: usize,
    repeat: usize,
    fold: usize,
}

/// Runs an experiment and writes its results folder.
pub fn run(exp: &Experiment, opts: &RunOptions) -> Result<RunReport> {
    let store = Store::open(&opts.out_dir)?;
    let tables = load_datasets(exp, opts.datasets_dir.as_deref())?;
    let eval = exp.evaluation;

    let learners: Vec<Box<dyn Learner>> = exp
        .families
        .iter()
        .map(|f| {
            learner::find(&f.kind)
                .map(|family| (family.build)(&f.params))
                .ok_or_else(|| Error::Manifest(format!("unknown family kind `{}`", f.kind)))
        })
        .collect::<Result<_>>()?;
    let methods: Vec<(String, Box<dyn Calibrator>)> = exp
        .methods
        .iter()
        .filter_map(|m| {
            calibrate::find(m).map(|method| (m.clone(), (method.build)(&exp.calibration)))
        })
        .collect();
    let metric_fns: Vec<&Metric> = exp
        .metrics
        .iter()
        .filter_map(|m| metrics::find(m))
        .collect();
    let options = MetricOptions {
        bins: eval.bins,
        hl_groups: eval.hl_groups,
    };

    // Outer folds depend on the dataset and repeat only, so every family is
    // evaluated on the same splits.
    let outer: Vec<Vec<Vec<usize>>> = tables
        .iter()
        .map(|t| {
            (0..eval.repeats)
                .map(|r| {
                    let seed = derive_seed(exp.seed, &["outer", &t.name, &r.to_string()]);
                    folds::stratified(&t.labels, t.n_classes(), eval.outer_folds, seed)
                })
                .collect()
        })
        .collect();
    let fingerprints: Vec<Vec<String>> = (0..tables.len())
        .map(|d| {
            (0..exp.families.len())
                .map(|f| fingerprint(exp, d, f, &tables[d]))
                .collect()
        })
        .collect();

    let mut cells = Vec::new();
    for dataset in 0..tables.len() {
        for family in 0..exp.families.len() {
            for repeat in 0..eval.repeats {
                for fold in 0..eval.outer_folds {
                    cells.push(Cell {
                        dataset,
                        family,
                        repeat,
                        fold,
                    });
                }
            }
        }
    }

    let bar = if opts.progress {
        ProgressBar::new(cells.len() as u64)
    } else {
        ProgressBar::hidden()
    };
    bar.set_style(
        ProgressStyle::with_template(
            "{elapsed_precise} [{wide_bar}] {pos}/{len} cells, ETA {eta} {msg}",
        )
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> "),
    );

    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(opts.threads)
        .build()
        .map_err(|e| Error::Io(format!("cannot start worker threads: {e}; try --threads 1")))?;

    let outcomes: Vec<Result<(CellRecord, bool)>> = pool.install(|| {
        cells
            .par_iter()
            .map(|c| {
                let table = &tables[c.dataset];
                let spec = &exp.families[c.family];
                let fp = &fingerprints[c.dataset][c.family];
                let path = store.cell_path(&table.name, &spec.name, c.repeat, c.fold);
                if let Some(record) = store.reusable(&path, fp) {
                    bar.inc(1);
                    return Ok((record, false));
                }
                let (train, test) = folds::split(&outer[c.dataset][c.repeat], c.fold);
                let ids = [
                    table.name.as_str(),
                    spec.name.as_str(),
                    &c.repeat.to_string(),
                    &c.fold.to_string(),
                ];
                let plan = CellPlan {
                    table,
                    train: &train,
                    test: &test,
                    inner_folds: eval.inner_folds,
                    inner_seed: derive_seed(exp.seed, &["inner", ids[0], ids[2], ids[3]]),
                    model_seed: derive_seed(exp.seed, &["model", ids[0], ids[1], ids[2], ids[3]]),
                    bootstrap: eval.bootstrap,
                    bootstrap_seed: derive_seed(
                        eval.bootstrap_seed,
                        &["bootstrap", ids[0], ids[1], ids[2], ids[3]],
                    ),
                };
                let learner = learners[c.family].as_ref();
                let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                    run_cell(&plan, learner, &methods, &metric_fns, &options)
                }))
                .unwrap_or_else(|panic| {
                    let what = panic
                        .downcast_ref::<&str>()
                        .map(|s| s.to_string())
                        .or_else(|| panic.downcast_ref::<String>().cloned())
                        .unwrap_or_else(|| "unknown cause".into());
                    Err(Error::Fit(format!("internal failure: {what}")))
                });
                let (results, error) = match outcome {
                    Ok(results) => (results, None),
                    Err(e) => (Vec::new(), Some(e.to_string())),
                };
                let record = CellRecord {
                    dataset: table.name.clone(),
                    family: spec.name.clone(),
                    repeat: c.repeat,
                    fold: c.fold,
                    fingerprint: fp.clone(),
                    n_train: train.len(),
                    n_test: test.len(),
                    n_classes: table.n_classes(),
                    results,
                    error,
                };
                store.save(&path, &record)?;
                bar.inc(1);
                Ok((record, true))
            })
            .collect()
    });
    bar.finish_and_clear();

    let mut records = Vec::with_capacity(outcomes.len());
    let mut computed = 0;
    for outcome in outcomes {
        let (record, fresh) = outcome?;
        computed += usize::from(fresh);
        records.push(record);
    }
    let reused = records.len() - computed;

    let summary = summarise(exp, &records);
    write_outputs(exp, &store, &tables, &records, &summary)?;

    let mut failures = Vec::new();
    for r in &records {
        let at = format!(
            "{}/{} repeat {} fold {}",
            r.dataset, r.family, r.repeat, r.fold
        );
        if let Some(e) = &r.error {
            failures.push(format!("{at}: {e}"));
        }
        for m in &r.results {
            if let Some(e) = &m.error {
                failures.push(format!("{at}, method {}: {e}", m.method));
            }
        }
    }
    let fallbacks = records
        .iter()
        .flat_map(|r| &r.results)
        .filter(|m| !m.warnings.is_empty())
        .count();
    Ok(RunReport {
        summary,
        computed,
        reused,
        failures,
        fallbacks,
        warnings: tables.iter().flat_map(|t| t.warnings.clone()).collect(),
    })
}

#[derive(Serialize)]
struct StampedRecord<'a> {
    #[serde(flatten)]
    record: &'a CellRecord,
    manifest_sha256: &'a str,
    candor_version: &'a str,
}

#[derive(Serialize)]
struct DatasetInfo<'a> {
    name: &'a str,
    source: &'a DataSource,
    sha256: &'a str,
    rows: usize,
    features: usize,
    classes: &'a [String],
    class_counts: Vec<usize>,
}

#[derive(Serialize)]
struct RunInfo<'a> {
    experiment: &'a str,
    candor_version: &'a str,
    manifest_sha256: &'a str,
    manifest: &'a str,
    settings: &'a Experiment,
    datasets: Vec<DatasetInfo<'a>>,
    cells: usize,
    failed_cells: usize,
}

fn write_outputs(
    exp: &Experiment,
    store: &Store,
    tables: &[Table],
    records: &[CellRecord],
    summary: &Summary,
) -> Result<()> {
    let encode = |e: serde_json::Error| Error::Io(format!("cannot encode results: {e}"));
    let mut jsonl = String::new();
    for record in records {
        let line = serde_json::to_string(&StampedRecord {
            record,
            manifest_sha256: &exp.source.sha256,
            candor_version: crate::VERSION,
        })
        .map_err(encode)?;
        jsonl.push_str(&line);
        jsonl.push('\n');
    }
    write_atomic(&store.dir.join("records.jsonl"), jsonl.as_bytes())?;
    write_atomic(
        &store.dir.join("summary.csv"),
        Csv.render(&summary.table()).as_bytes(),
    )?;
    let info = RunInfo {
        experiment: &exp.name,
        candor_version: crate::VERSION,
        manifest_sha256: &exp.source.sha256,
        manifest: &exp.source.text,
        settings: exp,
        datasets: tables
            .iter()
            .zip(&exp.datasets)
            .map(|(t, spec)| DatasetInfo {
                name: &t.name,
                source: &spec.source,
                sha256: &t.sha256,
                rows: t.rows(),
                features: t.columns.len(),
                classes: &t.classes,
                class_counts: t.class_counts(),
            })
            .collect(),
        cells: records.len(),
        failed_cells: records.iter().filter(|r| r.error.is_some()).count(),
    };
    let mut text = serde_json::to_string_pretty(&info).map_err(encode)?;
    text.push('\n');
    write_atomic(&store.dir.join("run.json"), text.as_bytes())
}
