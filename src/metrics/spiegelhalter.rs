//! Spiegelhalter's (1986) z test of calibration.
//!
//! Z = sum (y - p)(1 - 2p) / sqrt(sum (1 - 2p)^2 p (1 - p)), standard normal
//! when the forecasts are calibrated; the p-value is two-sided. Large |Z|
//! (small p) is evidence of miscalibration; a large p is not proof of
//! calibration. Undefined (NaN) when every forecast is 0, 0.5 or 1.
//! Multiclass tasks use the top-label confidence.

use super::Forecasts;
use statrs::distribution::{ContinuousCDF, Normal};

fn z_of(f: &[f64], o: &[f64]) -> f64 {
    let (mut num, mut var) = (0.0, 0.0);
    for (&p, &y) in f.iter().zip(o) {
        num += (y - p) * (1.0 - 2.0 * p);
        var += (1.0 - 2.0 * p).powi(2) * p * (1.0 - p);
    }
    if var > 0.0 {
        num / var.sqrt()
    } else {
        f64::NAN
    }
}

/// The z statistic.
pub fn spiegelhalter_z(fc: &Forecasts<'_>) -> f64 {
    let (f, o) = fc.reduced();
    z_of(f, o)
}

/// The two-sided p-value of the z statistic.
pub fn spiegelhalter_p(fc: &Forecasts<'_>) -> f64 {
    two_sided_normal(spiegelhalter_z(fc))
}

/// 2 P(Z > |z|) for a standard normal Z.
pub fn two_sided_normal(z: f64) -> f64 {
    if z.is_nan() {
        return f64::NAN;
    }
    // The standard normal's parameters are valid, so `new` cannot fail.
    Normal::new(0.0, 1.0).map_or(f64::NAN, |n| 2.0 * n.sf(z.abs()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::toy_forecaster;
    use crate::metrics::Forecasts;

    #[test]
    fn on_the_toy_forecaster() {
        // spiegelhalter-toy in docs/methods.md: z = -0.29569, two-sided
        // p = 0.76747.
        let (p, y) = toy_forecaster();
        assert!((spiegelhalter_z(&Forecasts::new(p.view(), &y)) - -0.29569).abs() < 5e-6);
        assert!((spiegelhalter_p(&Forecasts::new(p.view(), &y)) - 0.76747).abs() < 5e-6);
    }
}
