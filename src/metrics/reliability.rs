//! Reliability-diagram data: per equal-width bin, the number of rows, the
//! mean forecast, the observed frequency and its 95% Wilson score interval
//! (Wilson 1927), which stays inside [0, 1] and behaves at frequencies of 0
//! and 1 and in small bins, where the normal interval does not. The mean
//! forecast (not the bin centre) is the x position to plot.

use super::Forecasts;
use serde::{Deserialize, Serialize};

/// The z value of a two-sided 95% interval.
pub const Z95: f64 = 1.959_963_984_540_054;

/// One non-empty bin of a reliability diagram.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReliabilityBin {
    /// Bin index among the equal-width bins.
    pub bin: usize,
    pub count: usize,
    pub mean_forecast: f64,
    pub observed: f64,
    pub wilson_low: f64,
    pub wilson_high: f64,
}

/// The Wilson score interval for `successes` out of `n` at normal quantile
/// `z`.
pub fn wilson(successes: f64, n: f64, z: f64) -> (f64, f64) {
    let phat = successes / n;
    let z2 = z * z;
    let denom = 1.0 + z2 / n;
    let centre = (phat + z2 / (2.0 * n)) / denom;
    let half = z / denom * (phat * (1.0 - phat) / n + z2 / (4.0 * n * n)).sqrt();
    // At 0 or n successes the bound is exactly 0 or 1; rounding in
    // centre - half would otherwise leave a bound just inside.
    let low = if successes <= 0.0 {
        0.0
    } else {
        (centre - half).max(0.0)
    };
    let high = if successes >= n {
        1.0
    } else {
        (centre + half).min(1.0)
    };
    (low, high)
}

/// The non-empty bins of the diagram for the binary (positive-class) or
/// top-label forecasts.
pub fn reliability(fc: &Forecasts<'_>, bins: usize) -> Vec<ReliabilityBin> {
    fc.width_totals(bins)
        .iter()
        .enumerate()
        .filter(|(_, t)| t.count > 0)
        .map(|(bin, t)| {
            let (wilson_low, wilson_high) = wilson(t.sum_o, t.count as f64, Z95);
            ReliabilityBin {
                bin,
                count: t.count,
                mean_forecast: t.mean_f(),
                observed: t.mean_o(),
                wilson_low,
                wilson_high,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::toy_forecaster;
    use crate::metrics::Forecasts;

    #[test]
    fn wilson_matches_statsmodels() {
        // statsmodels 0.15.0, proportion_confint(k, n, method="wilson"):
        // (7, 20) -> (0.18119182410108203, 0.5671457233147638);
        // (0, 5) -> (0.0, 0.43448246478317487).
        let (lo, hi) = wilson(7.0, 20.0, Z95);
        assert!((lo - 0.181_191_824_101_082_03).abs() < 1e-12, "{lo}");
        assert!((hi - 0.567_145_723_314_763_8).abs() < 1e-12, "{hi}");
        let (lo, hi) = wilson(0.0, 5.0, Z95);
        assert!(
            lo == 0.0 && (hi - 0.434_482_464_783_174_87).abs() < 1e-12,
            "{hi}"
        );
    }

    #[test]
    fn toy_forecaster_matches_the_calibration_curve() {
        // toy-curve in docs/methods.md: scikit-learn's
        // calibration_curve(n_bins=10) gives prob_true (0, 0.5, 0.6667, 1)
        // and prob_pred (0.1, 0.4, 0.7, 0.9), empty bins dropped.
        let (p, y) = toy_forecaster();
        let r = reliability(&Forecasts::new(p.view(), &y), 10);
        let observed: Vec<f64> = r.iter().map(|b| b.observed).collect();
        let forecast: Vec<f64> = r.iter().map(|b| b.mean_forecast).collect();
        let want_o = [0.0, 0.5, 2.0 / 3.0, 1.0];
        let want_f = [0.1, 0.4, 0.7, 0.9];
        for i in 0..4 {
            assert!((observed[i] - want_o[i]).abs() < 1e-12);
            assert!((forecast[i] - want_f[i]).abs() < 1e-12);
        }
        assert_eq!(
            r.iter().map(|b| b.count).collect::<Vec<_>>(),
            vec![2, 2, 3, 1]
        );
    }
}
