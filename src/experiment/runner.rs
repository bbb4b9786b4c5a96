//! Running an experiment: every cell of the plan in parallel, each seeded
//! by its identity alone, each record saved the moment it is done, and the
//! result files written once all cells are in.

use crate::calibrate::{self, Calibrator};
use crate::common::error::{Error, Result};
use crate::common::rng::derive_seed;
use crate::data::catalog::Catalog;
use crate::data::folds;
use crate::data::source::{self, DataSource};
use crate::data::table::Table;
use crate::experiment::manifest::{check_class_counts, Experiment};
use crate::experiment::outputs;
use crate::experiment::plan::{self, Cell};
use crate::experiment::protocol::{run_cell, CellPlan, MethodResult};
use crate::experiment::shard::{self, Shard};
use crate::experiment::store::{CellRecord, Store};
use crate::experiment::summary::{summarise, Summary};
use crate::learner::{self, Trainer};
use crate::metrics::{self, Metric, MetricOptions};
use indicatif::{ProgressBar, ProgressStyle};
use rayon::prelude::*;
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
    /// Compute only this shard's cells, for a merge to assemble later.
    pub shard: Option<Shard>,
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
    /// For a shard, what it did; the result files then wait for the merge.
    pub shard: Option<shard::Status>,
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

/// What every cell of a run shares: the experiment, its data and splits,
/// and the built families, methods and metrics.
struct Shared<'a> {
    exp: &'a Experiment,
    store: &'a Store,
    tables: &'a [Table],
    outer: Vec<Vec<Vec<usize>>>,
    fingerprints: Vec<Vec<String>>,
    trainers: Vec<Trainer>,
    methods: Vec<(String, Box<dyn Calibrator>)>,
    metrics: Vec<&'static Metric>,
    options: MetricOptions,
}

/// Runs an experiment and writes its results folder; with a shard, only
/// that shard's cells, and a status for the merge instead of the result
/// files.
pub fn run(exp: &Experiment, opts: &RunOptions) -> Result<RunReport> {
    let store = match opts.shard {
        Some(s) => Store::open_shard(&opts.out_dir, s)?,
        None => Store::open(&opts.out_dir)?,
    };
    let tables = load_datasets(exp, opts.datasets_dir.as_deref())?;
    let shared = Shared {
        exp,
        store: &store,
        tables: &tables,
        outer: plan::outer_folds(exp, &tables),
        fingerprints: plan::fingerprints(exp, &tables),
        trainers: build_trainers(exp)?,
        methods: build_methods(exp),
        metrics: exp
            .metrics
            .iter()
            .filter_map(|m| metrics::find(m))
            .collect(),
        options: MetricOptions {
            bins: exp.evaluation.bins,
            hl_groups: exp.evaluation.hl_groups,
        },
    };
    let mut cells = plan::cells(exp);
    let mut estimated = 0.0;
    if let Some(s) = opts.shard {
        let costs = shard_costs(exp, &tables, &cells);
        let owner = shard::assign(&costs, s.count);
        let mine: Vec<usize> = (0..cells.len())
            .filter(|&i| owner[i] + 1 == s.index)
            .collect();
        estimated = mine.iter().map(|&i| costs[i]).sum();
        cells = mine.iter().map(|&i| cells[i]).collect();
    }
    let started = std::time::Instant::now();
    let progress = Progress::new(opts.progress, cells.len(), exp.evaluation.inner_folds + 2);
    let threads = if opts.threads == 0 {
        std::thread::available_parallelism().map_or(1, |n| n.get())
    } else {
        opts.threads
    };
    let slow = shard::slow_family_warnings(exp, &tables, threads);
    // Said at once on a terminal, before the hours begin; also at the end.
    for w in &slow {
        progress.bar.println(format!("warning: {w}"));
    }
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(opts.threads)
        .build()
        .map_err(|e| Error::Io(format!("cannot start worker threads: {e}; try --threads 1")))?;
    let outcomes: Vec<Result<(CellRecord, bool)>> = pool.install(|| {
        cells
            .par_iter()
            .map(|c| run_or_reuse(&shared, c, &progress))
            .collect()
    });
    progress.bar.finish_and_clear();

    let mut records = Vec::with_capacity(outcomes.len());
    let mut computed = 0;
    for outcome in outcomes {
        let (record, fresh) = outcome?;
        computed += usize::from(fresh);
        records.push(record);
    }
    let summary = summarise(exp, &records);
    let status = match opts.shard {
        Some(s) => {
            let status = shard::Status {
                shard: s,
                manifest: std::path::absolute(&exp.source.path)
                    .unwrap_or_else(|_| exp.source.path.clone()),
                manifest_sha256: exp.source.sha256.clone(),
                cells: records.len(),
                estimated_seconds: estimated,
                measured_seconds: started.elapsed().as_secs_f64(),
                computed,
                reused: records.len() - computed,
                failed: records.iter().filter(|r| r.error.is_some()).count(),
            };
            status.save(&store.dir)?;
            Some(status)
        }
        None => {
            outputs::write(exp, &store, &tables, &records, &summary)?;
            None
        }
    };
    Ok(RunReport {
        summary,
        computed,
        reused: records.len() - computed,
        failures: failures(&records),
        fallbacks: fallbacks(&records),
        warnings: tables
            .iter()
            .flat_map(|t| t.warnings.clone())
            .chain(slow)
            .collect(),
        shard: status,
    })
}

/// Every cell's estimated seconds, for dividing the cells into shards.
pub fn shard_costs(exp: &Experiment, tables: &[Table], cells: &[Cell]) -> Vec<f64> {
    cells
        .iter()
        .map(|c| shard::estimate(exp, &tables[c.dataset], c))
        .collect()
}

fn build_trainers(exp: &Experiment) -> Result<Vec<Trainer>> {
    exp.families
        .iter()
        .map(|f| {
            let family = learner::find(&f.kind)
                .ok_or_else(|| Error::Manifest(format!("unknown family kind `{}`", f.kind)))?;
            Trainer::build(family, &f.params, f.program.as_ref(), exp.source.dir())
        })
        .collect()
}

fn build_methods(exp: &Experiment) -> Vec<(String, Box<dyn Calibrator>)> {
    exp.methods
        .iter()
        .filter_map(|m| {
            calibrate::find(m).map(|method| (m.clone(), (method.build)(&exp.calibration)))
        })
        .collect()
}

/// A bar on standard error, when asked for, that moves with every fit
/// inside a cell (its inner fits, its final fit, then its evaluation), so a
/// run whose cells take minutes each still shows it is moving.
struct Progress {
    bar: ProgressBar,
    /// Steps per cell.
    steps: usize,
    cells: usize,
    done: std::sync::atomic::AtomicUsize,
}

impl Progress {
    fn new(shown: bool, cells: usize, steps: usize) -> Progress {
        let bar = if shown {
            ProgressBar::new((cells * steps) as u64)
        } else {
            ProgressBar::hidden()
        };
        bar.set_style(
            ProgressStyle::with_template("{elapsed_precise} [{wide_bar}] {msg}, ETA {eta}")
                .unwrap_or_else(|_| ProgressStyle::default_bar())
                .progress_chars("=> "),
        );
        bar.set_message(format!("0/{cells} cells"));
        Progress {
            bar,
            steps,
            cells,
            done: std::sync::atomic::AtomicUsize::new(0),
        }
    }

    /// One step of a cell is done.
    fn step(&self) {
        self.bar.inc(1);
    }

    /// A cell is done, `taken` of its steps already counted.
    fn cell_done(&self, taken: usize) {
        self.bar.inc(self.steps.saturating_sub(taken) as u64);
        let done = self.done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
        self.bar.set_message(format!("{done}/{} cells", self.cells));
    }
}

/// The cell's stored record when its fingerprint still matches, otherwise
/// a freshly computed and saved one; `true` marks a fresh record.
fn run_or_reuse(s: &Shared<'_>, c: &Cell, progress: &Progress) -> Result<(CellRecord, bool)> {
    let table = &s.tables[c.dataset];
    let spec = &s.exp.families[c.family];
    let fp = &s.fingerprints[c.dataset][c.family];
    let path = s.store.cell_path(&table.name, &spec.name, c.repeat, c.fold);
    if let Some(record) = s.store.reusable(&path, fp) {
        progress.cell_done(0);
        return Ok((record, false));
    }
    let (train, test) =
        folds::split_for(&s.outer[c.dataset][c.repeat], c.fold, table.order.is_some());
    let taken = std::sync::atomic::AtomicUsize::new(0);
    let step = || {
        taken.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        progress.step();
    };
    let outcome = compute(s, c, &train, &test, &step);
    progress.cell_done(taken.load(std::sync::atomic::Ordering::Relaxed));
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
    s.store.save(&path, &record)?;
    Ok((record, true))
}

/// Runs the cell's protocol with the seeds its identity derives. A panic
/// inside a family or method becomes this cell's error, so the other cells
/// go on.
fn compute(
    s: &Shared<'_>,
    c: &Cell,
    train: &[usize],
    test: &[usize],
    step: &(dyn Fn() + Sync),
) -> Result<Vec<MethodResult>> {
    let table = &s.tables[c.dataset];
    let eval = s.exp.evaluation;
    let (repeat, fold) = (c.repeat.to_string(), c.fold.to_string());
    let (data, family) = (table.name.as_str(), s.exp.families[c.family].name.as_str());
    let plan = CellPlan {
        table,
        train,
        test,
        inner_folds: eval.inner_folds,
        inner_seed: derive_seed(s.exp.seed, &["inner", data, &repeat, &fold]),
        model_seed: derive_seed(s.exp.seed, &["model", data, family, &repeat, &fold]),
        bootstrap: eval.bootstrap,
        bootstrap_seed: derive_seed(
            eval.bootstrap_seed,
            &["bootstrap", data, family, &repeat, &fold],
        ),
        step: Some(step),
    };
    let trainer = &s.trainers[c.family];
    std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        run_cell(&plan, trainer, &s.methods, &s.metrics, &s.options)
    }))
    .unwrap_or_else(|panic| {
        let what = panic
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| panic.downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "unknown cause".into());
        Err(Error::Fit(format!("internal failure: {what}")))
    })
}

/// One line per failed cell or method, naming where it failed.
pub(super) fn failures(records: &[CellRecord]) -> Vec<String> {
    let mut failures = Vec::new();
    for r in records {
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
    failures
}

/// How many (cell, method) results took a documented fallback.
pub(super) fn fallbacks(records: &[CellRecord]) -> usize {
    records
        .iter()
        .flat_map(|r| &r.results)
        .filter(|m| !m.warnings.is_empty())
        .count()
}
