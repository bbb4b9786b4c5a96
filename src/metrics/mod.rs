//! Metrics: pure functions from probabilities and labels to one number.
//!
//! Every metric takes the class-probability matrix (rows sum to 1, column `k`
//! is class `k`; for binary tasks column 1 is the positive class) and the
//! labels. Adding a metric is one new file plus one line in [`METRICS`].

mod accuracy;
mod brier;
mod ece;
mod log_loss;

pub use accuracy::accuracy;
pub use brier::brier;
pub use ece::ece;
pub use log_loss::{log_loss, LOG_LOSS_EPS};

use ndarray::ArrayView2;

/// Settings shared by the binned metrics.
#[derive(Debug, Clone, Copy)]
pub struct MetricOptions {
    /// Number of bins for binned estimators such as ECE.
    pub bins: usize,
}

/// A registry entry for a metric.
pub struct Metric {
    /// The name used in manifests and as the column name in `summary.csv`.
    pub name: &'static str,
    /// One line for `candor list metrics` and report legends.
    pub about: &'static str,
    /// Whether a larger value is better (accuracy) or worse (errors).
    pub higher_is_better: bool,
    /// The metric itself.
    pub compute: fn(ArrayView2<'_, f64>, &[usize], &MetricOptions) -> f64,
}

/// Every metric candor knows, in table order.
pub const METRICS: &[Metric] = &[
    Metric {
        name: "ece",
        about: "expected calibration error, equal-width bins (binary: positive class; multiclass: top label)",
        higher_is_better: false,
        compute: ece,
    },
    Metric {
        name: "brier",
        about: "Brier score (binary: positive class; multiclass: sum over classes)",
        higher_is_better: false,
        compute: |p, y, _| brier(p, y),
    },
    Metric {
        name: "log_loss",
        about: "mean negative natural log of the true class's probability, clipped at 1e-15",
        higher_is_better: false,
        compute: |p, y, _| log_loss(p, y),
    },
    Metric {
        name: "accuracy",
        about: "share of rows whose most probable class is the true class",
        higher_is_better: true,
        compute: |p, y, _| accuracy(p, y),
    },
];

/// Looks up a metric by name.
pub fn find(name: &str) -> Option<&'static Metric> {
    METRICS.iter().find(|m| m.name == name)
}

/// The known metric names, for error messages.
pub fn known_metrics() -> String {
    METRICS
        .iter()
        .map(|m| m.name)
        .collect::<Vec<_>>()
        .join(", ")
}
