//! Choosing on one dataset: every (family, method) pair against the best
//! pair, paired fold by fold.
//!
//! All pairs of a dataset are measured on the same outer folds, so the
//! honest comparison is of per-fold differences, not of two separate
//! intervals: a pair is "tied with the best" when the 95% interval of its
//! per-fold difference from the best pair reaches 0, and "worse" when the
//! whole interval lies above it. The interval is Student's t with Nadeau &
//! Bengio's (2003) corrected variance (1/J + n_test/n_train) s^2, as
//! everywhere else in the report, because folds share training rows.
//! Differences are taken on the deciding metric's "badness" scale (the
//! metric itself when lower is better, its negative when higher is better),
//! so "worse by X" is always a positive amount of that metric.

use super::tables::{badness, direction};
use super::{test_over_train, Results};
use crate::common::stats::fold_interval;
use crate::common::table::{Table, Value};
use crate::experiment::summary::fold_values;
use crate::metrics::Metric;
use std::collections::BTreeMap;

/// Where a pair stands against the best pair of its dataset.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Standing {
    /// The pair with the best fold mean.
    Best,
    /// The mean difference from the best and its 95% interval, which
    /// reaches 0.
    Tied { diff: f64, low: f64, high: f64 },
    /// The same, with the interval wholly above 0.
    Worse { diff: f64, low: f64, high: f64 },
    /// A fold failed or the metric was undefined in one.
    Ineligible,
}

impl Standing {
    /// The words the tables show.
    pub fn words(&self) -> String {
        match *self {
            Standing::Best => "best".into(),
            Standing::Tied { .. } => "statistically tied with the best".into(),
            Standing::Worse { diff, low, high } => {
                format!("worse than the best by {diff:.4} [{low:.4}, {high:.4}]")
            }
            Standing::Ineligible => "not compared (a fold failed or was undefined)".into(),
        }
    }
}

/// Standings of pairs from their per-fold badness values (smaller is
/// better; every pair's folds in the same order); `ratio` is test rows over
/// training rows. The best pair has the smallest mean over eligible pairs;
/// ties on the mean go to the first.
pub fn standings(per_pair: &[Vec<f64>], ratio: f64) -> Vec<Standing> {
    let eligible = |v: &Vec<f64>| v.len() >= 2 && v.iter().all(|x| x.is_finite());
    let mean = |v: &Vec<f64>| v.iter().sum::<f64>() / v.len() as f64;
    let best = per_pair
        .iter()
        .enumerate()
        .filter(|(_, v)| eligible(v))
        .fold(None, |acc: Option<(usize, f64)>, (i, v)| {
            let m = mean(v);
            match acc {
                Some((_, b)) if b <= m => acc,
                _ => Some((i, m)),
            }
        })
        .map(|(i, _)| i);
    per_pair
        .iter()
        .enumerate()
        .map(|(i, v)| match best {
            Some(b) if i == b => Standing::Best,
            Some(b) if eligible(v) && v.len() == per_pair[b].len() => {
                let d: Vec<f64> = v.iter().zip(&per_pair[b]).map(|(x, y)| x - y).collect();
                let (diff, low, high) = fold_interval(&d, ratio);
                if low > 0.0 {
                    Standing::Worse { diff, low, high }
                } else {
                    Standing::Tied { diff, low, high }
                }
            }
            _ => Standing::Ineligible,
        })
        .collect()
}

/// Every pair of one dataset with its standing, in manifest order.
pub type DatasetStandings = Vec<(String, String, f64, Standing)>;

/// The standings of every independent dataset, by dataset name, computed
/// once for the datasets table and the choices table.
pub fn all(results: &Results, metric: &Metric) -> BTreeMap<String, DatasetStandings> {
    results
        .datasets()
        .map(|d| (d.name.clone(), for_dataset(results, &d.name, metric)))
        .collect()
}

/// Every pair of one dataset with its standing, in manifest order.
fn for_dataset(
    results: &Results,
    dataset: &str,
    metric: &Metric,
) -> Vec<(String, String, f64, Standing)> {
    let mut pairs = Vec::new();
    let mut values = Vec::new();
    let mut ratio = 0.0;
    for f in &results.exp.families {
        let cells = results.cells(dataset, &f.name);
        ratio = test_over_train(&cells);
        for m in &results.exp.methods {
            let v = fold_values(&cells, m, metric.name);
            let mean = v.iter().sum::<f64>() / v.len().max(1) as f64;
            pairs.push((f.name.clone(), m.clone(), mean));
            values.push(v.iter().map(|&x| badness(metric, x)).collect::<Vec<f64>>());
        }
    }
    standings(&values, ratio)
        .into_iter()
        .zip(pairs)
        .map(|(s, (f, m, mean))| (f, m, mean, s))
        .collect()
}

/// The choices table: per dataset, every pair against the best pair, best
/// first, then by mean.
pub fn table(
    results: &Results,
    metric: &Metric,
    standings: &BTreeMap<String, DatasetStandings>,
) -> Table {
    let m = metric.name;
    let mut t = Table::new(
        "choices",
        &format!("Each dataset: every family and method against the best pair, by {m}"),
        &[
            "dataset",
            "family",
            "method",
            m,
            "worse_by",
            "worse_by_low",
            "worse_by_high",
            "standing",
        ],
    );
    let e = &results.exp.evaluation;
    t.notes.push(format!(
        "Differences are paired fold by fold on the same {} x {} outer folds: `worse_by` is the pair's mean {m} minus the best pair's ({}, so positive is worse), with a 95% interval from Student's t with Nadeau & Bengio's corrected variance. A pair whose interval reaches 0 cannot be told apart from the best.",
        e.repeats,
        e.outer_folds,
        direction(metric)
    ));
    for d in results.datasets() {
        let mut rows = standings.get(&d.name).cloned().unwrap_or_default();
        let order = |s: &Standing| match s {
            Standing::Best => 0.0,
            Standing::Tied { diff, .. } | Standing::Worse { diff, .. } => *diff,
            Standing::Ineligible => f64::INFINITY,
        };
        rows.sort_by(|a, b| order(&a.3).total_cmp(&order(&b.3)));
        let eligible = rows.iter().filter(|r| r.3 != Standing::Ineligible).count();
        let tied = rows
            .iter()
            .filter(|r| matches!(r.3, Standing::Tied { .. }))
            .count();
        if eligible > 1 && tied + 1 == eligible {
            t.notes.push(format!(
                "On {}, every pair is tied with the best: the folds cannot tell them apart. More repeats (raise `repeats` in [evaluation]) narrow the intervals.",
                d.name
            ));
        }
        for (f, method, mean, s) in rows {
            let (diff, low, high) = match s {
                Standing::Tied { diff, low, high } | Standing::Worse { diff, low, high } => {
                    (diff, low, high)
                }
                Standing::Best => (0.0, f64::NAN, f64::NAN),
                Standing::Ineligible => (f64::NAN, f64::NAN, f64::NAN),
            };
            t.rows.push(vec![
                Value::from(d.name.as_str()),
                f.as_str().into(),
                method.as_str().into(),
                mean.into(),
                diff.into(),
                low.into(),
                high.into(),
                s.words().into(),
            ]);
        }
    }
    t
}
