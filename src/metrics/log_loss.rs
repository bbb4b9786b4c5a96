//! Log loss (cross-entropy): the mean of -ln p(true class).
//!
//! Probabilities are clipped below at `LOG_LOSS_EPS` = 1e-15 so that a
//! confident mistake costs about 34.5 nats instead of infinity; the same
//! floor scikit-learn used for years, so values are comparable with it.

use super::Forecasts;

/// The clipping floor for the true class's probability.
pub const LOG_LOSS_EPS: f64 = 1e-15;

/// Mean negative log-likelihood of the true classes.
pub fn log_loss(fc: &Forecasts<'_>) -> f64 {
    let (p, y) = (fc.p, fc.y);
    let total: f64 = y
        .iter()
        .enumerate()
        .map(|(i, &label)| -p[[i, label]].clamp(LOG_LOSS_EPS, 1.0).ln())
        .sum();
    total / y.len() as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::Forecasts;
    use ndarray::{array, Array2};

    #[test]
    fn on_the_toy_forecaster() {
        // toy-logloss in docs/methods.md: 0.4575650744 (scikit-learn's
        // log_loss agrees).
        let p = [0.1, 0.1, 0.4, 0.4, 0.7, 0.7, 0.7, 0.9];
        let m = Array2::from_shape_fn((8, 2), |(i, j)| if j == 1 { p[i] } else { 1.0 - p[i] });
        let v = log_loss(&Forecasts::new(m.view(), &[0, 0, 0, 1, 0, 1, 1, 1]));
        assert!((v - 0.457_565_074_4).abs() < 1e-9);
    }

    #[test]
    fn multiclass_and_clipping() {
        // multiclass-toy in docs/methods.md: 0.90298.
        let p = array![
            [0.6, 0.3, 0.1],
            [0.6, 0.3, 0.1],
            [0.2, 0.5, 0.3],
            [0.2, 0.5, 0.3]
        ];
        assert!((log_loss(&Forecasts::new(p.view(), &[0, 1, 1, 2])) - 0.90298).abs() < 1e-5);
        let sure_and_wrong = array![[1.0, 0.0]];
        assert!(
            (log_loss(&Forecasts::new(sure_and_wrong.view(), &[1])) - -(1e-15f64).ln()).abs()
                < 1e-9
        );
    }
}
