//! Beta calibration (Kull, Silva Filho & Flach 2017):
//! logit q = c + a ln s - b ln(1 - s), fitted as a logistic regression of the
//! label on the two features ln s and -ln(1 - s).
//!
//! Unlike Platt's family, this one contains the identity (a = b = 1, c = 0)
//! and can undo forecasts that are too extreme as well as too moderate. To
//! keep the map monotone, as the authors do, a feature whose coefficient
//! comes out negative is dropped and the model refitted: if a < 0 the map
//! becomes logit q = c - b ln(1 - s), if b < 0 it becomes c + a ln s, and if
//! the remaining coefficient is negative too, the constant c alone.
//! Probabilities are clipped to [1e-12, 1 - 1e-12] before the logarithms.
//! When the scores separate the labels the likelihood has no maximum (the
//! coefficients run off to infinity); the map is then refitted on Platt's
//! smoothed targets, (N+ + 1)/(N+ + 2) for positives and 1/(N- + 2) for
//! negatives, which always have a finite maximum, and a warning is
//! recorded.
//!
//! Scores with fewer than three distinct values (a shallow tree, kNN with
//! k = 1) cannot identify three parameters: the map is then fitted with
//! a and c alone (b = 0), which through two points is the saturated
//! monotone fit, and a warning is recorded. Should every fit fail, the map
//! is the constant observed positive rate, again with a warning, so a
//! degenerate fold never stops a run.

use super::{BinaryCalibrator, BinaryMap, Input};
use crate::common::error::Result;
use crate::common::glm::logistic;

const CLIP: f64 = 1e-12;

/// Beta calibration on the raw probability.
pub struct Beta;

/// A fitted beta map.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BetaMap {
    pub a: f64,
    pub b: f64,
    pub c: f64,
    /// Whether the fit fell back to Platt's smoothed targets.
    pub smoothed: bool,
    /// Why the full three-parameter fit was not used, if it was not.
    pub reduced: Option<&'static str>,
}

/// Why a beta fit has fewer parameters than three.
const FEW_VALUES: &str =
    "the scores take fewer than three distinct values, so the map was fitted with a and c only (b = 0)";
const NO_FIT: &str = "no fit converged, so the map is the constant observed positive rate";

impl BetaMap {
    /// Fits the three-parameter map with the authors' handling of negative
    /// coefficients, falling back to smoothed targets under separation.
    pub fn fit(scores: &[f64], labels: &[bool]) -> BetaMap {
        let ln_s: Vec<f64> = scores
            .iter()
            .map(|&s| s.clamp(CLIP, 1.0 - CLIP).ln())
            .collect();
        let ln_1s: Vec<f64> = scores
            .iter()
            .map(|&s| -(1.0 - s.clamp(CLIP, 1.0 - CLIP)).ln())
            .collect();
        let y: Vec<f64> = labels.iter().map(|&l| f64::from(u8::from(l))).collect();
        let mut distinct: Vec<f64> = ln_s.clone();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup();
        let full = distinct.len() >= 3;
        let reduced = (!full).then_some(FEW_VALUES);
        if let Some(m) = Self::fit_targets(&ln_s, &ln_1s, &y, full) {
            return BetaMap { reduced, ..m };
        }
        let n_pos = y.iter().sum::<f64>();
        let n_neg = y.len() as f64 - n_pos;
        let smoothed: Vec<f64> = labels
            .iter()
            .map(|&l| {
                if l {
                    (n_pos + 1.0) / (n_pos + 2.0)
                } else {
                    1.0 / (n_neg + 2.0)
                }
            })
            .collect();
        if let Some(m) = Self::fit_targets(&ln_s, &ln_1s, &smoothed, full) {
            return BetaMap {
                smoothed: true,
                reduced,
                ..m
            };
        }
        // The base rate, as a constant map: logit q = c.
        let rate = (y.iter().sum::<f64>() / y.len().max(1) as f64).clamp(CLIP, 1.0 - CLIP);
        BetaMap {
            a: 0.0,
            b: 0.0,
            c: (rate / (1.0 - rate)).ln(),
            smoothed: false,
            reduced: Some(NO_FIT),
        }
    }

    /// The authors' fit on targets `y`; with `full` false the b feature is
    /// left out from the start.
    fn fit_targets(ln_s: &[f64], ln_1s: &[f64], y: &[f64], full: bool) -> Option<BetaMap> {
        let map = |a, b, c| BetaMap {
            a,
            b,
            c,
            smoothed: false,
            reduced: None,
        };
        let constant = || logistic(&[], None, y).map(|fit| map(0.0, 0.0, fit[0]));
        if !full {
            let fit = logistic(&[ln_s], None, y)?;
            if fit[1] >= 0.0 {
                return Some(map(fit[1], 0.0, fit[0]));
            }
            return constant();
        }
        let fit = logistic(&[ln_s, ln_1s], None, y)?;
        let (c, a, b) = (fit[0], fit[1], fit[2]);
        if a >= 0.0 && b >= 0.0 {
            return Some(map(a, b, c));
        }
        if a < 0.0 {
            let fit = logistic(&[ln_1s], None, y)?;
            if fit[1] >= 0.0 {
                return Some(map(0.0, fit[1], fit[0]));
            }
            return constant();
        }
        let fit = logistic(&[ln_s], None, y)?;
        if fit[1] >= 0.0 {
            return Some(map(fit[1], 0.0, fit[0]));
        }
        constant()
    }
}

impl BinaryMap for BetaMap {
    fn export(&self) -> Option<super::MapSpec> {
        Some(super::MapSpec::Beta {
            a: self.a,
            b: self.b,
            c: self.c,
        })
    }

    fn apply(&self, s: f64) -> f64 {
        let s = s.clamp(CLIP, 1.0 - CLIP);
        crate::common::math::sigmoid(self.c + self.a * s.ln() - self.b * (1.0 - s).ln())
    }

    fn warning(&self) -> Option<String> {
        let mut said = Vec::new();
        if let Some(why) = self.reduced {
            said.push(format!("beta calibration: {why}"));
        }
        if self.smoothed {
            said.push("beta calibration: the scores separate the classes, so the map was fitted on Platt's smoothed targets".to_string());
        }
        (!said.is_empty()).then(|| said.join("; "))
    }
}

impl BinaryCalibrator for Beta {
    fn input(&self) -> Input {
        Input::Probability
    }

    fn fit(&self, scores: &[f64], labels: &[bool]) -> Result<Box<dyn BinaryMap>> {
        Ok(Box::new(BetaMap::fit(scores, labels)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_family_contains_the_identity() {
        // properties (c) in docs/methods.md.
        let m = BetaMap {
            a: 1.0,
            b: 1.0,
            c: 0.0,
            smoothed: false,
            reduced: None,
        };
        for s in [0.001, 0.2, 0.5, 0.77, 0.999] {
            assert!((m.apply(s) - s).abs() < 1e-12);
        }
    }

    #[test]
    fn calibrated_scores_fit_close_to_the_identity() {
        // Outcomes drawn from the scores themselves: the fitted map should
        // be near q = s on a large sample.
        let mut rng = crate::common::rng::SplitMix64::new(8);
        let s: Vec<f64> = (0..20_000).map(|_| 0.02 + 0.96 * rng.unit()).collect();
        let y: Vec<bool> = s.iter().map(|&p| rng.unit() < p).collect();
        let m = BetaMap::fit(&s, &y);
        for p in [0.1, 0.5, 0.9] {
            assert!((m.apply(p) - p).abs() < 0.03, "{m:?}");
        }
    }

    #[test]
    fn separated_scores_fall_back_to_smoothed_targets() {
        let s = [0.1, 0.2, 0.3, 0.7, 0.8, 0.9];
        let y = [false, false, false, true, true, true];
        let m = BetaMap::fit(&s, &y);
        assert!(m.smoothed && m.warning().is_some());
        assert!(m.apply(0.9) > 0.5 && m.apply(0.9) < 1.0 && m.apply(0.1) < 0.5);
    }

    #[test]
    fn a_negative_coefficient_is_dropped() {
        // Positives concentrated at both extremes push a below 0 in the
        // full fit; the refit keeps the map monotone.
        let s = [0.05, 0.1, 0.2, 0.3, 0.5, 0.6, 0.8, 0.9, 0.95, 0.97];
        let y = [
            true, false, false, false, true, false, true, true, true, true,
        ];
        let m = BetaMap::fit(&s, &y);
        assert!(m.a >= 0.0 && m.b >= 0.0, "{m:?}");
        let mut prev = 0.0;
        for i in 1..100 {
            let q = m.apply(i as f64 / 100.0);
            assert!(q >= prev - 1e-15);
            prev = q;
        }
    }
}
