//! One cell of the experiment: a family on one outer fold of one dataset.
//!
//! Inside the outer training split, M stratified inner folds give an
//! out-of-fold score for every training row; every calibration method is
//! fitted on those scores; the family is then fitted once on the whole
//! training split and scores the outer test fold, which each fitted method
//! maps to probabilities before the metrics are computed. Preprocessing, the
//! family and the calibrators only ever see training rows.

use crate::calibrate::{Calibration, Calibrator};
use crate::common::error::{Error, Result};
use crate::common::rng::derive_seed;
use crate::common::scores::Scores;
use crate::data::folds;
use crate::data::table::Table;
use crate::learner::Trainer;
use crate::metrics::bootstrap::{intervals, RESAMPLED};
use crate::metrics::reliability::{reliability, ReliabilityBin};
use crate::metrics::{Forecasts, Metric, MetricOptions};
use ndarray::Array2;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The rows and seeds of one cell.
pub struct CellPlan<'a> {
    pub table: &'a Table,
    /// Outer training rows (indices into the table).
    pub train: &'a [usize],
    /// Outer test rows.
    pub test: &'a [usize],
    pub inner_folds: usize,
    /// Seeds the inner fold assignment; shared by every family on this
    /// outer fold so their comparisons are paired.
    pub inner_seed: u64,
    /// Seeds the family's own randomness.
    pub model_seed: u64,
    /// Bootstrap resamples for the intervals (0 = none).
    pub bootstrap: usize,
    /// Seeds the bootstrap resamples.
    pub bootstrap_seed: u64,
    /// Called after each fit and after the evaluation, for progress shown
    /// inside long cells.
    pub step: Option<&'a (dyn Fn() + Sync)>,
}

/// What one calibration method achieved on the test fold.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MethodResult {
    pub method: String,
    /// How the method handled the classes, e.g. `binary` or
    /// `one-vs-rest, renormalised`.
    pub strategy: String,
    /// Metric values by name; empty if the method failed. Undefined values
    /// (such as a slope on separated outcomes) are stored as null.
    pub metrics: BTreeMap<String, Option<f64>>,
    /// 95% bootstrap percentile intervals within the test fold, by metric.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub intervals: BTreeMap<String, [Option<f64>; 2]>,
    /// Reliability-diagram bins on the test fold.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub reliability: Vec<ReliabilityBin>,
    /// Extra figures of the method on the test fold (the Venn-Abers
    /// interval's mean bounds and widths).
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub details: BTreeMap<String, f64>,
    /// Fallbacks the method took while fitting, in plain words.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub warnings: Vec<String>,
    /// Why the method could not be fitted in this cell, if it could not.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
}

/// Runs a cell. An error means the family itself could not be trained or
/// scored; a calibration method that fails is recorded in its own result.
pub fn run_cell(
    plan: &CellPlan<'_>,
    trainer: &Trainer,
    methods: &[(String, Box<dyn Calibrator>)],
    metrics: &[&Metric],
    options: &MetricOptions,
) -> Result<Vec<MethodResult>> {
    let table = plan.table;
    let k = table.n_classes();
    let y_train: Vec<usize> = plan.train.iter().map(|&r| table.labels[r]).collect();
    let y_test: Vec<usize> = plan.test.iter().map(|&r| table.labels[r]).collect();

    // Out-of-fold scores for every training row from M inner fits, and the
    // final fit on the whole training split: independent, so they run in
    // parallel (which also keeps both cores busy on the last cells of a
    // run); results are placed by index, and the first error in fold order
    // is reported, so the outcome does not depend on scheduling.
    // Groups stay whole in the inner folds too, or an entity's rows would
    // score each other's out-of-fold forecasts.
    let groups: Option<Vec<u32>> = table
        .groups
        .as_ref()
        .map(|g| plan.train.iter().map(|&r| g[r]).collect());
    // With a time order, the calibration scores come from an expanding
    // window too: each inner fit sees only the past of what it scores.
    let times: Option<Vec<f64>> = table
        .order
        .as_ref()
        .map(|o| plan.train.iter().map(|&r| o[r]).collect());
    let inner = folds::assign(
        &y_train,
        groups.as_deref(),
        times.as_deref(),
        k,
        plan.inner_folds,
        plan.inner_seed,
    );
    let splits: Vec<(Vec<usize>, Vec<usize>)> = (0..plan.inner_folds)
        .map(|m| folds::split_for(&inner, m, times.is_some()))
        .collect();
    let mut fits: Vec<Result<Scores>> = (0..=plan.inner_folds)
        .into_par_iter()
        .map(|m| {
            let scores = match splits.get(m) {
                None => trainer.fit_and_score(table, plan.train, plan.test, k, plan.model_seed),
                Some((fit_pos, val_pos)) => {
                    let fit_rows: Vec<usize> = fit_pos.iter().map(|&i| plan.train[i]).collect();
                    let val_rows: Vec<usize> = val_pos.iter().map(|&i| plan.train[i]).collect();
                    let seed = derive_seed(plan.model_seed, &["inner fold", &m.to_string()]);
                    trainer.fit_and_score(table, &fit_rows, &val_rows, k, seed)
                }
            };
            plan.step.inspect(|step| step());
            scores
        })
        .collect();
    let test = fits
        .pop()
        .ok_or_else(|| Error::Fit("no inner folds".into()))?;
    let mut oof: Option<Scores> = None;
    for (scores, (_, val_pos)) in fits.into_iter().zip(&splits) {
        let scores = scores?;
        let all = oof.get_or_insert_with(|| Scores {
            proba: Array2::zeros((plan.train.len(), scores.proba.ncols())),
            native: scores
                .native
                .as_ref()
                .map(|s| Array2::zeros((plan.train.len(), s.ncols()))),
        });
        for (j, &i) in val_pos.iter().enumerate() {
            all.proba.row_mut(i).assign(&scores.proba.row(j));
            if let (Some(to), Some(from)) = (all.native.as_mut(), scores.native.as_ref()) {
                to.row_mut(i).assign(&from.row(j));
            }
        }
    }
    let oof = oof.ok_or_else(|| Error::Fit("no inner folds".into()))?;
    let test = test?;
    // With a time order, no inner fit scores the first time block: the
    // calibrators see only the scored rows.
    let (oof, y_oof) = if times.is_none() {
        (oof, y_train)
    } else {
        let scored: Vec<usize> = (0..inner.len()).filter(|&i| inner[i] > 0).collect();
        let pick = |a: &Array2<f64>| a.select(ndarray::Axis(0), &scored);
        (
            Scores {
                proba: pick(&oof.proba),
                native: oof.native.as_ref().map(pick),
            },
            scored.iter().map(|&i| y_train[i]).collect(),
        )
    };

    let results = evaluate_methods(
        &oof,
        &y_oof,
        &test,
        &y_test,
        methods,
        metrics,
        options,
        (plan.bootstrap, plan.bootstrap_seed),
    );
    plan.step.inspect(|step| step());
    Ok(results)
}

/// Fits every method on held-out scores `oof` (labels `y_oof`), applies it
/// to `test`, and measures the result against `y_test`; `bootstrap` is the
/// count and seed of the resamples for the intervals. A method that cannot
/// be fitted is recorded with its error.
#[allow(clippy::too_many_arguments)]
pub fn evaluate_methods(
    oof: &Scores,
    y_oof: &[usize],
    test: &Scores,
    y_test: &[usize],
    methods: &[(String, Box<dyn Calibrator>)],
    metrics: &[&Metric],
    options: &MetricOptions,
    bootstrap: (usize, u64),
) -> Vec<MethodResult> {
    let fitted = fit_methods(oof, y_oof, test.proba.ncols(), methods);
    measure_methods(&fitted, test, y_test, metrics, options, bootstrap)
}

/// One method fitted on held-out scores, or why it could not be.
pub struct FittedMethod {
    pub name: String,
    pub strategy: String,
    pub calibration: std::result::Result<Box<dyn Calibration>, String>,
}

/// Fits every method once on held-out scores.
pub fn fit_methods(
    oof: &Scores,
    y_oof: &[usize],
    k: usize,
    methods: &[(String, Box<dyn Calibrator>)],
) -> Vec<FittedMethod> {
    methods
        .iter()
        .map(|(name, method)| FittedMethod {
            name: name.clone(),
            strategy: method.strategy(k).to_string(),
            calibration: method.fit(oof, y_oof, k).map_err(|e| e.to_string()),
        })
        .collect()
}

/// Applies fitted methods to `test` and measures them against `y_test`.
pub fn measure_methods(
    fitted: &[FittedMethod],
    test: &Scores,
    y_test: &[usize],
    metrics: &[&Metric],
    options: &MetricOptions,
    bootstrap: (usize, u64),
) -> Vec<MethodResult> {
    fitted
        .iter()
        .map(|f| match &f.calibration {
            Ok(calibration) => {
                let p = calibration.apply(test);
                let fc = Forecasts::new(p.view(), y_test);
                let boot: Vec<&str> = metrics
                    .iter()
                    .map(|m| m.name)
                    .filter(|name| RESAMPLED.contains(name))
                    .collect();
                let seed = derive_seed(bootstrap.1, &["bootstrap", &f.name]);
                let bounds = if bootstrap.0 > 0 {
                    intervals(&fc, &boot, options, bootstrap.0, seed)
                } else {
                    Vec::new()
                };
                MethodResult {
                    method: f.name.clone(),
                    strategy: f.strategy.clone(),
                    metrics: metrics
                        .iter()
                        .map(|m| {
                            let v = (m.compute)(&fc, options);
                            (m.name.to_string(), v.is_finite().then_some(v))
                        })
                        .collect(),
                    intervals: boot
                        .iter()
                        .zip(bounds)
                        .map(|(m, [lo, hi])| {
                            let finite = |v: f64| v.is_finite().then_some(v);
                            (m.to_string(), [finite(lo), finite(hi)])
                        })
                        .collect(),
                    reliability: reliability(&fc, options.bins),
                    details: calibration.details(test),
                    warnings: calibration.warnings(),
                    error: None,
                }
            }
            Err(e) => MethodResult {
                method: f.name.clone(),
                strategy: f.strategy.clone(),
                metrics: BTreeMap::new(),
                intervals: BTreeMap::new(),
                reliability: Vec::new(),
                details: BTreeMap::new(),
                warnings: Vec::new(),
                error: Some(e.clone()),
            },
        })
        .collect()
}
