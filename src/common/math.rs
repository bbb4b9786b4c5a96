//! Small numerical helpers shared by families, calibrators and metrics.

/// The logistic function, evaluated so that neither tail overflows.
pub fn sigmoid(z: f64) -> f64 {
    if z >= 0.0 {
        1.0 / (1.0 + (-z).exp())
    } else {
        let e = z.exp();
        e / (1.0 + e)
    }
}

/// The median of a non-empty slice of finite values (mean of the middle two
/// for even lengths). Selects on a copy rather than sorting it: linear time,
/// which matters when every fit imputes dozens of columns of a million rows.
pub fn median(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    let n = v.len();
    let (below, &mut middle, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    if n % 2 == 1 {
        middle
    } else {
        let lower = below
            .iter()
            .copied()
            .max_by(f64::total_cmp)
            .unwrap_or(middle);
        0.5 * (lower + middle)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sigmoid_is_symmetric_and_saturates_without_nan() {
        assert!((sigmoid(0.0) - 0.5).abs() < 1e-15);
        assert!((sigmoid(2.0) + sigmoid(-2.0) - 1.0).abs() < 1e-15);
        assert_eq!(sigmoid(1000.0), 1.0);
        assert_eq!(sigmoid(-1000.0), 0.0);
    }

    #[test]
    fn median_of_odd_and_even_lengths() {
        assert_eq!(median(&[3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median(&[4.0, 1.0, 2.0, 3.0]), 2.5);
    }

    #[test]
    fn median_by_selection_has_the_bits_of_median_by_sorting() {
        let mut rng = crate::common::rng::SplitMix64::new(7);
        for n in 1..300 {
            // Few distinct values, so ties and both zeros are common.
            let v: Vec<f64> = (0..n)
                .map(|_| [-0.0, 0.0, 1.5, -2.25, 3.0][rng.below(5)] * rng.below(4) as f64)
                .collect();
            let mut sorted = v.clone();
            sorted.sort_by(f64::total_cmp);
            let by_sorting = if n % 2 == 1 {
                sorted[n / 2]
            } else {
                0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
            };
            assert_eq!(median(&v).to_bits(), by_sorting.to_bits(), "{v:?}");
        }
    }
}
