//! Post-hoc calibration methods.
//!
//! A method is fitted on the out-of-fold scores of the training split and then
//! maps the test fold's scores to probabilities. Binary methods implement
//! [`BinaryCalibrator`]; [`OneVsRest`] lifts any of them to multiclass tasks by
//! fitting one map per class and renormalising, and the strategy used is
//! recorded with every result so tables never mix strategies silently. Adding
//! a method is one new file plus one line in [`METHODS`].
//!
//! May import `common` (and `metrics`, which its tests use); never
//! `learner`, which sits beside it: the two meet only in `common::scores`.

mod beta;
mod export;
mod histogram;
mod isotonic;
mod platt;
mod temperature;
mod venn_abers;

use crate::common::error::Result;
use crate::common::scores::{renormalise, Scores};
use ndarray::Array2;
use std::collections::BTreeMap;

pub use beta::{Beta, BetaMap};
pub use export::{CalibrationFile, ClassMap, Exported, MapSpec};
pub use histogram::{Histogram, HistogramMap};
pub use isotonic::{Isotonic, IsotonicMap};
pub use platt::{Platt, PlattMap};
pub use temperature::Temperature;
pub use venn_abers::{VennAbers, VennAbersMap};

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

    /// Every score of a column at once. Maps whose cost per score falls
    /// when they see the scores together, in order, override it
    /// (Venn-Abers).
    fn apply_all(&self, scores: &[f64]) -> Vec<f64> {
        scores.iter().map(|&s| self.apply(s)).collect()
    }

    /// A probability interval for the score, for methods that give one
    /// (Venn-Abers).
    fn interval(&self, _score: f64) -> Option<(f64, f64)> {
        None
    }

    /// The intervals of every score of a column, for methods that give
    /// them.
    fn intervals(&self, scores: &[f64]) -> Option<Vec<(f64, f64)>> {
        scores.iter().map(|&s| self.interval(s)).collect()
    }

    /// A fallback the fit took, in plain words.
    fn warning(&self) -> Option<String> {
        None
    }

    /// The map's numbers for a calibration file; `None` for maps that
    /// need their calibration set at prediction time (Venn-Abers).
    fn export(&self) -> Option<MapSpec> {
        None
    }
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

    /// Fallbacks taken while fitting, in plain words, for the cell record.
    fn warnings(&self) -> Vec<String> {
        Vec::new()
    }

    /// Extra per-fold figures some methods report (the Venn-Abers
    /// interval), by name.
    fn details(&self, _scores: &Scores) -> BTreeMap<String, f64> {
        BTreeMap::new()
    }

    /// The calibration as numbers another program can apply, if it can be
    /// written down without its calibration set.
    fn export(&self) -> Option<Exported> {
        None
    }
}

/// Settings of the calibration methods, from the manifest's
/// `[calibration]` table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct Settings {
    /// Bins of histogram binning.
    pub histogram_bins: usize,
}

impl Default for Settings {
    fn default() -> Self {
        Settings { histogram_bins: 10 }
    }
}

/// A registry entry for a calibration method.
pub struct Method {
    /// The name used in manifests and tables.
    pub name: &'static str,
    /// One line for `candor list methods`.
    pub about: &'static str,
    /// Builds the method.
    pub build: fn(&Settings) -> Box<dyn Calibrator>,
    /// Raised whenever a change to the method changes its results within
    /// one candor version, so that a resumed run does not reuse cells the
    /// earlier method computed (it is part of every cell's fingerprint).
    pub revision: u32,
}

/// The raw probabilities, unchanged: the "before" row of every comparison.
pub const NONE: &str = "none";

/// Every calibration method candor knows.
pub const METHODS: &[Method] = &[
    Method {
        name: NONE,
        about: "no calibration: the family's own probabilities",
        build: |_| Box::new(Identity),
        revision: 0,
    },
    Method {
        name: "platt",
        about: "Platt scaling, fitted with the Lin-Lin-Weng Newton method on the native score",
        build: |_| Box::new(OneVsRest(Platt)),
        revision: 2,
    },
    Method {
        name: "isotonic",
        about: "isotonic regression (PAV), linear interpolation between thresholds, clipped",
        build: |_| Box::new(OneVsRest(Isotonic)),
        revision: 0,
    },
    Method {
        name: "histogram",
        about: "histogram binning: positive rate of equal-frequency bins (histogram_bins)",
        build: |s| {
            Box::new(OneVsRest(Histogram {
                bins: s.histogram_bins,
            }))
        },
        revision: 0,
    },
    Method {
        name: "beta",
        about: "beta calibration: logistic regression on ln p and -ln(1 - p), kept monotone",
        build: |_| Box::new(OneVsRest(Beta)),
        revision: 1,
    },
    Method {
        name: "temperature",
        about: "temperature scaling: one temperature on the native scores, natively multiclass",
        build: |_| Box::new(Temperature),
        revision: 0,
    },
    Method {
        name: "venn_abers",
        about: "inductive Venn-Abers: merged probability of the isotonic pair (p0, p1)",
        build: |_| Box::new(OneVsRest(VennAbers)),
        revision: 0,
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

pub(crate) struct Identity;

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

    fn export(&self) -> Option<Exported> {
        Some(Exported::Identity)
    }
}

/// Lifts a binary method to any number of classes. For two classes it fits
/// one map for the positive class; for more it fits one map per class
/// (that class against the rest) and divides each row by its sum. A row whose
/// maps all give 0 becomes uniform.
///
/// Two degenerate calibration sets are handled here, the same way for every
/// method, rather than inside each: when the labels hold a single class or
/// all scores are equal there is nothing to learn a map from, so the map is
/// the constant observed positive rate, and a warning saying so is recorded
/// with the result.
pub struct OneVsRest<B>(pub B);

/// The fallback map for a degenerate calibration set.
pub(crate) struct Constant(pub(crate) f64);

impl BinaryMap for Constant {
    fn apply(&self, _: f64) -> f64 {
        self.0
    }

    fn export(&self) -> Option<MapSpec> {
        Some(MapSpec::Constant { value: self.0 })
    }
}

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
        let mut warnings = Vec::new();
        for &k in &classes {
            let column = column_for(oof, self.0.input(), k, n_classes);
            let is_k: Vec<bool> = labels.iter().map(|&y| y == k).collect();
            let positives = is_k.iter().filter(|&&v| v).count();
            let one_class = positives == 0 || positives == is_k.len();
            let constant = column.iter().all(|&v| v == column[0]);
            if one_class || constant {
                let rate = positives as f64 / is_k.len().max(1) as f64;
                let why = if one_class {
                    "the calibration labels hold a single class"
                } else {
                    "all calibration scores are equal"
                };
                let which = if n_classes == 2 {
                    String::new()
                } else {
                    format!(" for class {k}")
                };
                warnings.push(format!(
                    "{why}{which}; the map is the constant positive rate {rate}"
                ));
                maps.push(Box::new(Constant(rate)) as Box<dyn BinaryMap>);
                continue;
            }
            let map = self.0.fit(&column, &is_k)?;
            if let Some(w) = map.warning() {
                warnings.push(if n_classes == 2 {
                    w
                } else {
                    format!("class {k}: {w}")
                });
            }
            maps.push(map);
        }
        Ok(Box::new(FittedOvr {
            input: self.0.input(),
            maps,
            n_classes,
            warnings,
        }))
    }
}

/// The score column a binary method reads for class `k`. Methods that read
/// the native score get the probability from families that have none.
fn column_for(scores: &Scores, input: Input, k: usize, n_classes: usize) -> Vec<f64> {
    match (input, &scores.native) {
        // Binary tasks carry one native column: the positive class's log-odds.
        (Input::Native, Some(native)) if n_classes == 2 => native.column(0).to_vec(),
        // Per-class logits carry an arbitrary per-row shift, so class k's own
        // column is not comparable across rows; its log-odds against the rest
        // of the classes is, and is what a binary method expects.
        (Input::Native, Some(native)) => native
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
        (Input::Native, None) | (Input::Probability, _) => scores.proba.column(k).to_vec(),
    }
}

pub(crate) struct FittedOvr {
    pub(crate) input: Input,
    pub(crate) maps: Vec<Box<dyn BinaryMap>>,
    pub(crate) n_classes: usize,
    pub(crate) warnings: Vec<String>,
}

impl Calibration for FittedOvr {
    fn apply(&self, scores: &Scores) -> Array2<f64> {
        let n = scores.proba.nrows();
        let mut out = Array2::zeros((n, self.n_classes));
        if self.n_classes == 2 {
            let column = column_for(scores, self.input, 1, 2);
            for (i, p) in self.maps[0].apply_all(&column).into_iter().enumerate() {
                let p = p.clamp(0.0, 1.0);
                out[[i, 1]] = p;
                out[[i, 0]] = 1.0 - p;
            }
            return out;
        }
        for (k, map) in self.maps.iter().enumerate() {
            let column = column_for(scores, self.input, k, self.n_classes);
            for (i, p) in map.apply_all(&column).into_iter().enumerate() {
                out[[i, k]] = p.clamp(0.0, 1.0);
            }
        }
        renormalise(&mut out);
        out
    }

    fn warnings(&self) -> Vec<String> {
        self.warnings.clone()
    }

    fn export(&self) -> Option<Exported> {
        Some(Exported::Maps {
            input: self.input,
            maps: self
                .maps
                .iter()
                .map(|m| m.export())
                .collect::<Option<_>>()?,
        })
    }

    /// For maps that give intervals: the mean lower and upper bound and the
    /// mean and largest width over the rows (and classes).
    fn details(&self, scores: &Scores) -> BTreeMap<String, f64> {
        let classes: Vec<usize> = if self.n_classes == 2 {
            vec![1]
        } else {
            (0..self.n_classes).collect()
        };
        let (mut low, mut high, mut widest, mut count) = (0.0, 0.0, 0.0f64, 0usize);
        for (map, &k) in self.maps.iter().zip(&classes) {
            let column = column_for(scores, self.input, k, self.n_classes);
            let Some(intervals) = map.intervals(&column) else {
                return BTreeMap::new();
            };
            for (p0, p1) in intervals {
                low += p0;
                high += p1;
                widest = widest.max(p1 - p0);
                count += 1;
            }
        }
        if count == 0 {
            return BTreeMap::new();
        }
        let n = count as f64;
        BTreeMap::from([
            ("interval_low_mean".to_string(), low / n),
            ("interval_high_mean".to_string(), high / n),
            ("interval_width_mean".to_string(), (high - low) / n),
            ("interval_width_max".to_string(), widest),
        ])
    }
}
