//! The signed calibration gap: mean top-label confidence minus accuracy.
//! Positive means the forecasts are over-confident on average, negative
//! under-confident. Binary tasks use the confidence max(p, 1 - p).

use super::bins::argmax;
use super::Forecasts;

/// Mean confidence minus accuracy.
pub fn calibration_gap(fc: &Forecasts<'_>) -> f64 {
    let (p, y) = (fc.p, fc.y);
    let mut total = 0.0;
    for (row, &label) in p.rows().into_iter().zip(y) {
        let (top, conf) = argmax(row.iter().copied());
        total += conf - f64::from(u8::from(top == label));
    }
    total / y.len() as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::{binary, multiclass_toy};
    use crate::metrics::Forecasts;

    #[test]
    fn over_confidence_is_positive() {
        // Confidence 0.9 on every row, right half the time: +0.4.
        let p = binary(&[0.9, 0.9, 0.1, 0.1]);
        assert!((calibration_gap(&Forecasts::new(p.view(), &[1, 0, 0, 1])) - 0.4).abs() < 1e-12);
        // multiclass-toy data: confidences .6 .6 .5 .5 (mean .55), accuracy 2/4.
        let (p, y) = multiclass_toy();
        assert!((calibration_gap(&Forecasts::new(p.view(), &y)) - 0.05).abs() < 1e-12);
    }
}
