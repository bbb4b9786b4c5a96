//! Squared calibration error with equal-mass bins, plug-in and debiased
//! (Kumar, Liang & Ma 2019; the bias correction of Broecker 2012 and Ferro &
//! Fricker 2012).
//!
//! Plug-in: sum (n_b / n) (ybar_b - sbar_b)^2. Debiased: the same minus each
//! bin's sampling variance ybar_b (1 - ybar_b) / (n_b - 1), which removes
//! the upward bias the plug-in value has even for a perfectly calibrated
//! forecaster. The debiased value estimates a non-negative quantity but can
//! itself be **negative** (for a well-calibrated model on a small fold it
//! often is); it is reported as computed, never clipped. It is undefined
//! (NaN) when a bin holds a single row. Multiclass tasks use the top-label
//! confidence.

use super::{Forecasts, MetricOptions};

fn squared(fc: &Forecasts<'_>, opts: &MetricOptions, debias: bool) -> f64 {
    let n = fc.n() as f64;
    let mut total = 0.0;
    for b in fc.mass_totals(opts.bins).iter().filter(|b| b.count > 0) {
        let gap = (b.mean_o() - b.mean_f()).powi(2);
        let correction = if debias {
            if b.count < 2 {
                return f64::NAN;
            }
            b.mean_o() * (1.0 - b.mean_o()) / (b.count as f64 - 1.0)
        } else {
            0.0
        };
        total += b.count as f64 / n * (gap - correction);
    }
    total
}

/// The plug-in squared calibration error.
pub fn ce2(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    squared(fc, opts, false)
}

/// The debiased squared calibration error; may be negative.
pub fn ce2_debiased(fc: &Forecasts<'_>, opts: &MetricOptions) -> f64 {
    squared(fc, opts, true)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::toy_forecaster;
    use crate::metrics::Forecasts;

    fn opts(bins: usize) -> MetricOptions {
        MetricOptions {
            bins,
            ..Default::default()
        }
    }

    #[test]
    fn toy_forecaster_plug_in_and_debiased() {
        // kumar-debiased in docs/methods.md: with 2 equal-mass bins the
        // plug-in value is 0 and the debiased one -0.0625.
        let (p, y) = toy_forecaster();
        assert!(ce2(&Forecasts::new(p.view(), &y), &opts(2)).abs() < 1e-15);
        assert!((ce2_debiased(&Forecasts::new(p.view(), &y), &opts(2)) - -0.0625).abs() < 1e-12);
        // With 4 bins, a rank split (numpy.array_split) splits the tie at
        // 0.7 and gives 0.025 and -0.100. Keeping ties whole leaves 0.9
        // alone in its bin: the plug-in value is
        // (2(.01) + 2(.01) + 3/900 + .01) / 8 and the debiased one is
        // undefined, as the same check value says.
        let plug = ce2(&Forecasts::new(p.view(), &y), &opts(4));
        assert!((plug - (0.05 + 3.0 / 900.0) / 8.0).abs() < 1e-12, "{plug}");
        assert!(ce2_debiased(&Forecasts::new(p.view(), &y), &opts(4)).is_nan());
    }
}
