//! Metrics: pure functions from probabilities and labels to one number.
//!
//! Every metric reads a [`Forecasts`]: the class-probability matrix (rows
//! sum to 1, column `k` is class `k`; for binary tasks column 1 is the
//! positive class) and the labels. Calibration metrics that are defined
//! for one probability per row use the positive-class probability for
//! binary tasks and the top-label confidence for multiclass tasks. Adding a
//! metric is one new file plus one line in [`METRICS`].
//!
//! May import only `common`.

mod accuracy;
mod auc;
pub mod bins;
pub mod bootstrap;
mod brier;
mod cox;
mod ece;
mod forecasts;
mod gap;
mod hosmer_lemeshow;
mod kumar;
mod log_loss;
pub mod reliability;
mod spiegelhalter;
#[cfg(test)]
mod testing;

pub use accuracy::accuracy;
pub use auc::{auc, binary_auc};
pub use brier::{brier, murphy, Murphy};
pub use cox::{calibration_intercept, calibration_slope};
pub use ece::{ece, ece_classwise, ece_mass, mce};
pub use forecasts::Forecasts;
pub use gap::calibration_gap;
pub use hosmer_lemeshow::{hosmer_lemeshow, hosmer_lemeshow_p};
pub use kumar::{ce2, ce2_debiased};
pub use log_loss::{log_loss, LOG_LOSS_EPS};
pub use spiegelhalter::{spiegelhalter_p, spiegelhalter_z};

/// Settings of the binned metrics.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MetricOptions {
    /// Bins for ECE, MCE, the Murphy terms, squared CE and reliability data.
    pub bins: usize,
    /// Groups for the Hosmer-Lemeshow test.
    pub hl_groups: usize,
}

impl Default for MetricOptions {
    fn default() -> Self {
        MetricOptions {
            bins: 15,
            hl_groups: 10,
        }
    }
}

/// The signature every metric has.
pub type MetricFn = fn(&Forecasts<'_>, &MetricOptions) -> f64;

/// A registry entry for a metric.
pub struct Metric {
    /// The name used in manifests and as the column name in `summary.csv`.
    pub name: &'static str,
    /// One line for `candor list metrics` and the README's metric reference.
    pub about: &'static str,
    /// Whether a larger value is better (accuracy) or worse (errors); `None`
    /// for values read by their sign or distance from an ideal (slope).
    pub higher_is_better: Option<bool>,
    /// The metric itself.
    pub compute: MetricFn,
}

/// Every metric candor knows, in table order.
pub const METRICS: &[Metric] = &[
    Metric {
        name: "ece",
        about: "expected calibration error over equal-width bins (right-closed); binary: positive class, multiclass: top label",
        higher_is_better: Some(false),
        compute: ece,
    },
    Metric {
        name: "ece_mass",
        about: "expected calibration error over equal-mass bins, tied forecasts kept in one bin",
        higher_is_better: Some(false),
        compute: ece_mass,
    },
    Metric {
        name: "ece_classwise",
        about: "class-wise ECE: equal-width ECE of every class's probability column, averaged over classes",
        higher_is_better: Some(false),
        compute: ece_classwise,
    },
    Metric {
        name: "mce",
        about: "maximum calibration error: the largest gap over non-empty equal-width bins",
        higher_is_better: Some(false),
        compute: mce,
    },
    Metric {
        name: "calibration_gap",
        about: "mean top-label confidence minus accuracy; positive = over-confident",
        higher_is_better: None,
        compute: |f, _| calibration_gap(f),
    },
    Metric {
        name: "calibration_intercept",
        about: "Cox calibration in the large, logit P(y) = a + logit(p); ideal 0, a < 0 = forecasts too high",
        higher_is_better: None,
        compute: |f, _| calibration_intercept(f),
    },
    Metric {
        name: "calibration_slope",
        about: "Cox calibration slope, logit P(y) = a + b logit(p); ideal 1, b < 1 = too extreme",
        higher_is_better: None,
        compute: |f, _| calibration_slope(f),
    },
    Metric {
        name: "ce2",
        about: "squared calibration error, plug-in, equal-mass bins",
        higher_is_better: Some(false),
        compute: ce2,
    },
    Metric {
        name: "ce2_debiased",
        about: "squared calibration error with the bin-variance bias removed (Kumar et al. 2019); can be negative",
        higher_is_better: Some(false),
        compute: ce2_debiased,
    },
    Metric {
        name: "spiegelhalter_z",
        about: "Spiegelhalter's z statistic; near 0 when calibrated",
        higher_is_better: None,
        compute: |f, _| spiegelhalter_z(f),
    },
    Metric {
        name: "spiegelhalter_p",
        about: "two-sided p-value of Spiegelhalter's z test; small = evidence of miscalibration",
        higher_is_better: None,
        compute: |f, _| spiegelhalter_p(f),
    },
    Metric {
        name: "hosmer_lemeshow",
        about: "Hosmer-Lemeshow statistic over equal-mass groups (hl_groups)",
        higher_is_better: Some(false),
        compute: hosmer_lemeshow,
    },
    Metric {
        name: "hosmer_lemeshow_p",
        about: "p-value of the Hosmer-Lemeshow statistic on groups - 2 degrees of freedom",
        higher_is_better: None,
        compute: hosmer_lemeshow_p,
    },
    Metric {
        name: "brier",
        about: "Brier score; binary: mean (p - y)^2, multiclass: sum over classes",
        higher_is_better: Some(false),
        compute: |f, _| brier(f),
    },
    Metric {
        name: "brier_reliability",
        about: "Murphy reliability term of the Brier score over equal-width bins (the calibration part)",
        higher_is_better: Some(false),
        compute: |f, o| murphy(f, o).reliability,
    },
    Metric {
        name: "brier_resolution",
        about: "Murphy resolution term of the Brier score (higher = sharper, better)",
        higher_is_better: Some(true),
        compute: |f, o| murphy(f, o).resolution,
    },
    Metric {
        name: "brier_uncertainty",
        about: "Murphy uncertainty term: the base rate's variance, a property of the data",
        higher_is_better: None,
        compute: |f, o| murphy(f, o).uncertainty,
    },
    Metric {
        name: "log_loss",
        about: "mean negative natural log of the true class's probability, clipped at 1e-15",
        higher_is_better: Some(false),
        compute: |f, _| log_loss(f),
    },
    Metric {
        name: "auc",
        about: "ROC AUC, ties counted half; multiclass: macro one-vs-rest",
        higher_is_better: Some(true),
        compute: |f, _| auc(f),
    },
    Metric {
        name: "accuracy",
        about: "share of rows whose most probable class is the true class",
        higher_is_better: Some(true),
        compute: |f, _| accuracy(f),
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
