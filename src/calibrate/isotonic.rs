//! Isotonic regression by pool-adjacent-violators.
//!
//! Tied scores are pooled first into one point with their summed weight (the
//! "secondary" approach of de Leeuw 1977), so tied inputs always get one
//! output. Between fitted thresholds we interpolate linearly and outside them
//! we clip to the end values. We prefer interpolation to the step function of
//! Zadrozny & Elkan because a step map turns nearby scores into large ties,
//! which coarsens ranking and makes equal-mass bins degenerate; the choice is
//! the same as scikit-learn's calibrator, so results are comparable with it.

use super::{BinaryCalibrator, BinaryMap, Input};
use crate::common::error::Result;

/// Isotonic regression on the raw probability.
pub struct Isotonic;

/// A fitted isotonic map: increasing thresholds and non-decreasing values.
#[derive(Debug, Clone, PartialEq)]
pub struct IsotonicMap {
    pub x: Vec<f64>,
    pub y: Vec<f64>,
}

impl IsotonicMap {
    /// Fits with unit weights.
    pub fn fit(scores: &[f64], targets: &[f64]) -> IsotonicMap {
        Self::fit_weighted(scores, targets, &vec![1.0; scores.len()])
    }

    /// Fits a weighted non-decreasing least-squares map. Inputs must be
    /// finite and non-empty. Only the knots are kept: of each run of equal
    /// fitted values, its first and last threshold, since interpolating
    /// between two equal values gives that value exactly; the map is the
    /// same function, bit for bit, at a fraction of the size (a saved map
    /// of 5,000 scores needs tens of points, not thousands).
    pub fn fit_weighted(scores: &[f64], targets: &[f64], weights: &[f64]) -> IsotonicMap {
        Self::fit_every_threshold(scores, targets, weights).knots()
    }

    /// The map with every distinct score as a threshold.
    fn fit_every_threshold(scores: &[f64], targets: &[f64], weights: &[f64]) -> IsotonicMap {
        let mut order: Vec<usize> = (0..scores.len()).collect();
        order.sort_by(|&i, &j| scores[i].total_cmp(&scores[j]));
        // Pool ties: (x, weighted sum of y, summed weight).
        let mut points: Vec<(f64, f64, f64)> = Vec::new();
        for &i in &order {
            let (x, y, w) = (scores[i], targets[i], weights[i]);
            match points.last_mut() {
                Some(last) if last.0 == x => {
                    last.1 += w * y;
                    last.2 += w;
                }
                _ => points.push((x, w * y, w)),
            }
        }
        let blocks = pool_adjacent_violators(points.iter().map(|&(_, sy, w)| (sy, w)));
        let mut y = Vec::with_capacity(points.len());
        for &(s, w, n) in &blocks {
            y.extend(std::iter::repeat_n(s / w, n));
        }
        IsotonicMap {
            x: points.iter().map(|p| p.0).collect(),
            y,
        }
    }
}

impl IsotonicMap {
    /// Drops the thresholds inside runs of equal values.
    fn knots(self) -> IsotonicMap {
        let n = self.x.len();
        let keep = |i: usize| {
            i == 0 || i + 1 == n || self.y[i] != self.y[i - 1] || self.y[i] != self.y[i + 1]
        };
        let kept: Vec<usize> = (0..n).filter(|&i| keep(i)).collect();
        IsotonicMap {
            x: kept.iter().map(|&i| self.x[i]).collect(),
            y: kept.iter().map(|&i| self.y[i]).collect(),
        }
    }
}

/// Pool-adjacent-violators over points given in score order as (weighted
/// sum of targets, weight): returns the fitted blocks as (sum, weight,
/// number of points), each block's value being sum / weight.
pub(crate) fn pool_adjacent_violators(
    points: impl IntoIterator<Item = (f64, f64)>,
) -> Vec<(f64, f64, usize)> {
    let mut blocks: Vec<(f64, f64, usize)> = Vec::new();
    for (sum, weight) in points {
        blocks.push((sum, weight, 1));
        while blocks.len() > 1 {
            let (s2, w2, n2) = blocks[blocks.len() - 1];
            let (s1, w1, n1) = blocks[blocks.len() - 2];
            if s1 / w1 <= s2 / w2 {
                break;
            }
            blocks.pop();
            let last = blocks.len() - 1;
            blocks[last] = (s1 + s2, w1 + w2, n1 + n2);
        }
    }
    blocks
}

impl BinaryMap for IsotonicMap {
    fn export(&self) -> Option<super::MapSpec> {
        Some(super::MapSpec::PiecewiseLinear {
            x: self.x.clone(),
            y: self.y.clone(),
        })
    }

    fn apply(&self, s: f64) -> f64 {
        let n = self.x.len();
        if s <= self.x[0] {
            return self.y[0];
        }
        if s >= self.x[n - 1] {
            return self.y[n - 1];
        }
        // First threshold strictly above s; s lies in [x[j-1], x[j]).
        let j = self.x.partition_point(|&v| v <= s);
        let (x0, x1, y0, y1) = (self.x[j - 1], self.x[j], self.y[j - 1], self.y[j]);
        y0 + (y1 - y0) * (s - x0) / (x1 - x0)
    }
}

impl BinaryCalibrator for Isotonic {
    fn input(&self) -> Input {
        Input::Probability
    }

    fn fit(&self, scores: &[f64], labels: &[bool]) -> Result<Box<dyn BinaryMap>> {
        let targets: Vec<f64> = labels.iter().map(|&l| f64::from(u8::from(l))).collect();
        Ok(Box::new(IsotonicMap::fit(scores, &targets)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: &[f64], b: &[f64]) -> bool {
        a.len() == b.len() && a.iter().zip(b).all(|(x, y)| (x - y).abs() < 1e-12)
    }

    #[test]
    fn pav_on_the_reference_sequence() {
        // pav in docs/methods.md.
        let x = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
        let m = IsotonicMap::fit(&x, &[1.0, 3.0, 2.0, 4.0, 3.0, 5.0]);
        assert!(close(&m.y, &[1.0, 2.5, 2.5, 3.5, 3.5, 5.0]));
    }

    #[test]
    fn ties_are_pooled_with_summed_weights() {
        // isotonic-ties in docs/methods.md (scikit-learn PR #9484):
        // thresholds (0, 1, 2, 3) with values (0, 1/3, 1/3, 1).
        let m = IsotonicMap::fit(&[0.0, 1.0, 1.0, 2.0, 3.0], &[0.0, 0.0, 1.0, 0.0, 1.0]);
        assert!(close(&m.x, &[0.0, 1.0, 2.0, 3.0]));
        assert!(close(&m.y, &[0.0, 1.0 / 3.0, 1.0 / 3.0, 1.0]));
    }

    #[test]
    fn duplicate_minimum_predicts_a_number() {
        // isotonic-duplicate-min in docs/methods.md (scikit-learn PR #3995).
        let m = IsotonicMap::fit(&[0.0, 0.0, 1.0], &[0.0, 0.0, 1.0]);
        assert_eq!(m.apply(0.0), 0.0);
    }

    #[test]
    fn keeping_only_the_knots_changes_no_output() {
        // Scores on a coarse grid (many ties) with noisy labels: thousands
        // of thresholds, a few dozen distinct fitted values.
        let mut rng = crate::common::rng::SplitMix64::new(0x9e37_79b9_7f4a_7c15);
        let mut next = || rng.unit();
        let n = 5000;
        let scores: Vec<f64> = (0..n).map(|_| (next() * 4000.0).round() / 4000.0).collect();
        let targets: Vec<f64> = scores
            .iter()
            .map(|&s| f64::from(u8::from(next() < s)))
            .collect();
        let weights = vec![1.0; n];
        let full = IsotonicMap::fit_every_threshold(&scores, &targets, &weights);
        let knots = IsotonicMap::fit_weighted(&scores, &targets, &weights);
        assert!(full.x.len() > 2000, "{}", full.x.len());
        let mut distinct = full.y.clone();
        distinct.dedup();
        assert!(knots.x.len() <= 2 * distinct.len());
        let probes = (0..=20_000)
            .map(|i| i as f64 / 20_000.0 * 1.2 - 0.1)
            .chain(scores.iter().copied());
        for s in probes {
            assert_eq!(full.apply(s).to_bits(), knots.apply(s).to_bits(), "at {s}");
        }
    }

    #[test]
    fn interpolates_between_thresholds_and_clips_outside() {
        // isotonic-interpolation in docs/methods.md: fitted (0, .5, .5, 1);
        // scikit-learn's linear interpolation gives 0.25, 0.75, 1.0.
        let m = IsotonicMap::fit(&[0.1, 0.3, 0.5, 0.7], &[0.0, 1.0, 0.0, 1.0]);
        assert!(close(&m.y, &[0.0, 0.5, 0.5, 1.0]));
        assert!((m.apply(0.2) - 0.25).abs() < 1e-12);
        assert!((m.apply(0.6) - 0.75).abs() < 1e-12);
        assert_eq!(m.apply(0.9), 1.0);
        assert_eq!(m.apply(0.0), 0.0);
    }
}
