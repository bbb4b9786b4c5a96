//! Percentile bootstrap intervals for a metric within one test fold
//! (Efron's percentile method): resample the fold's rows with replacement,
//! recompute the metric (bins included) on each resample, and take the
//! 2.5% and 97.5% quantiles (linear interpolation between order
//! statistics, numpy's default). The interval reflects sampling of the test
//! rows only, not the variability of fitting the model or the calibrator;
//! and plug-in ECE is biased upwards, so its interval can exclude 0 for a
//! perfectly calibrated model.

use super::{Forecasts, MetricFn, MetricOptions};
use crate::common::rng::SplitMix64;
use ndarray::Array2;

/// The q-quantile of sorted values by linear interpolation.
pub fn quantile(sorted: &[f64], q: f64) -> f64 {
    let pos = q * (sorted.len() - 1) as f64;
    let lo = pos.floor() as usize;
    let hi = pos.ceil() as usize;
    sorted[lo] + (sorted[hi] - sorted[lo]) * (pos - lo as f64)
}

/// 95% percentile intervals of several metrics from the same resamples.
/// Returns one `[low, high]` per metric, or NaNs when `resamples` is 0.
pub fn intervals(
    fc: &Forecasts<'_>,
    metrics: &[MetricFn],
    opts: &MetricOptions,
    resamples: usize,
    seed: u64,
) -> Vec<[f64; 2]> {
    let (p, y) = (fc.p, fc.y);
    let n = y.len();
    if resamples == 0 || n == 0 {
        return vec![[f64::NAN, f64::NAN]; metrics.len()];
    }
    let mut rng = SplitMix64::new(seed);
    let mut values: Vec<Vec<f64>> = vec![Vec::with_capacity(resamples); metrics.len()];
    let mut rp = Array2::zeros((n, p.ncols()));
    let mut ry = vec![0; n];
    for _ in 0..resamples {
        for (i, label) in ry.iter_mut().enumerate() {
            let j = rng.below(n);
            rp.row_mut(i).assign(&p.row(j));
            *label = y[j];
        }
        let resampled = Forecasts::new(rp.view(), &ry);
        for (m, f) in metrics.iter().enumerate() {
            values[m].push(f(&resampled, opts));
        }
    }
    values
        .into_iter()
        .map(|mut v| {
            v.retain(|x| !x.is_nan());
            if v.is_empty() {
                return [f64::NAN, f64::NAN];
            }
            v.sort_by(f64::total_cmp);
            [quantile(&v, 0.025), quantile(&v, 0.975)]
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::{brier, ece, testing::binary, Forecasts, MetricFn};

    #[test]
    fn quantiles_match_numpy() {
        // numpy.quantile([1, 2, 3, 4], [0.025, 0.975]) = [1.075, 3.925].
        let v = [1.0, 2.0, 3.0, 4.0];
        assert!((quantile(&v, 0.025) - 1.075).abs() < 1e-12);
        assert!((quantile(&v, 0.975) - 3.925).abs() < 1e-12);
    }

    #[test]
    fn intervals_cover_the_estimate_and_are_reproducible() {
        let mut rng = SplitMix64::new(4);
        let probs: Vec<f64> = (0..400).map(|_| rng.unit()).collect();
        let y: Vec<usize> = probs.iter().map(|&q| usize::from(rng.unit() < q)).collect();
        let p = binary(&probs);
        let opts = MetricOptions::default();
        let fs: [MetricFn; 2] = [ece, |f, _| brier(f)];
        let fc = Forecasts::new(p.view(), &y);
        let a = intervals(&fc, &fs, &opts, 300, 9);
        assert_eq!(a, intervals(&fc, &fs, &opts, 300, 9));
        let b = brier(&fc);
        assert!(a[1][0] < b && b < a[1][1]);
        assert!(a[0][0] > 0.0 && a[0][0] < a[0][1]);
    }
}
