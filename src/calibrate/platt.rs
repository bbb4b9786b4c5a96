//! Platt scaling, P(y = 1 | f) = 1 / (1 + exp(A f + B)), fitted with the
//! Newton method and backtracking line search of Lin, Lin & Weng (2007) on
//! Platt's smoothed targets t+ = (N+ + 1)/(N+ + 2), t- = 1/(N- + 2).
//!
//! Two rules keep the map a calibration of the scores rather than a
//! reinterpretation of them:
//!
//! - **Extreme scores are clipped.** One slope serves every row, so a few
//!   scores far outside the rest (naive Bayes log-odds of 1e9 beside a bulk
//!   within ±10) would set it alone. Each class's calibration scores have
//!   Tukey's outer fences, [Q1 - 3 IQR, Q3 + 3 IQR] (Tukey 1977, "far out"
//!   values); scores beyond the union of the two classes' fences are
//!   clipped to it before the fit, and the same bounds apply to every score
//!   the map is later given. Fences per class, not pooled, because on
//!   imbalanced data the minority class's scores lie far from the bulk by
//!   design.
//! - **The slope keeps the order.** A map meant to be monotone must not
//!   rank rows backwards, so A is constrained to A <= 0 (forecasts rise
//!   with the score). The log-likelihood is concave, so when its maximum
//!   has A > 0 the constrained maximum has A = 0: the forecasts are the
//!   smoothed base rate, which discards the scores' ranking instead of
//!   reversing it.
//!
//! Either rule, when active, is recorded as a warning with the result.

use super::{BinaryCalibrator, BinaryMap, Input};
use crate::common::error::Result;

/// Platt scaling on the family's native score.
pub struct Platt;

/// A fitted Platt map; `A <= 0`, so forecasts never fall as the score rises.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlattMap {
    pub a: f64,
    pub b: f64,
    /// Scores are clipped to these bounds (infinite when none apply).
    pub low: f64,
    pub high: f64,
    /// Calibration scores the bounds clipped.
    pub clipped: usize,
    /// Whether the order constraint held the slope at zero.
    pub flat: bool,
}

/// Quartiles of a sample by linear interpolation between order statistics
/// (type 7 of Hyndman & Fan 1996, the default of R and numpy).
fn quartiles(sorted: &[f64]) -> (f64, f64) {
    let q = |p: f64| {
        let h = p * (sorted.len() - 1) as f64;
        let i = h.floor() as usize;
        let j = (i + 1).min(sorted.len() - 1);
        sorted[i] + (h - i as f64) * (sorted[j] - sorted[i])
    };
    (q(0.25), q(0.75))
}

/// The clipping bounds: the union over the two classes of each class's
/// Tukey outer fences, [Q1 - 3 IQR, Q3 + 3 IQR]. A class with fewer than
/// four scores or an IQR of 0 contributes its whole range instead, so its
/// scores are never clipped. A score is clipped only when it is far out for
/// both classes: the minority class's scores on imbalanced data stay whole,
/// however far they lie from the majority's.
fn fences(f: &[f64], labels: &[bool]) -> (f64, f64) {
    let (mut low, mut high) = (f64::INFINITY, f64::NEG_INFINITY);
    for class in [false, true] {
        let mut sorted: Vec<f64> = f
            .iter()
            .zip(labels)
            .filter(|(v, &l)| l == class && v.is_finite())
            .map(|(&v, _)| v)
            .collect();
        if sorted.is_empty() {
            continue;
        }
        sorted.sort_by(f64::total_cmp);
        let (min, max) = (sorted[0], sorted[sorted.len() - 1]);
        let (lo, hi) = if sorted.len() >= 4 {
            let (q1, q3) = quartiles(&sorted);
            let iqr = q3 - q1;
            if iqr > 0.0 {
                (q1 - 3.0 * iqr, q3 + 3.0 * iqr)
            } else {
                (min, max)
            }
        } else {
            (min, max)
        };
        low = low.min(lo);
        high = high.max(hi);
    }
    if low <= high {
        (low, high)
    } else {
        (f64::NEG_INFINITY, f64::INFINITY)
    }
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
        let (low, high) = fences(f, labels);
        let clipped = f.iter().filter(|&&v| v < low || v > high).count();
        let f: Vec<f64> = f.iter().map(|v| v.clamp(low, high)).collect();
        let scale = f.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let (a, b) = if scale > 30.0 {
            let scaled: Vec<f64> = f.iter().map(|v| v / scale).collect();
            let (a, b) = Self::fit_unscaled(&scaled, labels);
            (a / scale, b)
        } else {
            Self::fit_unscaled(&f, labels)
        };
        let map = |a, b, flat| PlattMap {
            a,
            b,
            low,
            high,
            clipped,
            flat,
        };
        if a <= 0.0 {
            return map(a, b, false);
        }
        // The maximum lies on A = 0: the smoothed targets' mean rate.
        let (n_pos, n_neg) = counts(labels);
        let t = (n_pos * (n_pos + 1.0) / (n_pos + 2.0) + n_neg / (n_neg + 2.0)) / (n_pos + n_neg);
        map(0.0, ((1.0 - t) / t).ln(), true)
    }

    /// The unconstrained maximum (A, B) on unclipped scores.
    fn fit_unscaled(f: &[f64], labels: &[bool]) -> (f64, f64) {
        let (n_pos, n_neg) = counts(labels);
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
        (a, b)
    }
}

/// Positive and negative labels, as reals.
fn counts(labels: &[bool]) -> (f64, f64) {
    let n_pos = labels.iter().filter(|&&l| l).count() as f64;
    (n_pos, labels.len() as f64 - n_pos)
}

impl BinaryMap for PlattMap {
    fn export(&self) -> Option<super::MapSpec> {
        Some(super::MapSpec::Sigmoid {
            a: self.a,
            b: self.b,
            clip: (self.low.is_finite() && self.high.is_finite()).then_some([self.low, self.high]),
        })
    }

    fn apply(&self, score: f64) -> f64 {
        let s = score.clamp(self.low, self.high);
        crate::common::math::sigmoid(-(self.a * s + self.b))
    }

    fn warning(&self) -> Option<String> {
        let mut said = Vec::new();
        if self.clipped > 0 {
            said.push(format!(
                "platt: {} calibration score(s) beyond both classes' Tukey outer fences were clipped to [{:.4}, {:.4}] before the fit",
                self.clipped, self.low, self.high
            ));
        }
        if self.flat {
            said.push(
                "platt: the best slope would rank the rows backwards, so it is held at 0 and every forecast is the smoothed base rate".to_string(),
            );
        }
        (!said.is_empty()).then(|| said.join("; "))
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
