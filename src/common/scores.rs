//! The scores a fitted model emits and the row-wise maps between
//! log-scores and probabilities.
//!
//! Families produce [`Scores`] and calibrators consume them, so the type
//! lives below both; neither needs the other to name it.

use crate::common::math::sigmoid;
use ndarray::Array2;

/// What a fitted model says about a set of rows.
#[derive(Debug, Clone)]
pub struct Scores {
    /// Class probabilities, one row per input row and one column per class;
    /// each row sums to 1. This is the "raw" (uncalibrated) forecast.
    pub proba: Array2<f64>,
    /// The family's native score, which calibrators such as Platt scaling
    /// work on: for a binary task one column holding the positive class's
    /// log-odds (or margin); for a multiclass task one column per class
    /// (logits or log-probabilities). `None` for families without one
    /// (trees, forests, nearest neighbours), whose calibrators then read the
    /// probabilities.
    pub native: Option<Array2<f64>>,
}

/// Turns per-class log-scores (log-likelihoods or logits) into normalised
/// log-probabilities with the max-shift, so that very negative scores do not
/// underflow to `ln(0/0)`.
pub fn log_softmax_rows(scores: &Array2<f64>) -> Array2<f64> {
    let mut out = scores.clone();
    for mut row in out.rows_mut() {
        let max = row.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let sum: f64 = row.iter().map(|v| (v - max).exp()).sum();
        let log_norm = max + sum.ln();
        row.mapv_inplace(|v| v - log_norm);
    }
    out
}

/// Probabilities from per-class log-scores; see [`log_softmax_rows`].
pub fn softmax_rows(scores: &Array2<f64>) -> Array2<f64> {
    log_softmax_rows(scores).mapv(f64::exp)
}

/// Probabilities `[1 - p, p]` from the positive class's log-odds, computed
/// without cancellation at either extreme.
pub fn binary_from_log_odds(z: &[f64]) -> Array2<f64> {
    let mut out = Array2::zeros((z.len(), 2));
    for (i, &zi) in z.iter().enumerate() {
        let p = sigmoid(zi);
        out[[i, 1]] = p;
        out[[i, 0]] = sigmoid(-zi);
    }
    out
}

/// Divides each row by its sum; an all-zero row becomes uniform.
pub fn renormalise(p: &mut Array2<f64>) {
    let k = p.ncols() as f64;
    for mut row in p.rows_mut() {
        let sum: f64 = row.sum();
        if sum > 0.0 {
            row.mapv_inplace(|v| v / sum);
        } else {
            row.fill(1.0 / k);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn renormalisation_matches_the_reference_sheet() {
        // ovr-renormalise in docs/methods.md (scikit-learn's one-vs-rest
        // normalisation logic): (0.5, 0.3, 0.4) -> (0.41667, 0.25, 0.33333).
        let mut p = array![[0.5, 0.3, 0.4], [0.0, 0.0, 0.0]];
        renormalise(&mut p);
        assert!((p[[0, 0]] - 0.5 / 1.2).abs() < 1e-12);
        assert!((p[[0, 1]] - 0.25).abs() < 1e-12);
        assert!((p[[0, 2]] - 0.4 / 1.2).abs() < 1e-12);
        assert_eq!(p.row(1).to_vec(), vec![1.0 / 3.0; 3]);
    }
}
