//! Inductive Venn-Abers prediction (Vovk & Petej 2014).
//!
//! For a test score s, isotonic regression is fitted twice on the
//! calibration set plus the point (s, 0) and plus (s, 1); the two fitted
//! values at s are p0 <= p1, an interval that is well calibrated under
//! exchangeability. The single probability reported is the merge
//! p = p1 / (1 - p0 + p1) (Vovk, Petej & Fedorova 2015), which minimises the
//! worst-case log-loss regret; the interval's mean bounds and width over the
//! test fold are recorded with every result.
//!
//! The isotonic fits pool tied scores as [`super::Isotonic`] does and are
//! read as step functions at s, as the method defines them. The outputs
//! depend on s only through its place among the calibration scores, so
//! each place is computed once; the cost is O(n) per distinct place, which
//! is fine for the calibration sets this tool sees (tens of thousands).

use super::isotonic::pool_adjacent_violators;
use super::{BinaryCalibrator, BinaryMap, Input};
use crate::common::error::Result;
use std::cell::RefCell;
use std::collections::HashMap;

/// Inductive Venn-Abers on the native score.
pub struct VennAbers;

/// Calibration points with tied scores pooled: (score, sum of labels,
/// count), sorted by score.
#[derive(Debug)]
pub struct VennAbersMap {
    points: Vec<(f64, f64, f64)>,
    cache: RefCell<HashMap<(usize, bool), (f64, f64)>>,
}

impl VennAbersMap {
    /// Pools the calibration set.
    pub fn fit(scores: &[f64], labels: &[bool]) -> VennAbersMap {
        let mut pairs: Vec<(f64, bool)> =
            scores.iter().copied().zip(labels.iter().copied()).collect();
        pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut points: Vec<(f64, f64, f64)> = Vec::new();
        for (s, y) in pairs {
            let y = f64::from(u8::from(y));
            match points.last_mut() {
                Some(p) if p.0 == s => {
                    p.1 += y;
                    p.2 += 1.0;
                }
                _ => points.push((s, y, 1.0)),
            }
        }
        VennAbersMap {
            points,
            cache: RefCell::new(HashMap::new()),
        }
    }

    /// The pair (p0, p1) for a test score.
    pub fn interval(&self, s: f64) -> (f64, f64) {
        let pos = self.points.partition_point(|p| p.0 < s);
        let tied = pos < self.points.len() && self.points[pos].0 == s;
        if let Some(v) = self.cache.borrow().get(&(pos, tied)) {
            return *v;
        }
        let v = (
            self.fitted_at(pos, tied, 0.0),
            self.fitted_at(pos, tied, 1.0),
        );
        self.cache.borrow_mut().insert((pos, tied), v);
        v
    }

    /// The isotonic fit's value at the test point after adding it with
    /// `label` at `pos` (pooled into the tied point when `tied`).
    fn fitted_at(&self, pos: usize, tied: bool, label: f64) -> f64 {
        // The points in order with the test point added; it is point number
        // `pos` in this sequence either way.
        let before = self.points[..pos].iter().map(|&(_, s, w)| (s, w));
        let (at, after) = if tied {
            let (_, s, w) = self.points[pos];
            ((s + label, w + 1.0), &self.points[pos + 1..])
        } else {
            ((label, 1.0), &self.points[pos..])
        };
        let sequence = before
            .chain(std::iter::once(at))
            .chain(after.iter().map(|&(_, s, w)| (s, w)));
        let blocks = pool_adjacent_violators(sequence);
        let mut seen = 0;
        for &(sum, weight, count) in &blocks {
            seen += count;
            if pos < seen {
                return sum / weight;
            }
        }
        0.5
    }
}

impl BinaryMap for VennAbersMap {
    fn apply(&self, s: f64) -> f64 {
        let (p0, p1) = self.interval(s);
        p1 / (1.0 - p0 + p1)
    }

    fn interval(&self, s: f64) -> Option<(f64, f64)> {
        Some(VennAbersMap::interval(self, s))
    }
}

impl BinaryCalibrator for VennAbers {
    fn input(&self) -> Input {
        Input::Native
    }

    fn fit(&self, scores: &[f64], labels: &[bool]) -> Result<Box<dyn BinaryMap>> {
        Ok(Box::new(VennAbersMap::fit(scores, labels)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reference_sheet_toy_example() {
        // venn-abers-toy in docs/methods.md: calibration scores
        // (.1 .2 .3 .4 .6 .7 .8 .9), labels (0 0 1 0 1 0 1 1).
        // s = 0.5: (p0, p1) = (1/3, 2/3), merged 0.5.
        // s = 0.95: (2/3, 1), merged 0.75.
        let s = [0.1, 0.2, 0.3, 0.4, 0.6, 0.7, 0.8, 0.9];
        let y = [false, false, true, false, true, false, true, true];
        let m = VennAbersMap::fit(&s, &y);
        let (p0, p1) = m.interval(0.5);
        assert!((p0 - 1.0 / 3.0).abs() < 1e-12 && (p1 - 2.0 / 3.0).abs() < 1e-12);
        assert!((m.apply(0.5) - 0.5).abs() < 1e-12);
        let (p0, p1) = m.interval(0.95);
        assert!((p0 - 2.0 / 3.0).abs() < 1e-12 && (p1 - 1.0).abs() < 1e-12);
        assert!((m.apply(0.95) - 0.75).abs() < 1e-12);
    }
}
