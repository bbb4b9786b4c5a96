//! Temperature scaling (Guo et al. 2017): divide the native scores (logits
//! or log-probabilities) by one temperature T > 0 fitted by minimising the
//! log loss on the out-of-fold scores, then apply the softmax.
//!
//! Multiclass tasks use it natively, one T for all classes; it never changes
//! the most probable class, so accuracy is unchanged. Binary tasks are the
//! special case q = sigmoid(z / T) on the log-odds z. The log loss is convex
//! in beta = 1/T, so a safeguarded Newton method on beta finds the global
//! optimum. If the optimum lies beyond T in [1e-4, 1e4] (scores that
//! separate the classes perfectly want T -> 0), T stops at the bound and a
//! warning is recorded.

use super::{Calibration, Calibrator};
use crate::common::error::Result;
use crate::common::scores::Scores;
use ndarray::Array2;

/// Temperature scaling.
pub struct Temperature;

const BETA_MIN: f64 = 1e-4;
const BETA_MAX: f64 = 1e4;

/// Probabilities are floored here before their logarithm is taken, for
/// families without a native score.
const LOG_FLOOR: f64 = 1e-12;

/// Per-class scores as logits: binary log-odds z become (0, z); families
/// without a native score give their log-probabilities (floored at 1e-12),
/// as scikit-learn's temperature scaling does.
fn logits(scores: &Scores, n_classes: usize) -> Array2<f64> {
    match &scores.native {
        Some(native) if n_classes == 2 => {
            let z = native.column(0);
            Array2::from_shape_fn((z.len(), 2), |(i, j)| if j == 1 { z[i] } else { 0.0 })
        }
        Some(native) => native.clone(),
        None => scores.proba.mapv(|p| p.max(LOG_FLOOR).ln()),
    }
}

/// Gradient and second derivative of the log loss in beta.
fn derivatives(z: &Array2<f64>, labels: &[usize], beta: f64) -> (f64, f64) {
    let (mut g, mut h) = (0.0, 0.0);
    let mut q = vec![0.0; z.ncols()];
    for (row, &y) in z.rows().into_iter().zip(labels) {
        let max = row.iter().fold(f64::NEG_INFINITY, |m, &v| m.max(beta * v));
        let mut sum = 0.0;
        for (qk, &v) in q.iter_mut().zip(row.iter()) {
            *qk = (beta * v - max).exp();
            sum += *qk;
        }
        let (mut mean, mut second) = (0.0, 0.0);
        for (qk, &v) in q.iter().zip(row.iter()) {
            if *qk > 0.0 {
                let w = qk / sum;
                mean += w * v;
                second += w * v * v;
            }
        }
        g += mean - row[y];
        h += (second - mean * mean).max(0.0);
    }
    (g, h)
}

/// The fitted inverse temperature and whether it hit a bound.
fn fit_beta(z: &Array2<f64>, labels: &[usize]) -> (f64, bool) {
    let (mut lo, mut hi) = (BETA_MIN, BETA_MAX);
    if derivatives(z, labels, BETA_MAX).0 <= 0.0 {
        return (BETA_MAX, true);
    }
    if derivatives(z, labels, BETA_MIN).0 >= 0.0 {
        return (BETA_MIN, true);
    }
    let mut beta = 1.0;
    for _ in 0..200 {
        let (g, h) = derivatives(z, labels, beta);
        if g < 0.0 {
            lo = beta;
        } else {
            hi = beta;
        }
        let newton = beta - g / h;
        let next = if h > 0.0 && newton > lo && newton < hi {
            newton
        } else {
            (lo * hi).sqrt()
        };
        if (next - beta).abs() <= 1e-13 * beta || hi / lo < 1.0 + 1e-13 {
            return (next, false);
        }
        beta = next;
    }
    (beta, false)
}

struct Fitted {
    beta: f64,
    n_classes: usize,
    warnings: Vec<String>,
}

impl Calibrator for Temperature {
    fn strategy(&self, n_classes: usize) -> &'static str {
        if n_classes == 2 {
            "binary"
        } else {
            "multiclass, one temperature"
        }
    }

    fn fit(
        &self,
        oof: &Scores,
        labels: &[usize],
        n_classes: usize,
    ) -> Result<Box<dyn Calibration>> {
        let (beta, at_bound) = fit_beta(&logits(oof, n_classes), labels);
        let warnings = if at_bound {
            vec![format!(
                "the temperature stopped at its bound T = {}: the log loss keeps falling towards it (scores that separate the classes, or carry no information)",
                1.0 / beta
            )]
        } else {
            Vec::new()
        };
        Ok(Box::new(Fitted {
            beta,
            n_classes,
            warnings,
        }))
    }
}

/// A temperature calibration from its inverse temperature, for a file
/// written by [`super::CalibrationFile`].
pub(crate) fn from_beta(beta: f64, n_classes: usize) -> Box<dyn Calibration> {
    Box::new(Fitted {
        beta,
        n_classes,
        warnings: Vec::new(),
    })
}

impl Calibration for Fitted {
    fn apply(&self, scores: &Scores) -> Array2<f64> {
        let z = logits(scores, self.n_classes) * self.beta;
        crate::common::scores::softmax_rows(&z)
    }

    fn export(&self) -> Option<super::Exported> {
        Some(super::Exported::Temperature(self.beta))
    }

    fn warnings(&self) -> Vec<String> {
        self.warnings.clone()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::{accuracy, Forecasts};

    #[test]
    fn analytic_optimum_and_calibrated_confidence() {
        // temperature-analytic in docs/methods.md: K = 3, logit m = 2 on one
        // class and 0 elsewhere, top-label accuracy 0.75 gives
        // T* = 2 / ln 6 = 1.116221, and confidence 0.78699 before and 0.75
        // after.
        let native = ndarray::array![
            [2.0, 0.0, 0.0],
            [0.0, 2.0, 0.0],
            [0.0, 0.0, 2.0],
            [2.0, 0.0, 0.0]
        ];
        let labels = [0, 1, 2, 1];
        let scores = Scores {
            proba: crate::common::scores::softmax_rows(&native),
            native: Some(native),
        };
        assert!((scores.proba[[0, 0]] - 0.78699).abs() < 1e-5);
        let (beta, bound) = fit_beta(&logits(&scores, 3), &labels);
        assert!(!bound);
        assert!(
            (1.0 / beta - 2.0 / 6f64.ln()).abs() < 1e-9,
            "T = {}",
            1.0 / beta
        );
        let fitted = Temperature.fit(&scores, &labels, 3).unwrap();
        let p = fitted.apply(&scores);
        assert!((p[[0, 0]] - 0.75).abs() < 1e-9);
        // Argmax, hence accuracy, is unchanged (properties (a)).
        let before = accuracy(&Forecasts::new(scores.proba.view(), &labels));
        let after = accuracy(&Forecasts::new(p.view(), &labels));
        assert_eq!(before, after);
    }

    #[test]
    fn separable_scores_stop_at_the_bound_with_a_warning() {
        let native = ndarray::array![[-3.0], [-1.0], [2.0], [4.0]];
        let scores = Scores {
            proba: ndarray::Array2::from_elem((4, 2), 0.5),
            native: Some(native),
        };
        let fitted = Temperature.fit(&scores, &[0, 0, 1, 1], 2).unwrap();
        assert_eq!(fitted.warnings().len(), 1);
    }
}
