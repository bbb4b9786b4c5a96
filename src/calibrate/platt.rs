//! Platt scaling, P(y = 1 | f) = 1 / (1 + exp(A f + B)), fitted with the
//! Newton method and backtracking line search of Lin, Lin & Weng (2007) on
//! Platt's smoothed targets t+ = (N+ + 1)/(N+ + 2), t- = 1/(N- + 2).

use super::{BinaryCalibrator, BinaryMap, Input};
use crate::common::error::Result;

/// Platt scaling on the family's native score.
pub struct Platt;

/// A fitted Platt map; `A < 0` for a score that rises with the positive class.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlattMap {
    pub a: f64,
    pub b: f64,
}

const MAX_ITER: usize = 100;
const MIN_STEP: f64 = 1e-10;
const SIGMA: f64 = 1e-12;
const EPS: f64 = 1e-5;

/// The smoothed negative log-likelihood at (a, b), in its overflow-free form.
fn objective(f: &[f64], t: &[f64], a: f64, b: f64) -> f64 {
    f.iter()
        .zip(t)
        .map(|(&fi, &ti)| {
            let z = fi * a + b;
            if z >= 0.0 {
                ti * z + (-z).exp().ln_1p()
            } else {
                (ti - 1.0) * z + z.exp().ln_1p()
            }
        })
        .sum()
}

impl PlattMap {
    /// Fits A and B; always returns finite values, because the smoothed
    /// targets keep the optimum finite even for separable scores.
    ///
    /// Scores larger than 30 in magnitude (naive Bayes log-odds can reach
    /// 1e8) are divided by their largest magnitude first and A is scaled
    /// back afterwards. The optimum is the same, but Newton's stopping rule
    /// on the gradient, whose first entry grows with the scores, then works
    /// at the intended precision instead of stalling far from it.
    pub fn fit(f: &[f64], labels: &[bool]) -> PlattMap {
        let scale = f.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if scale > 30.0 {
            let scaled: Vec<f64> = f.iter().map(|v| v / scale).collect();
            let m = Self::fit_unscaled(&scaled, labels);
            return PlattMap {
                a: m.a / scale,
                b: m.b,
            };
        }
        Self::fit_unscaled(f, labels)
    }

    fn fit_unscaled(f: &[f64], labels: &[bool]) -> PlattMap {
        let n_pos = labels.iter().filter(|&&l| l).count() as f64;
        let n_neg = labels.len() as f64 - n_pos;
        let hi = (n_pos + 1.0) / (n_pos + 2.0);
        let lo = 1.0 / (n_neg + 2.0);
        let t: Vec<f64> = labels.iter().map(|&l| if l { hi } else { lo }).collect();
        let mut a = 0.0;
        let mut b = ((n_neg + 1.0) / (n_pos + 1.0)).ln();
        let mut fval = objective(f, &t, a, b);
        for _ in 0..MAX_ITER {
            let (mut h11, mut h22, mut h21, mut g1, mut g2) = (SIGMA, SIGMA, 0.0, 0.0, 0.0);
            for (&fi, &ti) in f.iter().zip(&t) {
                let z = fi * a + b;
                let (p, q) = if z >= 0.0 {
                    let e = (-z).exp();
                    (e / (1.0 + e), 1.0 / (1.0 + e))
                } else {
                    let e = z.exp();
                    (1.0 / (1.0 + e), e / (1.0 + e))
                };
                let d2 = p * q;
                h11 += fi * fi * d2;
                h22 += d2;
                h21 += fi * d2;
                let d1 = ti - p;
                g1 += fi * d1;
                g2 += d1;
            }
            if g1.abs() < EPS && g2.abs() < EPS {
                break;
            }
            let det = h11 * h22 - h21 * h21;
            let da = -(h22 * g1 - h21 * g2) / det;
            let db = -(-h21 * g1 + h11 * g2) / det;
            let gd = g1 * da + g2 * db;
            let mut step = 1.0;
            while step >= MIN_STEP {
                let (na, nb) = (a + step * da, b + step * db);
                let nf = objective(f, &t, na, nb);
                if nf < fval + 1e-4 * step * gd {
                    a = na;
                    b = nb;
                    fval = nf;
                    break;
                }
                step /= 2.0;
            }
            if step < MIN_STEP {
                // The line search cannot improve further: the current point is
                // the best the method can reach in floating point.
                break;
            }
        }
        PlattMap { a, b }
    }
}

impl BinaryMap for PlattMap {
    fn export(&self) -> Option<super::MapSpec> {
        Some(super::MapSpec::Sigmoid {
            a: self.a,
            b: self.b,
        })
    }

    fn apply(&self, score: f64) -> f64 {
        crate::common::math::sigmoid(-(self.a * score + self.b))
    }
}

impl BinaryCalibrator for Platt {
    fn input(&self) -> Input {
        Input::Native
    }

    fn fit(&self, scores: &[f64], labels: &[bool]) -> Result<Box<dyn BinaryMap>> {
        Ok(Box::new(PlattMap::fit(scores, labels)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    #[allow(clippy::excessive_precision)] // the published digits, verbatim
    fn matches_the_libsvm_port_values() {
        // platt-llw in docs/methods.md: A and B from scikit-learn's
        // tests/test_calibration.py, computed there with a Python port of
        // LibSVM's C++ implementation of this algorithm.
        let m = PlattMap::fit(&[5.0, -4.0, 1.0], &[true, false, false]);
        assert!(
            (m.a - -0.202_613_543_911_878_55).abs() < 1e-9,
            "A = {}",
            m.a
        );
        assert!((m.b - 0.652_363_149_800_105_12).abs() < 1e-9, "B = {}", m.b);
        // Probabilities at the inputs, same source.
        for (f, p) in [(5.0, 0.58921), (-4.0, 0.18804), (1.0, 0.38942)] {
            assert!((m.apply(f) - p).abs() < 1e-5);
        }
    }

    #[test]
    fn huge_scores_give_the_same_map_as_their_rescaled_version() {
        let f: Vec<f64> = (0..40).map(|i| (i as f64 - 20.0) * 0.37).collect();
        let y: Vec<bool> = (0..40).map(|i| (i * 7) % 11 < 5 + i / 8).collect();
        let small = PlattMap::fit(&f, &y);
        let big: Vec<f64> = f.iter().map(|v| v * 1e8).collect();
        let large = PlattMap::fit(&big, &y);
        assert!(
            (large.a * 1e8 - small.a).abs() < 1e-6,
            "{large:?} vs {small:?}"
        );
        assert!((large.b - small.b).abs() < 1e-6);
    }

    #[test]
    fn separable_scores_give_a_finite_decreasing_a() {
        let f: Vec<f64> = (0..20).map(|i| i as f64).collect();
        let y: Vec<bool> = (0..20).map(|i| i >= 10).collect();
        let m = PlattMap::fit(&f, &y);
        assert!(m.a.is_finite() && m.b.is_finite() && m.a < 0.0);
    }
}
