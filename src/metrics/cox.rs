//! Calibration intercept and slope: the logistic recalibration of Cox
//! (1958).
//!
//! With x = logit(forecast), the **slope** b comes from fitting
//! logit P(y = 1) = a + b x; b < 1 means forecasts too extreme
//! (over-confident), b > 1 too moderate. The **intercept** (calibration in
//! the large) comes from logit P(y = 1) = a + x, with the slope held at 1;
//! a > 0 means forecasts too low on average, a < 0 too high. (The intercept
//! of the slope model is a different number and is not reported.)
//!
//! Forecasts are clipped to [1e-15, 1 - 1e-15] before the logit. Both fits
//! are maximum likelihood ([`crate::common::glm::logistic`]); when the outcomes are
//! separated by the forecasts the likelihood has no maximum and the value is
//! NaN (undefined). Multiclass tasks use the top-label
//! confidence and whether the top label was right.

use super::Forecasts;
use crate::common::glm::logistic;

const CLIP: f64 = 1e-15;

fn logits(f: &[f64]) -> Vec<f64> {
    f.iter()
        .map(|&p| {
            let p = p.clamp(CLIP, 1.0 - CLIP);
            (p / (1.0 - p)).ln()
        })
        .collect()
}

/// The calibration slope b (ideal 1).
pub fn calibration_slope(fc: &Forecasts<'_>) -> f64 {
    let (f, o) = fc.reduced();
    let x = logits(f);
    logistic(&[&x], None, o).map_or(f64::NAN, |beta| beta[1])
}

/// The calibration intercept a with the slope fixed at 1 (ideal 0).
pub fn calibration_intercept(fc: &Forecasts<'_>) -> f64 {
    let (f, o) = fc.reduced();
    logistic(&[], Some(&logits(f)), o).map_or(f64::NAN, |beta| beta[0])
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::common::rng::SplitMix64;
    use crate::metrics::testing::{binary, toy_forecaster};
    use crate::metrics::Forecasts;

    #[test]
    fn toy_forecaster_matches_statsmodels() {
        // cox-toy in docs/methods.md (statsmodels GLM binomial):
        // slope 1.34170 with that model's intercept -0.04790; calibration
        // in the large exactly 0 because mean p = mean y = 0.5.
        let (p, y) = toy_forecaster();
        let fc = Forecasts::new(p.view(), &y);
        let (f, o) = fc.reduced();
        let x = logits(f);
        let beta = logistic(&[&x], None, o).unwrap();
        let (a, b) = (beta[0], beta[1]);
        assert!((b - 1.34170).abs() < 5e-6, "{b}");
        assert!((a - -0.04790).abs() < 5e-6, "{a}");
        assert!(calibration_intercept(&Forecasts::new(p.view(), &y)).abs() < 1e-9);
    }

    #[test]
    fn an_over_fitted_model_has_slope_one_over_its_inflation() {
        // slope-overfit in docs/methods.md: true logit LP ~ N(0, 1.5^2),
        // predicted logit 1.3 LP; the slope tends to 1/1.3 = 0.7692 (the
        // reference's simulations with n = 1e6: 0.76888 and 0.76851, each
        // +-0.00168). Our own simulation must land within about 3.5 SE.
        let mut rng = SplitMix64::new(19);
        let n = 1_000_000;
        let mut probs = Vec::with_capacity(n);
        let mut labels = Vec::with_capacity(n);
        while probs.len() < n {
            let (u1, u2) = (rng.unit().max(1e-300), rng.unit());
            let z = (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos();
            let lp = 1.5 * z;
            labels.push(usize::from(rng.unit() < crate::common::math::sigmoid(lp)));
            probs.push(crate::common::math::sigmoid(1.3 * lp));
        }
        let b = calibration_slope(&Forecasts::new(binary(&probs).view(), &labels));
        assert!((b - 1.0 / 1.3).abs() < 0.006, "{b}");
    }

    #[test]
    fn separated_outcomes_have_no_slope() {
        let p = binary(&[0.1, 0.2, 0.8, 0.9]);
        assert!(calibration_slope(&Forecasts::new(p.view(), &[0, 0, 1, 1])).is_nan());
    }
}
