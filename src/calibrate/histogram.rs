//! Histogram binning (Zadrozny & Elkan 2001): sort the calibration scores,
//! cut them into B equal-frequency bins, and map a score to the positive
//! rate of its bin.
//!
//! Bins are cut by rank and a run of tied scores is never split (it joins
//! the bin where it starts), so equal scores always get equal outputs. The
//! boundary between two neighbouring bins is the midpoint between the
//! largest score of the lower bin and the smallest of the upper; a score on a
//! boundary goes to the lower bin. As published, the map is piecewise
//! constant and **not forced to be monotone**: a bin can have a lower
//! positive rate than the bin below it. Bins with a rate of exactly 0 or 1
//! produce certain forecasts (log loss then relies on its clipping). The
//! bin count is `histogram_bins` in the manifest's `[calibration]` table.

use super::{BinaryCalibrator, BinaryMap, Input};
use crate::common::error::Result;

/// Histogram binning with a fixed number of bins.
pub struct Histogram {
    pub bins: usize,
}

/// A fitted histogram map.
#[derive(Debug, Clone, PartialEq)]
pub struct HistogramMap {
    /// Upper boundaries of every bin but the last.
    pub boundaries: Vec<f64>,
    /// Positive rate of each bin.
    pub rates: Vec<f64>,
}

impl HistogramMap {
    /// Fits on scores and 0/1 labels; inputs must be non-empty and finite.
    pub fn fit(scores: &[f64], labels: &[bool], bins: usize) -> HistogramMap {
        let mut pairs: Vec<(f64, bool)> =
            scores.iter().copied().zip(labels.iter().copied()).collect();
        pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
        let n = pairs.len();
        // Per non-empty bin: (lowest score, highest score, positives, count).
        let mut groups: Vec<(f64, f64, usize, usize)> = Vec::new();
        let mut current = usize::MAX;
        for (rank, &(s, y)) in pairs.iter().enumerate() {
            if rank == 0 || s != pairs[rank - 1].0 {
                let bin = rank * bins.max(1) / n;
                if bin != current {
                    current = bin;
                    groups.push((s, s, 0, 0));
                }
            }
            let g = groups.last_mut().expect("a group was opened at rank 0");
            g.1 = s;
            g.2 += usize::from(y);
            g.3 += 1;
        }
        HistogramMap {
            boundaries: groups.windows(2).map(|w| 0.5 * (w[0].1 + w[1].0)).collect(),
            rates: groups.iter().map(|g| g.2 as f64 / g.3 as f64).collect(),
        }
    }
}

impl BinaryMap for HistogramMap {
    fn export(&self) -> Option<super::MapSpec> {
        Some(super::MapSpec::Steps {
            upper: self.boundaries.clone(),
            y: self.rates.clone(),
        })
    }

    fn apply(&self, s: f64) -> f64 {
        self.rates[self.boundaries.partition_point(|&b| b < s)]
    }
}

impl BinaryCalibrator for Histogram {
    fn input(&self) -> Input {
        Input::Probability
    }

    fn fit(&self, scores: &[f64], labels: &[bool]) -> Result<Box<dyn BinaryMap>> {
        Ok(Box::new(HistogramMap::fit(scores, labels, self.bins)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn equal_frequency_bins_keep_ties_and_use_midpoints() {
        // Scores .1 .1 .4 .4 .7 .7 .7 .9 with labels 0 0 0 1 0 1 1 1 (the
        // toy forecaster of docs/methods.md) in 4 bins: the tie
        // at .7 stays whole, so the bins are {.1,.1} {.4,.4} {.7,.7,.7} {.9}
        // with rates 0, 1/2, 2/3, 1 and boundaries .25, .55, .8.
        let s = [0.1, 0.1, 0.4, 0.4, 0.7, 0.7, 0.7, 0.9];
        let y = [false, false, false, true, false, true, true, true];
        let m = HistogramMap::fit(&s, &y, 4);
        assert_eq!(m.boundaries.len(), 3);
        for (b, want) in m.boundaries.iter().zip([0.25, 0.55, 0.8]) {
            assert!((b - want).abs() < 1e-12);
        }
        assert_eq!(m.rates, vec![0.0, 0.5, 2.0 / 3.0, 1.0]);
        assert_eq!(m.apply(0.25), 0.0);
        assert_eq!(m.apply(0.26), 0.5);
        assert_eq!(m.apply(5.0), 1.0);
    }
}
