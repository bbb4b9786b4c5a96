//! Shared worked examples for the metric tests.

use ndarray::{array, Array2};

/// A binary probability matrix from positive-class probabilities.
pub fn binary(p: &[f64]) -> Array2<f64> {
    Array2::from_shape_fn(
        (p.len(), 2),
        |(i, j)| if j == 1 { p[i] } else { 1.0 - p[i] },
    )
}

/// The toy forecaster of docs/methods.md (its toy-* check values), from Flach &
/// Perello-Nieto's "Classifier Calibration" slides.
pub fn toy_forecaster() -> (Array2<f64>, Vec<usize>) {
    (
        binary(&[0.1, 0.1, 0.4, 0.4, 0.7, 0.7, 0.7, 0.9]),
        vec![0, 0, 0, 1, 0, 1, 1, 1],
    )
}

/// The multiclass toy of docs/methods.md (check value multiclass-toy).
pub fn multiclass_toy() -> (Array2<f64>, Vec<usize>) {
    (
        array![
            [0.6, 0.3, 0.1],
            [0.6, 0.3, 0.1],
            [0.2, 0.5, 0.3],
            [0.2, 0.5, 0.3]
        ],
        vec![0, 1, 1, 2],
    )
}
