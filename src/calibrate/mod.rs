//! Post-hoc calibration methods.
//!
//! A method is fitted on the out-of-fold scores of the training split and then
//! maps the test fold's scores to probabilities. Binary methods implement
//! [`BinaryCalibrator`]; [`OneVsRest`] lifts any of them to multiclass tasks by
//! fitting one map per class and renormalising, and the strategy used is
//! recorded with every result so tables never mix strategies silently. Adding
//! a method is one new file plus one line in [`METHODS`].

mod isotonic;
mod platt;

use crate::error::Result;
use crate::learner::Scores;
use ndarray::Array2;

pub use isotonic::Isotonic;
pub use platt::Platt;

/// Which of a family's outputs a binary method reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Input {
    /// The native score (log-odds, margin or logit).
    Native,
    /// The raw probability of the class.
    Probability,
}

/// A binary calibration method: fits a map from one score per row to the
/// probability of the positive class.
pub trait BinaryCalibrator: Send + Sync {
    /// The output of the family the method is designed for.
    fn input(&self) -> Input;
    /// Fits on held-out scores and their labels (`true` = positive).
    fn fit(&self, scores: &[f64], labels: &[bool]) -> Result<Box<dyn BinaryMap>>;
}

/// A fitted binary map.
pub trait BinaryMap: Send {
    /// The calibrated probability of the positive class for one score.
    fn apply(&self, score: f64) -> f64;
}

/// A calibration method for tasks with any number of classes.
pub trait Calibrator: Send + Sync {
    /// How the method handles `n_classes`, recorded beside every result.
    fn strategy(&self, n_classes: usize) -> &'static str;
    /// Fits on the out-of-fold scores of the training split.
    fn fit(&self, oof: &Scores, labels: &[usize], n_classes: usize)
        -> Result<Box<dyn Calibration>>;
}

/// A fitted calibration.
pub trait Calibration: Send {
    /// Calibrated class probabilities, rows summing to 1.
    fn apply(&self, scores: &Scores) -> Array2<f64>;
}

/// A registry entry for a calibration method.
pub struct Method {
    /// The name used in manifests and tables.
    pub name: &'static str,
    /// One line for `candor list methods`.
    pub about: &'static str,
    /// Builds the method.
    pub build: fn() -> Box<dyn Calibrator>,
}

/// The raw probabilities, unchanged: the "before" row of every comparison.
pub const NONE: &str = "none";

/// Every calibration method candor knows.
pub const METHODS: &[Method] = &[
    Method {
        name: NONE,
        about: "no calibration: the family's own probabilities",
        build: || Box::new(Identity),
    },
    Method {
        name: "platt",
        about: "Platt scaling, fitted with the Lin-Lin-Weng Newton method on the native score",
        build: || Box::new(OneVsRest(Platt)),
    },
    Method {
        name: "isotonic",
        about: "isotonic regression (PAV), linear interpolation between thresholds, clipped",
        build: || Box::new(OneVsRest(Isotonic)),
    },
];

/// Looks up a method by name.
pub fn find(name: &str) -> Option<&'static Method> {
    METHODS.iter().find(|m| m.name == name)
}

/// The known method names, for error messages.
pub fn known_methods() -> String {
    METHODS
        .iter()
        .map(|m| m.name)
        .collect::<Vec<_>>()
        .join(", ")
}

struct Identity;

impl Calibrator for Identity {
    fn strategy(&self, _n_classes: usize) -> &'static str {
        "identity"
    }
    fn fit(&self, _: &Scores, _: &[usize], _: usize) -> Result<Box<dyn Calibration>> {
        Ok(Box::new(Identity))
    }
}

impl Calibration for Identity {
    fn apply(&self, scores: &Scores) -> Array2<f64> {
        scores.proba.clone()
    }
}

/// Lifts a binary method to any number of classes. For two classes it fits
/// one map for the positive class; for more it fits one map per class
/// (that class against the rest) and divides each row by its sum. A row whose
/// maps all give 0 becomes uniform.
pub struct OneVsRest<B>(pub B);

/// The strategy name recorded for one-vs-rest with renormalisation.
pub const OVR_STRATEGY: &str = "one-vs-rest, renormalised";

impl<B: BinaryCalibrator + 'static> Calibrator for OneVsRest<B> {
    fn strategy(&self, n_classes: usize) -> &'static str {
        if n_classes == 2 {
            "binary"
        } else {
            OVR_STRATEGY
        }
    }

    fn fit(
        &self,
        oof: &Scores,
        labels: &[usize],
        n_classes: usize,
    ) -> Result<Box<dyn Calibration>> {
        let classes: Vec<usize> = if n_classes == 2 {
            vec![1]
        } else {
            (0..n_classes).collect()
        };
        let mut maps = Vec::with_capacity(classes.len());
        for &k in &classes {
            let column = column_for(oof, self.0.input(), k, n_classes);
            let is_k: Vec<bool> = labels.iter().map(|&y| y == k).collect();
            maps.push(self.0.fit(&column, &is_k)?);
        }
        Ok(Box::new(FittedOvr {
            input: self.0.input(),
            maps,
            n_classes,
        }))
    }
}

/// The score column a binary method reads for class `k`.
fn column_for(scores: &Scores, input: Input, k: usize, n_classes: usize) -> Vec<f64> {
    match input {
        // Binary tasks carry one native column: the positive class's log-odds.
        Input::Native if n_classes == 2 => scores.native.column(0).to_vec(),
        // Per-class logits carry an arbitrary per-row shift, so class k's own
        // column is not comparable across rows; its log-odds against the rest
        // of the classes is, and is what a binary method expects.
        Input::Native => scores
            .native
            .rows()
            .into_iter()
            .map(|row| {
                let rest = row
                    .iter()
                    .enumerate()
                    .filter(|&(j, _)| j != k)
                    .map(|(_, &v)| v);
                let max = rest.clone().fold(f64::NEG_INFINITY, f64::max);
                let lse = max + rest.map(|v| (v - max).exp()).sum::<f64>().ln();
                row[k] - lse
            })
            .collect(),
        Input::Probability => scores.proba.column(k).to_vec(),
    }
}

struct FittedOvr {
    input: Input,
    maps: Vec<Box<dyn BinaryMap>>,
    n_classes: usize,
}

impl Calibration for FittedOvr {
    fn apply(&self, scores: &Scores) -> Array2<f64> {
        let n = scores.proba.nrows();
        let mut out = Array2::zeros((n, self.n_classes));
        if self.n_classes == 2 {
            let column = column_for(scores, self.input, 1, 2);
            for (i, s) in column.iter().enumerate() {
                let p = self.maps[0].apply(*s).clamp(0.0, 1.0);
                out[[i, 1]] = p;
                out[[i, 0]] = 1.0 - p;
            }
            return out;
        }
        for (k, map) in self.maps.iter().enumerate() {
            let column = column_for(scores, self.input, k, self.n_classes);
            for (i, s) in column.iter().enumerate() {
                out[[i, k]] = map.apply(*s).clamp(0.0, 1.0);
            }
        }
        renormalise(&mut out);
        out
    }
}

/// Divides each row by its sum; an all-zero row becomes uniform.
pub fn renormalise(p: &mut Array2<f64>) {
    let k = p.ncols() as f64;
    for mut row in p.rows_mut() {
        let sum: f64 = row.sum();
        if sum > 0.0 {
            row.mapv_inplace(|v| v / sum);
        } else {
            row.fill(1.0 / k);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn renormalisation_matches_the_reference_sheet() {
        // CV-13 in shared/reference/METHODS.md (scikit-learn's one-vs-rest
        // normalisation logic): (0.5, 0.3, 0.4) -> (0.41667, 0.25, 0.33333).
        let mut p = array![[0.5, 0.3, 0.4], [0.0, 0.0, 0.0]];
        renormalise(&mut p);
        assert!((p[[0, 0]] - 0.5 / 1.2).abs() < 1e-12);
        assert!((p[[0, 1]] - 0.25).abs() < 1e-12);
        assert!((p[[0, 2]] - 0.4 / 1.2).abs() < 1e-12);
        assert_eq!(p.row(1).to_vec(), vec![1.0 / 3.0; 3]);
    }
}
