//! Folding per-fold records into one row per (dataset, family, method).

use crate::common::table::{Table, Value};
use crate::experiment::manifest::Experiment;
use crate::experiment::protocol::MethodResult;
use crate::experiment::store::CellRecord;
use crate::metrics;

/// Mean and spread of one metric over all folds; NaN when the family or
/// method failed, or the metric was undefined, in any of them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stat {
    pub mean: f64,
    /// Sample standard deviation over folds (n - 1 denominator); NaN when
    /// fewer than two folds succeeded.
    pub sd: f64,
}

/// One row of the summary table.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub dataset: String,
    pub family: String,
    pub method: String,
    /// How the method handled the classes; one value per row by design.
    pub strategy: String,
    /// Folds (over all repeats) that produced this row's numbers.
    pub folds: usize,
    /// Folds where the family or the method failed.
    pub failed: usize,
    /// One statistic per metric, in `Summary::metrics` order.
    pub stats: Vec<Stat>,
}

/// The summary table with what is needed to trace it.
#[derive(Debug, Clone, PartialEq)]
pub struct Summary {
    pub experiment: String,
    pub metrics: Vec<String>,
    pub bins: usize,
    pub rows: Vec<Row>,
    pub manifest_sha256: String,
    pub candor_version: String,
}

/// Summarises records; rows follow the manifest's order of datasets,
/// families and methods.
pub fn summarise(exp: &Experiment, records: &[CellRecord]) -> Summary {
    let mut rows = Vec::new();
    for d in &exp.datasets {
        for f in &exp.families {
            let cells: Vec<&CellRecord> = records
                .iter()
                .filter(|r| r.dataset == d.name && r.family == f.name)
                .collect();
            for method in &exp.methods {
                let strategy = cells
                    .iter()
                    .find_map(|c| c.results.iter().find(|m| &m.method == method))
                    .map(|r| r.strategy.clone())
                    .unwrap_or_default();
                let failed = cells
                    .iter()
                    .filter(|c| method_result(c, method).is_none())
                    .count();
                let values: Vec<Vec<f64>> = exp
                    .metrics
                    .iter()
                    .map(|name| fold_values(&cells, method, name))
                    .collect();
                rows.push(Row {
                    dataset: d.name.clone(),
                    family: f.name.clone(),
                    method: method.clone(),
                    strategy,
                    folds: cells.len() - failed,
                    failed,
                    stats: values.iter().map(|v| stat(v)).collect(),
                });
            }
        }
    }
    Summary {
        experiment: exp.name.clone(),
        metrics: exp.metrics.clone(),
        bins: exp.evaluation.bins,
        rows,
        manifest_sha256: exp.source.sha256.clone(),
        candor_version: crate::VERSION.to_string(),
    }
}

/// A method's successful result in one cell, if the family and the method
/// both fitted.
pub fn method_result<'a>(cell: &'a CellRecord, method: &str) -> Option<&'a MethodResult> {
    cell.results
        .iter()
        .find(|m| m.method == method)
        .filter(|r| r.error.is_none())
}

/// One metric's value in each cell, in the cells' order, NaN where the
/// family or method failed or the metric was undefined. A failed fold makes
/// any mean over these undefined: averaging only the other folds would pick
/// the folds that favour the method.
pub fn fold_values(cells: &[&CellRecord], method: &str, metric: &str) -> Vec<f64> {
    cells
        .iter()
        .map(|c| {
            method_result(c, method)
                .and_then(|r| r.metrics.get(metric).copied().flatten())
                .unwrap_or(f64::NAN)
        })
        .collect()
}

impl Summary {
    /// The `summary.csv` table: `dataset`, `family`, `method`, then for each
    /// metric its mean over folds under the metric's own name and its
    /// standard deviation as `<metric>_sd`, then `strategy`, `folds`,
    /// `failed_folds`, `manifest_sha256` and `candor_version`.
    pub fn table(&self) -> Table {
        let mut columns = vec!["dataset".to_string(), "family".into(), "method".into()];
        for m in &self.metrics {
            columns.push(m.clone());
            columns.push(format!("{m}_sd"));
        }
        for extra in [
            "strategy",
            "folds",
            "failed_folds",
            "manifest_sha256",
            "candor_version",
        ] {
            columns.push(extra.into());
        }
        let rows = self
            .rows
            .iter()
            .map(|r| {
                let mut v: Vec<Value> = vec![
                    r.dataset.as_str().into(),
                    r.family.as_str().into(),
                    r.method.as_str().into(),
                ];
                for st in &r.stats {
                    v.push(st.mean.into());
                    v.push(st.sd.into());
                }
                v.push(r.strategy.as_str().into());
                v.push(r.folds.into());
                v.push(r.failed.into());
                v.push(self.manifest_sha256.as_str().into());
                v.push(self.candor_version.as_str().into());
                v
            })
            .collect();
        Table {
            name: "summary".into(),
            title: format!("{}: every metric, mean and sd over folds", self.experiment),
            notes: Vec::new(),
            columns,
            rows,
        }
    }

    /// The terminal view of one metric: a line per (dataset, family), a
    /// column per method, the best method of each line marked with `*`.
    pub fn by_method(&self, metric: &str) -> Option<Table> {
        let mi = self.metrics.iter().position(|m| m == metric)?;
        let higher = metrics::find(metric).and_then(|m| m.higher_is_better);
        let mut methods: Vec<&str> = Vec::new();
        let mut lines: Vec<(&str, &str)> = Vec::new();
        for r in &self.rows {
            if !methods.contains(&r.method.as_str()) {
                methods.push(&r.method);
            }
            if !lines.contains(&(r.dataset.as_str(), r.family.as_str())) {
                lines.push((&r.dataset, &r.family));
            }
        }
        let what = match metric {
            "ece" => format!("ECE ({} equal-width bins)", self.bins),
            "brier" => "Brier score".to_string(),
            "log_loss" => "log loss".to_string(),
            other => other.to_string(),
        };
        let direction = match higher {
            Some(true) => ", * = best per line, higher is better",
            Some(false) => ", * = best per line, lower is better",
            None => "",
        };
        let mut columns = vec!["dataset", "family"];
        columns.extend(&methods);
        let mut t = Table::new(
            &format!("by_method_{metric}"),
            &format!("{what}: mean over folds{direction}"),
            &columns,
        );
        for (d, f) in lines {
            let found: Vec<Option<&Row>> = methods
                .iter()
                .map(|m| {
                    self.rows
                        .iter()
                        .find(|r| r.dataset == d && r.family == f && r.method == *m)
                })
                .collect();
            let values: Vec<f64> = found
                .iter()
                .map(|r| r.map_or(f64::NAN, |r| r.stats[mi].mean))
                .collect();
            let best = higher.and_then(|h| {
                values
                    .iter()
                    .copied()
                    .filter(|v| v.is_finite())
                    .reduce(|a, b| if (h && b > a) || (!h && b < a) { b } else { a })
            });
            let mut row: Vec<Value> = vec![d.into(), f.into()];
            row.extend(values.iter().zip(&found).map(|(&v, r)| {
                Value::Text(if !v.is_finite() {
                    // A row a method could not fill, or one the scores'
                    // kind rules out (a margin is no probability).
                    match r {
                        Some(r) if r.strategy == crate::experiment::score::MARGIN_NOTE => {
                            "n/a".to_string()
                        }
                        _ => "failed".to_string(),
                    }
                } else if Some(v) == best {
                    format!("{v:.4}*")
                } else {
                    format!("{v:.4} ")
                })
            }));
            t.rows.push(row);
        }
        Some(t)
    }
}

fn stat(v: &[f64]) -> Stat {
    let n = v.len() as f64;
    if v.is_empty() {
        return Stat {
            mean: f64::NAN,
            sd: f64::NAN,
        };
    }
    let mean = v.iter().sum::<f64>() / n;
    let sd = if v.len() < 2 {
        f64::NAN
    } else {
        (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
    };
    Stat { mean, sd }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sample_standard_deviation() {
        // numpy.std([1, 2, 3, 4], ddof=1) = 1.2909944487358056.
        let s = stat(&[1.0, 2.0, 3.0, 4.0]);
        assert!((s.mean - 2.5).abs() < 1e-15);
        assert!((s.sd - 1.290_994_448_735_805_6).abs() < 1e-15);
        assert!(stat(&[1.0]).sd.is_nan());
    }
}
