//! Average ranks of the (family, method) pairs across datasets, with the
//! Friedman and Iman-Davenport tests and the Nemenyi critical difference
//! (Demšar 2006).

use super::tables::{badness, direction};
use super::Results;
use crate::common::stats::{critical_difference, friedman, nemenyi_q, ranks, Friedman};
use crate::common::table::{Table, Value};
use crate::experiment::summary::fold_values;
use crate::metrics::Metric;

/// The ranking of every (family, method) pair on one metric.
#[derive(Debug, Clone)]
pub struct Ranking {
    pub metric: String,
    pub direction: &'static str,
    /// (family, method), sorted by average rank, best first.
    pub pairs: Vec<(String, String)>,
    pub avg_ranks: Vec<f64>,
    /// Datasets that entered the ranking.
    pub datasets: Vec<String>,
    /// Datasets left out because some pair had no value there.
    pub excluded: Vec<String>,
    pub friedman: Friedman,
    /// Nemenyi critical differences at alpha 0.05 and 0.10.
    pub cd05: f64,
    pub cd10: f64,
    /// Whether binary and multiclass datasets are ranked together.
    pub mixed: bool,
}

/// Ranks pairs across the datasets where every pair has a value; `None`
/// with fewer than two pairs or two such datasets, or for a metric that
/// has no better direction.
pub fn rank(results: &Results, metric: &Metric) -> Option<Ranking> {
    if badness(metric, 0.5).is_nan() {
        return None;
    }
    let mut pairs = Vec::new();
    for f in &results.exp.families {
        for m in &results.exp.methods {
            pairs.push((f.name.clone(), m.clone()));
        }
    }
    let k = pairs.len();
    let mut rank_rows = Vec::new();
    let (mut used, mut excluded) = (Vec::new(), Vec::new());
    for d in results.datasets() {
        let values: Vec<f64> = pairs
            .iter()
            .map(|(f, m)| {
                let v = fold_values(&results.cells(&d.name, f), m, metric.name);
                let mean = v.iter().sum::<f64>() / v.len().max(1) as f64;
                if v.is_empty() {
                    f64::NAN
                } else {
                    badness(metric, mean)
                }
            })
            .collect();
        if values.iter().all(|v| v.is_finite()) {
            rank_rows.push(ranks(&values));
            used.push(d.name.clone());
        } else {
            excluded.push(d.name.clone());
        }
    }
    let n = rank_rows.len();
    if k < 2 || n < 2 {
        return None;
    }
    let avg: Vec<f64> = (0..k)
        .map(|j| rank_rows.iter().map(|r| r[j]).sum::<f64>() / n as f64)
        .collect();
    let test = friedman(&avg, n);
    let mut order: Vec<usize> = (0..k).collect();
    order.sort_by(|&a, &b| avg[a].total_cmp(&avg[b]).then(a.cmp(&b)));
    let classes: Vec<bool> = used.iter().map(|d| results.classes(d) > 2).collect();
    Some(Ranking {
        metric: metric.name.to_string(),
        direction: direction(metric),
        pairs: order.iter().map(|&i| pairs[i].clone()).collect(),
        avg_ranks: order.iter().map(|&i| avg[i]).collect(),
        datasets: used,
        excluded,
        friedman: test,
        cd05: critical_difference(nemenyi_q(k, 0.05), k, n),
        cd10: critical_difference(nemenyi_q(k, 0.10), k, n),
        mixed: classes.iter().any(|&c| c) && classes.iter().any(|&c| !c),
    })
}

/// Four decimals, or scientific notation below 0.0001 so a tiny p is not
/// printed as 0.
fn p_value(p: f64) -> String {
    if p > 0.0 && p < 1e-4 {
        format!("{p:.2e}")
    } else {
        format!("{p:.4}")
    }
}

impl Ranking {
    /// The ranking table with the tests in its notes.
    pub fn table(&self) -> Table {
        let mut t = Table::new(
            "ranking",
            &format!(
                "Average rank of each (family, method) pair across datasets by {}",
                self.metric
            ),
            &[
                "position",
                "family",
                "method",
                "average_rank",
                "behind_best",
                "differs_from_best",
            ],
        );
        let f = &self.friedman;
        t.notes.push(format!(
            "Ranks within each dataset by the fold mean of {} ({}), 1 = best, ties share the mean rank; {} pairs over {} datasets.",
            self.metric,
            self.direction,
            self.pairs.len(),
            self.datasets.len()
        ));
        t.notes.push(format!(
            "Friedman chi-square = {:.4} (df {}), p = {}; Iman-Davenport F = {:.4} (df {}, {}), p = {}.",
            f.chi2,
            f.chi2_df,
            p_value(f.chi2_p),
            f.f,
            f.f_df1,
            f.f_df2,
            p_value(f.f_p)
        ));
        t.notes.push(format!(
            "Nemenyi critical difference: {:.4} at alpha 0.05, {:.4} at alpha 0.10; `differs_from_best` = the gap to the best pair is at least the 0.05 difference.",
            self.cd05, self.cd10
        ));
        if !self.excluded.is_empty() {
            t.notes.push(format!(
                "Left out because some pair failed there or the metric was undefined: {}.",
                self.excluded.join(", ")
            ));
        }
        if self.mixed {
            t.notes.push("Binary and multiclass datasets are ranked together; multiclass rows use each method's multiclass strategy (see the metrics table).".into());
        }
        let best = self.avg_ranks.first().copied().unwrap_or(f64::NAN);
        for (i, ((fam, m), r)) in self.pairs.iter().zip(&self.avg_ranks).enumerate() {
            let behind = r - best;
            t.rows.push(vec![
                Value::Count(i + 1),
                fam.as_str().into(),
                m.as_str().into(),
                (*r).into(),
                behind.into(),
                if behind >= self.cd05 { "yes" } else { "no" }.into(),
            ]);
        }
        t
    }
}
