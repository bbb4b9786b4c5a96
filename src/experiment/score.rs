//! `candor score`: every metric, the diagnosis, the reliability diagrams
//! and a cross-fitted comparison of every calibration method, for
//! predictions made by any model elsewhere.
//!
//! The rows are split into K stratified folds; for each fold every method
//! is fitted on the other folds' predictions and applied to this fold, so
//! no prediction is calibrated by a map that saw its own label. `none` is
//! the predictions as given. With a group column, each group is also
//! reported on its own (the maps are still fitted on all the other folds'
//! rows). The output is a results folder like `candor run` writes, so the
//! same tables, figures and HTML report follow.

use crate::calibrate::{self, CalibrationFile};
use crate::common::error::{Error, Result};
use crate::common::files::{write_atomic, write_json};
use crate::common::params::Params;
use crate::data::folds;
use crate::data::predictions::{self, Layout, Predictions, ScoreScale};
use crate::data::source::{DataSource, DatasetSpec};
use crate::experiment::manifest::{Evaluation, Experiment, FamilySpec, ManifestSource};
use crate::experiment::protocol::{fit_methods, measure_methods, MethodResult};
use crate::experiment::store::{CellRecord, Store};
use crate::export::{Csv, Exporter};
use crate::metrics::{self, Forecasts, MetricOptions};
use rayon::prelude::*;
use serde_json::json;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Choices for `candor score`.
#[derive(Debug, Clone)]
pub struct ScoreOptions {
    pub layout: Layout,
    /// Cross-fitting folds.
    pub folds: usize,
    pub seed: u64,
    pub bins: usize,
    /// Bootstrap resamples per fold for the ECE and Brier intervals.
    pub bootstrap: usize,
    /// The model's name in tables.
    pub model: String,
    pub out_dir: PathBuf,
}

/// What `score` found.
pub struct Scored {
    pub predictions: Predictions,
    pub experiment: Experiment,
    pub records: Vec<CellRecord>,
}

/// The segment name of one group value.
fn segment(dataset: &str, column: &str, value: &str) -> String {
    format!("{dataset} {column}={value}")
}

/// Cross-fits every method over the prediction rows and writes a results
/// folder (records.jsonl, summary.csv, run.json and the report).
pub fn score(path: &Path, opts: &ScoreOptions) -> Result<Scored> {
    let pred = predictions::read(path, &opts.layout, None)?;
    let k = pred.classes.len();
    let name = path
        .file_name()
        .map(|s| s.to_string_lossy().trim_end_matches(".csv").to_string())
        .unwrap_or_else(|| "predictions".into());
    let mut counts = vec![0usize; k];
    for &y in &pred.labels {
        counts[y] += 1;
    }
    if let Some((c, &m)) = counts.iter().enumerate().min_by_key(|(_, &m)| m) {
        if m < opts.folds {
            return Err(Error::Data(format!(
                "{}: class `{}` has {m} rows, fewer than the {} folds; lower --outer-folds",
                path.display(),
                pred.classes[c],
                opts.folds
            )));
        }
    }
    let mut groups: Vec<String> = pred.groups.clone().unwrap_or_default();
    groups.sort();
    groups.dedup();
    let group_col = opts.layout.group.clone().unwrap_or_default();
    let mut datasets = vec![name.clone()];
    datasets.extend(groups.iter().map(|g| segment(&name, &group_col, g)));
    let exp = Experiment {
        name: format!("score {name}"),
        seed: opts.seed,
        evaluation: Evaluation {
            outer_folds: opts.folds,
            repeats: 1,
            inner_folds: opts.folds,
            bins: opts.bins,
            hl_groups: 10,
            bootstrap: opts.bootstrap,
            bootstrap_seed: opts.seed,
        },
        datasets: datasets
            .iter()
            .map(|d| DatasetSpec {
                name: d.clone(),
                source: DataSource::Path(path.to_path_buf()),
                target: opts.layout.label.clone(),
                positive: opts.layout.positive.clone(),
                format: Default::default(),
                origin: String::new(),
                segment_of: (*d != name).then(|| name.clone()),
                exclude: Vec::new(),
                group: None,
                time: None,
                levels: Default::default(),
            })
            .collect(),
        families: vec![FamilySpec {
            name: opts.model.clone(),
            kind: "external".into(),
            params: Params::default(),
            program: None,
        }],
        methods: calibrate::METHODS.iter().map(|m| m.name.to_string()).collect(),
        calibration: calibrate::Settings::default(),
        metrics: metrics::METRICS.iter().map(|m| m.name.to_string()).collect(),
        source: ManifestSource {
            path: path.to_path_buf(),
            text: format!(
                "# candor score {}: {} folds, seed {}, {} bins, target column {:?}, group column {:?}{}\n",
                path.display(),
                opts.folds,
                opts.seed,
                opts.bins,
                opts.layout.label.as_deref().unwrap_or(""),
                opts.layout.group.as_deref().unwrap_or(""),
                match opts.layout.scores {
                    ScoreScale::Probability => String::new(),
                    other => format!(", scores {}", other.name()),
                }
            ),
            sha256: crate::common::checksum::hex_sha256(&std::fs::read(path).map_err(|e| Error::io(path, "read", &e))?),
        },
    };
    let methods: Vec<(String, Box<dyn calibrate::Calibrator>)> = calibrate::METHODS
        .iter()
        .map(|m| (m.name.to_string(), (m.build)(&exp.calibration)))
        .collect();
    let metric_list: Vec<&metrics::Metric> = metrics::METRICS.iter().collect();
    let options = MetricOptions {
        bins: opts.bins,
        hl_groups: 10,
    };
    let assignment = folds::stratified(&pred.labels, k, opts.folds, opts.seed);
    // Folds are independent; they run in parallel and their records are
    // put back in fold order, so the output does not depend on scheduling.
    let per_fold: Vec<Vec<CellRecord>> = (0..opts.folds)
        .into_par_iter()
        .map(|f| {
            let (train, test) = folds::split(&assignment, f);
            // The maps are fitted once per fold and measured on every segment.
            let fitted = fit_methods(&pred.scores(&train), &pred.labels_of(&train), k, &methods);
            datasets
                .iter()
                .enumerate()
                .map(|(d, dataset)| {
                    let rows: Vec<usize> = if d == 0 {
                        test.clone()
                    } else {
                        let g = &groups[d - 1];
                        let of = pred.groups.as_ref().map_or(&[][..], |v| &v[..]);
                        test.iter().copied().filter(|&r| &of[r] == g).collect()
                    };
                    let mut results = if rows.is_empty() {
                        Vec::new()
                    } else {
                        measure_methods(
                            &fitted,
                            &pred.scores(&rows),
                            &pred.labels_of(&rows),
                            &metric_list,
                            &options,
                            (
                                opts.bootstrap,
                                crate::common::rng::derive_seed(
                                    opts.seed,
                                    &[dataset, &f.to_string()],
                                ),
                            ),
                        )
                    };
                    if opts.layout.scores == ScoreScale::Margin {
                        results
                            .iter_mut()
                            .filter(|r| r.method == "none")
                            .for_each(margins_are_not_forecasts);
                    }
                    CellRecord {
                        dataset: dataset.clone(),
                        family: opts.model.clone(),
                        repeat: 0,
                        fold: f,
                        fingerprint: String::new(),
                        n_train: train.len(),
                        n_test: rows.len(),
                        n_classes: k,
                        error: rows
                            .is_empty()
                            .then(|| "no rows of this group in the fold".to_string()),
                        results,
                    }
                })
                .collect()
        })
        .collect();
    let records: Vec<CellRecord> = per_fold.into_iter().flatten().collect();
    write(&exp, &pred, &records, &datasets, opts)?;
    Ok(Scored {
        predictions: pred,
        experiment: exp,
        records,
    })
}

/// What a margin's `none` row can say: margins order the rows and their
/// sign decides, so AUC and accuracy stand; a margin is no probability,
/// so every calibration and probability metric of it is not applicable
/// (the sigmoid the calibrators read would be judged instead).
fn margins_are_not_forecasts(raw: &mut MethodResult) {
    for (name, value) in raw.metrics.iter_mut() {
        if !RANK_METRICS.contains(&name.as_str()) {
            *value = None;
        }
    }
    raw.intervals.clear();
    raw.reliability.clear();
    raw.strategy = MARGIN_NOTE.into();
}

/// The metrics of a margin that keep their meaning.
const RANK_METRICS: [&str; 2] = ["auc", "accuracy"];

/// The strategy of a margin's `none` row: the mark by which tables show it
/// as `n/a` and the diagnosis leaves it out.
pub const MARGIN_NOTE: &str =
    "not applicable: margins are not probabilities (only auc and accuracy are reported)";

fn write(
    exp: &Experiment,
    pred: &Predictions,
    records: &[CellRecord],
    datasets: &[String],
    opts: &ScoreOptions,
) -> Result<()> {
    let store = Store::open(&opts.out_dir)?;
    let encode = |e: serde_json::Error| Error::Io(format!("cannot encode results: {e}"));
    let mut jsonl = String::new();
    for r in records {
        jsonl.push_str(&serde_json::to_string(r).map_err(encode)?);
        jsonl.push('\n');
    }
    write_atomic(&store.dir.join("records.jsonl"), jsonl.as_bytes())?;
    let summary = crate::experiment::summary::summarise(exp, records);
    write_atomic(
        &store.dir.join("summary.csv"),
        Csv.render(&summary.table()).as_bytes(),
    )?;
    let class_counts = |rows: &dyn Fn(usize) -> bool| {
        let mut c = vec![0usize; pred.classes.len()];
        for (i, &y) in pred.labels.iter().enumerate() {
            if rows(i) {
                c[y] += 1;
            }
        }
        c
    };
    let info = json!({
        "experiment": exp.name,
        "candor_version": crate::VERSION,
        "manifest_sha256": exp.source.sha256,
        "manifest": exp.source.text,
        "settings": exp,
        "datasets": datasets.iter().enumerate().map(|(d, name)| {
            let counts = if d == 0 {
                class_counts(&|_| true)
            } else {
                let value = name.rsplit('=').next().unwrap_or_default().to_string();
                let groups = pred.groups.clone().unwrap_or_default();
                class_counts(&|i| groups[i] == value)
            };
            json!({
                "name": name,
                "source": {"path": exp.source.path},
                "sha256": exp.source.sha256,
                "rows": counts.iter().sum::<usize>(),
                "features": pred.proba.ncols(),
                "classes": pred.classes,
                "class_counts": counts,
            })
        }).collect::<Vec<_>>(),
        "cells": records.len(),
        "failed_cells": records.iter().filter(|r| r.error.is_some()).count(),
    });
    write_json(&store.dir.join("run.json"), &info)
}

/// Every metric of the predictions as given, on all rows and per group,
/// keyed by the names `summary.csv` uses.
pub fn metrics_json(pred: &Predictions, bins: usize) -> serde_json::Value {
    let options = MetricOptions {
        bins,
        hl_groups: 10,
    };
    let measure = |rows: &[usize]| -> BTreeMap<String, Option<f64>> {
        let s = pred.scores(rows);
        let y = pred.labels_of(rows);
        let fc = Forecasts::new(s.proba.view(), &y);
        metrics::METRICS
            .iter()
            .map(|m| {
                let v = (m.compute)(&fc, &options);
                let applies = pred.scale != ScoreScale::Margin || RANK_METRICS.contains(&m.name);
                (m.name.to_string(), (applies && v.is_finite()).then_some(v))
            })
            .collect()
    };
    let all: Vec<usize> = (0..pred.labels.len()).collect();
    let mut out = json!({
        "rows": all.len(),
        "classes": pred.classes,
        "bins": bins,
        "metrics": measure(&all),
    });
    if let Some(groups) = &pred.groups {
        let mut values: Vec<&String> = groups.iter().collect();
        values.sort();
        values.dedup();
        let per: BTreeMap<&String, serde_json::Value> = values
            .into_iter()
            .map(|g| {
                let rows: Vec<usize> = all.iter().copied().filter(|&i| &groups[i] == g).collect();
                (g, json!({"rows": rows.len(), "metrics": measure(&rows)}))
            })
            .collect();
        out["groups"] = json!(per);
    }
    out
}

/// Fits one method on every row and writes it as a calibration file.
pub fn save_fit(pred: &Predictions, method: &str, file: &Path) -> Result<()> {
    let Some(m) = calibrate::find(method) else {
        return Err(Error::Manifest(format!(
            "--fit {method}: unknown method; choose one of: {}",
            calibrate::known_methods()
        )));
    };
    let k = pred.classes.len();
    let all: Vec<usize> = (0..pred.labels.len()).collect();
    let calibrator = (m.build)(&calibrate::Settings::default());
    let fitted = calibrator.fit(&pred.scores(&all), &pred.labels, k)?;
    let exported = fitted.export().ok_or_else(|| {
        Error::Manifest(format!(
            "--fit {method}: this method needs its calibration set to predict, so it cannot be saved as a map; choose platt, isotonic, histogram, beta or temperature"
        ))
    })?;
    let mut doc = CalibrationFile::new(method, calibrator.strategy(k), &pred.classes, exported);
    if pred.scale != ScoreScale::Probability {
        doc.scores = Some(pred.scale.name().to_string());
    }
    write_json(file, &doc)
}

/// Applies a calibration file to predictions; returns the CSV text with a
/// `calibrated_<class>` column per class appended.
pub fn apply(map_path: &Path, predictions: &Path, layout: &Layout) -> Result<String> {
    let text = std::fs::read_to_string(map_path).map_err(|e| Error::io(map_path, "read", &e))?;
    let file: CalibrationFile = serde_json::from_str(&text).map_err(|e| {
        Error::Data(format!(
            "{}:{}: not a calibration map ({e}); write one with `candor score --fit METHOD --save FILE`",
            map_path.display(),
            e.line()
        ))
    })?;
    let calibration = file.calibration(&map_path.display().to_string())?;
    let fitted_on = file.scores.as_deref().unwrap_or("probability");
    if fitted_on != layout.scores.name() {
        return Err(Error::Data(format!(
            "{}: the map was fitted on {fitted_on} scores, but these are read as {}; pass --scores {fitted_on}",
            map_path.display(),
            layout.scores.name()
        )));
    }
    let pred = predictions::read(predictions, layout, Some(&file.classes))?;
    let all: Vec<usize> = (0..pred.rows.len()).collect();
    let p = calibration.apply(&pred.scores(&all));
    let mut w = csv::WriterBuilder::new().from_writer(Vec::new());
    let mut header = pred.header.clone();
    header.extend(file.classes.iter().map(|c| format!("calibrated_{c}")));
    let _ = w.write_record(&header);
    for (i, row) in pred.rows.iter().enumerate() {
        let mut out = row.clone();
        out.extend(p.row(i).iter().map(|v| format!("{v}")));
        let _ = w.write_record(&out);
    }
    Ok(String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default())
}
