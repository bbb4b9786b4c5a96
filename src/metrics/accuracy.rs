//! Accuracy of the most probable class; ties go to the lower class index, so
//! a binary forecast of exactly 0.5 predicts the negative class.

use super::bins::argmax;
use super::Forecasts;

/// Share of rows whose most probable class is the true one.
pub fn accuracy(fc: &Forecasts<'_>) -> f64 {
    let (p, y) = (fc.p, fc.y);
    let hits = p
        .rows()
        .into_iter()
        .zip(y)
        .filter(|(row, &label)| argmax(row.iter().copied()).0 == label)
        .count();
    hits as f64 / y.len() as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn counts_hits_and_breaks_ties_low() {
        let p = array![[0.2, 0.8], [0.5, 0.5], [0.9, 0.1]];
        assert!((accuracy(&Forecasts::new(p.view(), &[1, 1, 1])) - 1.0 / 3.0).abs() < 1e-15);
    }
}
