//! The compact terminal table `candor run` prints: for each error metric,
//! one line per (dataset, family) and one column per calibration method,
//! with the best method in each line marked.

use super::Exporter;
use crate::metrics;
use crate::summary::Summary;

/// The terminal exporter; `metrics` chooses which metrics get a block.
pub struct Text {
    pub metrics: Vec<String>,
}

impl Exporter for Text {
    fn render(&self, s: &Summary) -> String {
        let mut methods: Vec<&str> = Vec::new();
        let mut lines: Vec<(&str, &str)> = Vec::new();
        for r in &s.rows {
            if !methods.contains(&r.method.as_str()) {
                methods.push(&r.method);
            }
            if !lines.contains(&(r.dataset.as_str(), r.family.as_str())) {
                lines.push((&r.dataset, &r.family));
            }
        }
        let dw = lines.iter().map(|l| l.0.len()).max().unwrap_or(0).max(7);
        let fw = lines.iter().map(|l| l.1.len()).max().unwrap_or(0).max(6);
        let cw = methods.iter().map(|m| m.len()).max().unwrap_or(0).max(8) + 1;
        let mut out = String::new();
        for name in &self.metrics {
            let Some(mi) = s.metrics.iter().position(|m| m == name) else {
                continue;
            };
            let higher_better =
                metrics::find(name).is_some_and(|m| m.higher_is_better == Some(true));
            let what = match name.as_str() {
                "ece" => format!("ECE ({} equal-width bins)", s.bins),
                "brier" => "Brier score".to_string(),
                "log_loss" => "log loss".to_string(),
                other => other.to_string(),
            };
            out.push_str(&format!(
                "{what}: mean over folds, * = best per line, {} is better\n",
                if higher_better { "higher" } else { "lower" }
            ));
            out.push_str(&format!("{:dw$}  {:fw$}", "dataset", "family"));
            for m in &methods {
                out.push_str(&format!(" {m:>cw$}"));
            }
            out.push('\n');
            for (d, f) in &lines {
                let values: Vec<f64> = methods
                    .iter()
                    .map(|m| {
                        s.rows
                            .iter()
                            .find(|r| r.dataset == *d && r.family == *f && r.method == *m)
                            .map_or(f64::NAN, |r| r.stats[mi].mean)
                    })
                    .collect();
                let best = values.iter().copied().filter(|v| v.is_finite()).fold(
                    None,
                    |acc: Option<f64>, v| match acc {
                        Some(b) if (higher_better && b >= v) || (!higher_better && b <= v) => {
                            Some(b)
                        }
                        _ => Some(v),
                    },
                );
                out.push_str(&format!("{d:dw$}  {f:fw$}"));
                for v in values {
                    let cell = if v.is_finite() {
                        let mark = if Some(v) == best { "*" } else { " " };
                        format!("{v:.4}{mark}")
                    } else {
                        "failed ".to_string()
                    };
                    out.push_str(&format!(" {cell:>cw$}"));
                }
                out.push('\n');
            }
            out.push('\n');
        }
        out
    }
}
