//! The Brier score (Brier 1950).
//!
//! Binary tasks use the positive-class form, mean (p - y)^2, which is
//! scikit-learn's `brier_score_loss` and half the two-class sum. Multiclass
//! tasks use the original sum over classes, which ranges over [0, 2].

use ndarray::ArrayView2;

/// Mean squared difference between forecast and outcome.
pub fn brier(p: ArrayView2<'_, f64>, y: &[usize]) -> f64 {
    let n = y.len() as f64;
    if p.ncols() == 2 {
        return p
            .column(1)
            .iter()
            .zip(y)
            .map(|(&q, &label)| (q - f64::from(u8::from(label == 1))).powi(2))
            .sum::<f64>()
            / n;
    }
    p.rows()
        .into_iter()
        .zip(y)
        .map(|(row, &label)| {
            row.iter()
                .enumerate()
                .map(|(k, &q)| (q - f64::from(u8::from(k == label))).powi(2))
                .sum::<f64>()
        })
        .sum::<f64>()
        / n
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::{array, Array2};

    #[test]
    fn toy_forecaster() {
        // CV-01 in shared/reference/METHODS.md: 0.1525 (scikit-learn's
        // brier_score_loss agrees).
        let p = [0.1, 0.1, 0.4, 0.4, 0.7, 0.7, 0.7, 0.9];
        let m = Array2::from_shape_fn((8, 2), |(i, j)| if j == 1 { p[i] } else { 1.0 - p[i] });
        assert!((brier(m.view(), &[0, 0, 0, 1, 0, 1, 1, 1]) - 0.1525).abs() < 1e-12);
    }

    #[test]
    fn multiclass_sums_over_classes() {
        // CV-07 in shared/reference/METHODS.md: 0.57.
        let p = array![
            [0.6, 0.3, 0.1],
            [0.6, 0.3, 0.1],
            [0.2, 0.5, 0.3],
            [0.2, 0.5, 0.3]
        ];
        assert!((brier(p.view(), &[0, 1, 1, 2]) - 0.57).abs() < 1e-12);
    }
}
