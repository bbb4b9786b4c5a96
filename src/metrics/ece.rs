//! Expected calibration error with equal-width bins (Naeini, Cooper &
//! Hauskrecht 2015; Guo et al. 2017).
//!
//! Binary tasks bin the positive-class probability and compare it with the
//! positive rate in each bin, the convention of reliability diagrams.
//! Multiclass tasks use the top-label form: the highest probability
//! (confidence) against whether that class was right.
//!
//! Bin `b` of `M` holds probabilities in `[b/M, (b+1)/M)`, with 1.0 in the last
//! bin. Empty bins contribute nothing. Each bin's gap is weighted by its share
//! of rows.

use super::MetricOptions;
use ndarray::ArrayView2;

/// The bin of a probability among `bins` equal-width bins on [0, 1].
pub(crate) fn width_bin(p: f64, bins: usize) -> usize {
    ((p * bins as f64) as usize).min(bins - 1)
}

/// ECE over `opts.bins` equal-width bins.
pub fn ece(p: ArrayView2<'_, f64>, y: &[usize], opts: &MetricOptions) -> f64 {
    let bins = opts.bins.max(1);
    // Per bin: count, sum of forecasts, sum of outcomes. One allocation.
    let mut acc = vec![(0usize, 0.0f64, 0.0f64); bins];
    let binary = p.ncols() == 2;
    for (row, &label) in p.rows().into_iter().zip(y) {
        let (forecast, outcome) = if binary {
            (row[1], f64::from(u8::from(label == 1)))
        } else {
            let (top, conf) = argmax(row.iter().copied());
            (conf, f64::from(u8::from(top == label)))
        };
        let cell = &mut acc[width_bin(forecast, bins)];
        cell.0 += 1;
        cell.1 += forecast;
        cell.2 += outcome;
    }
    let n = y.len() as f64;
    acc.iter()
        .filter(|cell| cell.0 > 0)
        .map(|&(_, sum_forecast, sum_outcome)| (sum_forecast - sum_outcome).abs() / n)
        .sum()
}

/// The index and value of the largest entry; the first wins ties, so equal
/// probabilities resolve to the lower class index.
pub(crate) fn argmax(values: impl Iterator<Item = f64>) -> (usize, f64) {
    let mut best = (0, f64::NEG_INFINITY);
    for (i, v) in values.enumerate() {
        if v > best.1 {
            best = (i, v);
        }
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    fn binary(p: &[f64]) -> Array2<f64> {
        Array2::from_shape_fn(
            (p.len(), 2),
            |(i, j)| if j == 1 { p[i] } else { 1.0 - p[i] },
        )
    }

    const P: [f64; 8] = [0.1, 0.1, 0.4, 0.4, 0.7, 0.7, 0.7, 0.9];
    const Y: [usize; 8] = [0, 0, 0, 1, 0, 1, 1, 1];

    #[test]
    fn toy_forecaster_with_ten_and_two_bins() {
        // CV-01b and CV-01c in shared/reference/METHODS.md (toy forecaster
        // from Flach & Perello-Nieto's "Classifier Calibration" slides):
        // ECE 0.075 with 10 equal-width bins, 0 with 2 bins.
        let p = binary(&P);
        assert!((ece(p.view(), &Y, &MetricOptions { bins: 10 }) - 0.075).abs() < 1e-12);
        assert!(ece(p.view(), &Y, &MetricOptions { bins: 2 }).abs() < 1e-12);
    }

    #[test]
    fn multiclass_uses_the_top_label() {
        // CV-07 in shared/reference/METHODS.md: top-label ECE 0.05.
        let p = ndarray::array![
            [0.6, 0.3, 0.1],
            [0.6, 0.3, 0.1],
            [0.2, 0.5, 0.3],
            [0.2, 0.5, 0.3]
        ];
        let e = ece(p.view(), &[0, 1, 1, 2], &MetricOptions { bins: 10 });
        assert!((e - 0.05).abs() < 1e-12);
    }

    #[test]
    fn probability_one_falls_in_the_last_bin() {
        assert_eq!(width_bin(1.0, 15), 14);
        assert_eq!(width_bin(0.0, 15), 0);
    }
}
