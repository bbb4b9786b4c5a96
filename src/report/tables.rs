//! The report's three summary tables: every metric with its interval and
//! change from raw; each family's medians across datasets; each dataset's
//! best family before and after calibration.

use super::{test_over_train, Results};
use crate::common::stats::fold_interval;
use crate::common::table::{Table, Value};
use crate::experiment::summary::fold_values;
use crate::metrics::Metric;
use std::collections::BTreeMap;

/// A mean over folds with its 95% interval, and the paired change from the
/// raw (`none`) row with its own interval.
#[derive(Debug, Clone, Copy)]
pub struct Interval {
    pub mean: f64,
    pub low: f64,
    pub high: f64,
    pub change: f64,
    pub change_low: f64,
    pub change_high: f64,
}

/// Key: (dataset, family, method, metric).
pub type Intervals = BTreeMap<(String, String, String, String), Interval>;

/// How far a value is from the ideal, so smaller is always better: the
/// value for errors, its negative for scores, the distance from 1 for the
/// calibration slope and from 0 for the other signed quantities. p-values
/// and the outcome's own uncertainty are not qualities and rank as NaN.
pub fn badness(metric: &Metric, v: f64) -> f64 {
    match (metric.higher_is_better, metric.name) {
        (Some(false), _) => v,
        (Some(true), _) => -v,
        (None, "calibration_slope") => (v - 1.0).abs(),
        (None, "calibration_gap" | "calibration_intercept" | "spiegelhalter_z") => v.abs(),
        _ => f64::NAN,
    }
}

/// The AUC lost by a calibrated pair against its raw model, when the
/// paired fold interval of the change lies wholly below 0: the map ranks
/// rows worse than the scores it was given. `None` otherwise, or without
/// AUC in the results.
pub fn auc_loss(intervals: &Intervals, dataset: &str, family: &str, method: &str) -> Option<f64> {
    if method == "none" {
        return None;
    }
    let key = (
        dataset.to_string(),
        family.to_string(),
        method.to_string(),
        "auc".to_string(),
    );
    intervals
        .get(&key)
        .filter(|i| i.change_high < 0.0)
        .map(|i| -i.change)
}

/// Whether a metric can be improved by giving up discrimination: every
/// calibration error is 0 for forecasts that always state the base rate,
/// while proper scores (Brier, log loss) and discrimination measures are not
/// fooled.
pub fn blind_to_ranking(metric: &Metric) -> bool {
    !matches!(
        metric.name,
        "brier" | "log_loss" | "auc" | "accuracy" | "brier_resolution" | "brier_uncertainty"
    )
}

/// The note that says so, for tables that name a best pair.
fn ranking_note(metric: &Metric) -> Option<String> {
    blind_to_ranking(metric).then(|| format!(
        "{} rewards constant forecasts: a map that states the base rate for every row scores well on it and ranks nothing. Pairs marked `AUC below raw` lost discrimination against their raw model (the paired fold interval of the AUC change lies below 0); judge them with a proper score such as `brier`.",
        metric.name
    ))
}

/// Intervals for every (dataset, family, method, metric) in the results.
pub fn intervals(results: &Results) -> Intervals {
    let mut out = BTreeMap::new();
    for d in &results.exp.datasets {
        for f in &results.exp.families {
            let cells = results.cells(&d.name, &f.name);
            let ratio = test_over_train(&cells);
            for metric in &results.exp.metrics {
                let raw = fold_values(&cells, "none", metric);
                for method in &results.exp.methods {
                    let v = fold_values(&cells, method, metric);
                    let (mean, low, high) = interval(&v, ratio);
                    let diff: Vec<f64> = v.iter().zip(&raw).map(|(a, b)| a - b).collect();
                    let (change, change_low, change_high) = interval(&diff, ratio);
                    out.insert(
                        (
                            d.name.clone(),
                            f.name.clone(),
                            method.clone(),
                            metric.clone(),
                        ),
                        Interval {
                            mean,
                            low,
                            high,
                            change,
                            change_low,
                            change_high,
                        },
                    );
                }
            }
        }
    }
    out
}

fn interval(v: &[f64], ratio: f64) -> (f64, f64, f64) {
    if v.is_empty() || v.iter().any(|x| !x.is_finite()) {
        return (f64::NAN, f64::NAN, f64::NAN);
    }
    fold_interval(v, ratio)
}

/// The strategy a method used on a (dataset, family), from its first cell.
fn strategy(results: &Results, dataset: &str, family: &str, method: &str) -> String {
    results
        .cells(dataset, family)
        .iter()
        .find_map(|c| c.results.iter().find(|r| r.method == method))
        .map(|r| r.strategy.clone())
        .unwrap_or_default()
}

fn bins_note(results: &Results) -> String {
    let e = &results.exp.evaluation;
    format!(
        "Binned metrics use {} equal-width bins (ECE, MCE, reliability) or {} equal-mass groups (Hosmer-Lemeshow) in every row; binary rows score the positive class, multiclass rows the top label.",
        e.bins, e.hl_groups
    )
}

fn interval_note(results: &Results) -> String {
    let e = &results.exp.evaluation;
    let mut note = format!(
        "Intervals: 95% over the {} x {} outer folds, Student's t with Nadeau & Bengio's corrected variance (1/J + n_test/n_train) s^2, because folds share training rows; a change is paired fold by fold against the raw row (`none`).",
        e.repeats, e.outer_folds
    );
    for d in &results.exp.datasets {
        if let Some(t) = &d.time {
            note.push_str(&format!(
                " `{}` is time-ordered by `{t}`: its rows are cut into {} blocks by time, fold f trains on blocks 1 to f and tests on block f + 1 (an expanding window), and its calibration scores come from the past only.",
                d.name,
                e.outer_folds + 1
            ));
        } else if let Some(g) = &d.group {
            note.push_str(&format!(
                " `{}` keeps each `{g}` group whole in one fold, outer and inner.",
                d.name
            ));
        }
    }
    note
}

/// How each dataset's folds were made, for the notes of tables that
/// compare datasets.
pub fn scheme_note(results: &Results) -> Option<String> {
    let special: Vec<String> = results
        .exp
        .datasets
        .iter()
        .filter_map(|d| match (&d.time, &d.group) {
            (Some(t), _) => Some(format!("`{}` time-ordered by `{t}`", d.name)),
            (None, Some(g)) => Some(format!("`{}` grouped by `{g}`", d.name)),
            (None, None) => None,
        })
        .collect();
    (!special.is_empty()).then(|| {
        format!(
            "Folds are stratified K-fold except: {} (see the metrics table's notes).",
            special.join(", ")
        )
    })
}

/// Per (dataset, family, method, metric): mean, interval and change.
pub fn metric_table(results: &Results, intervals: &Intervals) -> Table {
    let mut t = Table::new(
        "metrics",
        "Every metric per dataset, family and method, with 95% intervals and the change from raw",
        &[
            "dataset",
            "family",
            "method",
            "strategy",
            "metric",
            "mean",
            "low",
            "high",
            "change",
            "change_low",
            "change_high",
        ],
    );
    t.notes.push(interval_note(results));
    t.notes.push(bins_note(results));
    t.notes.push("Empty values: the family or method failed, or the metric was undefined, in at least one fold.".into());
    for d in &results.exp.datasets {
        for f in &results.exp.families {
            for method in &results.exp.methods {
                let s = strategy(results, &d.name, &f.name, method);
                for metric in &results.exp.metrics {
                    let key = (
                        d.name.clone(),
                        f.name.clone(),
                        method.clone(),
                        metric.clone(),
                    );
                    let Some(i) = intervals.get(&key) else {
                        continue;
                    };
                    t.rows.push(vec![
                        d.name.as_str().into(),
                        f.name.as_str().into(),
                        method.as_str().into(),
                        s.as_str().into(),
                        metric.as_str().into(),
                        i.mean.into(),
                        i.low.into(),
                        i.high.into(),
                        i.change.into(),
                        i.change_low.into(),
                        i.change_high.into(),
                    ]);
                }
            }
        }
    }
    t
}

/// The mean over folds, NaN if any fold is missing.
pub(super) fn mean(
    results: &Results,
    dataset: &str,
    family: &str,
    method: &str,
    metric: &str,
) -> f64 {
    let v = fold_values(&results.cells(dataset, family), method, metric);
    if v.is_empty() {
        return f64::NAN;
    }
    v.iter().sum::<f64>() / v.len() as f64
}

/// Median of the finite values; NaN if there are none.
fn median(values: &[f64]) -> f64 {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if finite.is_empty() {
        f64::NAN
    } else {
        crate::common::math::median(&finite)
    }
}

fn distinct(values: impl Iterator<Item = String>) -> String {
    let mut v: Vec<String> = values.filter(|s| !s.is_empty()).collect();
    v.sort();
    v.dedup();
    v.join("; ")
}

/// Per family and method: medians across datasets before and after, and
/// the method with the best median of the chosen metric.
pub fn family_table(results: &Results, metric: &Metric, intervals: &Intervals) -> Table {
    let has = |m: &str| results.exp.metrics.iter().any(|x| x == m);
    // The deciding metric gets its own column unless it is shown already.
    let extra = !matches!(metric.name, "ece" | "brier");
    let chosen_column = format!("median_{}", metric.name);
    let mut columns = vec![
        "family",
        "method",
        "datasets",
        "median_ece",
        "median_ece_change",
        "median_brier",
        "median_brier_change",
    ];
    if extra {
        columns.push(&chosen_column);
    }
    columns.extend(["auc_below_raw", "best", "strategies"]);
    let best_at = columns.len() - 2;
    let mut t = Table::new(
        "families",
        "Each family across datasets: median ECE and Brier score after each method",
        &columns,
    );
    t.notes.push(format!(
        "Medians over datasets of the fold means; `none` is the raw model, changes are medians of the per-dataset change from it. `best` marks each family's method with the best median {} ({}).",
        metric.name,
        direction(metric)
    ));
    t.notes.push("`auc_below_raw`: on how many datasets the method's AUC fell below the raw model's by more than its paired fold interval.".into());
    t.notes.extend(ranking_note(metric));
    t.notes.push(bins_note(results));
    let n_datasets = results.datasets().count();
    for f in &results.exp.families {
        let mut rows = Vec::new();
        let mut scores = Vec::new();
        let mut losses = Vec::new();
        for method in &results.exp.methods {
            let per = |m: &str| -> Vec<f64> {
                if !has(m) {
                    return Vec::new();
                }
                results
                    .datasets()
                    .map(|d| mean(results, &d.name, &f.name, method, m))
                    .collect()
            };
            let change = |m: &str| -> Vec<f64> {
                let after = per(m);
                let before: Vec<f64> = if !has(m) {
                    Vec::new()
                } else {
                    results
                        .datasets()
                        .map(|d| mean(results, &d.name, &f.name, "none", m))
                        .collect()
                };
                after.iter().zip(&before).map(|(a, b)| a - b).collect()
            };
            let chosen = median(&per(metric.name));
            let n = per(metric.name).iter().filter(|v| v.is_finite()).count();
            scores.push(badness(metric, chosen));
            let strategies = distinct(
                results
                    .datasets()
                    .map(|d| strategy(results, &d.name, &f.name, method)),
            );
            let mut row = vec![
                Value::from(f.name.as_str()),
                method.as_str().into(),
                n.into(),
                median(&per("ece")).into(),
                median(&change("ece")).into(),
                median(&per("brier")).into(),
                median(&change("brier")).into(),
            ];
            if extra {
                row.push(chosen.into());
            }
            let lost = results
                .datasets()
                .filter(|d| auc_loss(intervals, &d.name, &f.name, method).is_some())
                .count();
            losses.push(lost);
            row.extend([lost.into(), Value::from(""), strategies.into()]);
            rows.push(row);
        }
        if let Some(best) = argmin(&scores) {
            rows[best][best_at] = if losses[best] > 0 {
                format!("best; AUC below raw on {} of {n_datasets}", losses[best]).into()
            } else {
                "best".into()
            };
        }
        t.rows.extend(rows);
    }
    if t.rows
        .iter()
        .any(|r| matches!(r.last(), Some(Value::Text(s)) if s.contains(';')))
    {
        t.notes.push("Rows whose `strategies` lists more than one value pool binary and multiclass datasets, which the method handles differently.".into());
    }
    t
}

/// "lower is better" and its kin, for notes.
pub fn direction(metric: &Metric) -> &'static str {
    match (metric.higher_is_better, metric.name) {
        (Some(false), _) => "lower is better",
        (Some(true), _) => "higher is better",
        (None, "calibration_slope") => "closer to 1 is better",
        _ => "closer to 0 is better",
    }
}

/// Index of the smallest finite value; the first on ties.
pub(super) fn argmin(v: &[f64]) -> Option<usize> {
    v.iter()
        .enumerate()
        .filter(|(_, x)| x.is_finite())
        .fold(None, |acc: Option<(usize, f64)>, (i, &x)| match acc {
            Some((_, b)) if b <= x => acc,
            _ => Some((i, x)),
        })
        .map(|(i, _)| i)
}

/// Per dataset: the best family raw, and the best (family, method) pair,
/// with where the best raw family stands against the best pair (paired
/// fold by fold, see [`super::choices`]) and how many pairs are tied.
pub fn dataset_table(
    results: &Results,
    metric: &Metric,
    intervals: &Intervals,
    standings: &BTreeMap<String, super::choices::DatasetStandings>,
) -> Table {
    let m = metric.name;
    let mut t = Table::new(
        "datasets",
        &format!("Each dataset: the best family before and after calibration, by {m}"),
        &[
            "dataset",
            "classes",
            "best_raw_family",
            &format!("raw_{m}"),
            "best_calibrated",
            &format!("calibrated_{m}"),
            "strategy",
            "best_raw_against_best",
            "tied_with_best",
        ],
    );
    t.notes.push(format!(
        "Best = best fold mean of {m} ({}); a pair whose family or method failed in any fold is not eligible. `best_raw_against_best` compares the best raw family with the best pair of all (raw or calibrated) on the same folds; `tied_with_best` counts the pairs whose paired interval reaches 0 (the `choices` table lists every pair).",
        direction(metric)
    ));
    t.notes.extend(ranking_note(metric));
    t.notes.extend(scheme_note(results));
    for d in results.datasets() {
        let raw: Vec<f64> = results
            .exp
            .families
            .iter()
            .map(|f| mean(results, &d.name, &f.name, "none", m))
            .collect();
        let mut pairs = Vec::new();
        let mut values = Vec::new();
        for f in &results.exp.families {
            for method in results.exp.methods.iter().filter(|x| *x != "none") {
                pairs.push((f.name.as_str(), method.as_str()));
                values.push(mean(results, &d.name, &f.name, method, m));
            }
        }
        let score = |v: &[f64]| v.iter().map(|&x| badness(metric, x)).collect::<Vec<f64>>();
        let best_raw = argmin(&score(&raw));
        let best_cal = argmin(&score(&values));
        let standings: &[(String, String, f64, super::choices::Standing)] =
            standings.get(&d.name).map_or(&[], Vec::as_slice);
        let raw_standing = best_raw.and_then(|i| {
            let f = &results.exp.families[i].name;
            standings
                .iter()
                .find(|(sf, sm, _, _)| sf == f && sm == "none")
                .map(|(_, _, _, s)| s.words())
        });
        let eligible = standings
            .iter()
            .filter(|r| r.3 != super::choices::Standing::Ineligible)
            .count();
        let tied = standings
            .iter()
            .filter(|r| matches!(r.3, super::choices::Standing::Tied { .. }))
            .count();
        let calibrated = best_cal.map_or("–".to_string(), |i| {
            let (f, method) = pairs[i];
            match auc_loss(intervals, &d.name, f, method) {
                Some(lost) => format!("{f} + {method} (AUC below raw by {lost:.4})"),
                None => format!("{f} + {method}"),
            }
        });
        t.rows.push(vec![
            d.name.as_str().into(),
            results.classes(&d.name).into(),
            best_raw.map_or("–".into(), |i| {
                results.exp.families[i].name.as_str().into()
            }),
            best_raw.map_or(f64::NAN, |i| raw[i]).into(),
            calibrated.into(),
            best_cal.map_or(f64::NAN, |i| values[i]).into(),
            best_cal
                .map_or(String::new(), |i| {
                    strategy(results, &d.name, pairs[i].0, pairs[i].1)
                })
                .into(),
            raw_standing.unwrap_or_else(|| "–".into()).into(),
            format!("{tied} of {}", eligible.saturating_sub(1)).into(),
        ]);
    }
    t
}
