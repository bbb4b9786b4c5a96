//! Folding per-fold records into one row per (dataset, family, method).

use crate::manifest::Experiment;
use crate::store::CellRecord;

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
                let mut values: Vec<Vec<f64>> = vec![Vec::new(); exp.metrics.len()];
                let mut failed = 0;
                let mut strategy = String::new();
                for cell in &cells {
                    let result = cell.results.iter().find(|m| &m.method == method);
                    if let Some(r) = result {
                        strategy.clone_from(&r.strategy);
                    }
                    // A failed family or method, or a value undefined in one
                    // fold (a slope on outcomes the forecasts separate), makes
                    // the mean undefined: averaging only the other folds
                    // would pick the folds that favour the method.
                    let ok = result.filter(|r| r.error.is_none());
                    failed += usize::from(ok.is_none());
                    for (i, name) in exp.metrics.iter().enumerate() {
                        let v = ok.and_then(|r| r.metrics.get(name).copied().flatten());
                        values[i].push(v.unwrap_or(f64::NAN));
                    }
                }
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
