//! `summary.csv`: one row per (dataset, family, method).
//!
//! Columns: `dataset`, `family`, `method`, then for each metric its mean over
//! folds under the metric's own name and its standard deviation as
//! `<metric>_sd`, then `strategy`, `folds`, `failed_folds`,
//! `manifest_sha256` and `candor_version`. Undefined values (a standard
//! deviation from one fold, a row whose folds all failed) are empty fields.

use super::Exporter;
use crate::summary::Summary;

/// The CSV exporter.
pub struct Csv;

fn number(v: f64) -> String {
    if v.is_finite() {
        format!("{v}")
    } else {
        String::new()
    }
}

impl Exporter for Csv {
    fn render(&self, s: &Summary) -> String {
        let mut w = ::csv::WriterBuilder::new().from_writer(Vec::new());
        let mut header = vec!["dataset".to_string(), "family".into(), "method".into()];
        for m in &s.metrics {
            header.push(m.clone());
            header.push(format!("{m}_sd"));
        }
        for extra in [
            "strategy",
            "folds",
            "failed_folds",
            "manifest_sha256",
            "candor_version",
        ] {
            header.push(extra.into());
        }
        // Writing to memory cannot fail.
        let _ = w.write_record(&header);
        for r in &s.rows {
            let mut fields = vec![r.dataset.clone(), r.family.clone(), r.method.clone()];
            for st in &r.stats {
                fields.push(number(st.mean));
                fields.push(number(st.sd));
            }
            fields.push(r.strategy.clone());
            fields.push(r.folds.to_string());
            fields.push(r.failed.to_string());
            fields.push(s.manifest_sha256.clone());
            fields.push(s.candor_version.clone());
            let _ = w.write_record(&fields);
        }
        String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
    }
}
