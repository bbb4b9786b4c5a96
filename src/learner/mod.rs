//! Model families: the learners whose probabilities candor evaluates.
//!
//! A family follows linfa's "parameters, then `fit`, then a fitted model"
//! shape: a [`Learner`] holds checked parameters, `fit` trains it on one
//! training split, and the returned [`Model`] scores new rows. Adding a family
//! is one new file that defines a [`Family`] plus one line in [`FAMILIES`].
//!
//! May import `common` and `data` (the encoded design matrix); never
//! `calibrate`, which sits beside it, nor anything above.

mod adaboost;
mod forest;
mod gradient_boosting;
mod knn;
mod logistic;
mod mlp;
mod naive_bayes;
mod svm;
mod tree;

use crate::common::error::Result;
use crate::common::params::{ParamSpec, Params};
use crate::common::scores::Scores;
use ndarray::ArrayView2;

/// A family with its parameters set, ready to be trained on any split.
pub trait Learner: Send + Sync {
    /// Whether features should be standardised (centred and scaled on the
    /// training split) before `fit`; scale-sensitive families say yes.
    fn wants_standardised(&self) -> bool;

    /// Trains on rows `x` with labels `y` in `0..n_classes`. `seed` is the
    /// only source of randomness the learner may use, which keeps results
    /// identical whatever the thread count.
    fn fit(
        &self,
        x: ArrayView2<'_, f64>,
        y: &[usize],
        n_classes: usize,
        seed: u64,
    ) -> Result<Box<dyn Model>>;
}

/// A trained model.
pub trait Model: Send {
    /// Scores rows with the same columns as the training rows.
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores;
}

/// A registry entry: a family kind, its documented parameters and how to
/// build a learner from checked parameter values.
pub struct Family {
    /// The `kind` used in manifests.
    pub kind: &'static str,
    /// One line for `candor list families`.
    pub about: &'static str,
    /// Every parameter the family accepts.
    pub params: &'static [ParamSpec],
    /// Builds a learner; the parameters have been checked against `params`.
    pub build: fn(&Params) -> Box<dyn Learner>,
    /// Raised whenever a change to the algorithm changes its results within
    /// one candor version, so that a resumed run does not reuse cells the
    /// earlier algorithm computed (it is part of every cell's fingerprint).
    pub revision: u32,
}

/// Every family candor knows, in the order `candor list families` lists them.
pub const FAMILIES: &[&Family] = &[
    &logistic::FAMILY,
    &naive_bayes::FAMILY,
    &forest::TREE,
    &forest::RANDOM_FOREST,
    &forest::BAGGED_TREES,
    &adaboost::FAMILY,
    &gradient_boosting::FAMILY,
    &knn::FAMILY,
    &svm::FAMILY,
    &mlp::FAMILY,
];

/// Family kinds that earlier versions spelled otherwise, with today's name,
/// so an old manifest fails with the fix rather than a bare "unknown".
pub const RENAMED_KINDS: &[(&str, &str)] = &[("gaussian_nb", "naive_bayes")];

/// Parameter names that earlier versions spelled otherwise, with today's.
pub const RENAMED_PARAMS: &[(&str, &str)] = &[
    ("var_smoothing", "variance_floor"),
    ("min_samples_leaf", "min_leaf_rows"),
    ("max_iter", "max_steps"),
    ("tol", "stop_tolerance"),
];

/// Today's name for a kind or parameter that was renamed.
pub fn renamed(table: &[(&str, &'static str)], old: &str) -> Option<&'static str> {
    table.iter().find(|(o, _)| *o == old).map(|(_, new)| *new)
}

/// Looks up a family kind by its manifest name.
pub fn find(kind: &str) -> Option<&'static Family> {
    FAMILIES.iter().copied().find(|f| f.kind == kind)
}

/// The known kinds, for error messages.
pub fn known_kinds() -> String {
    FAMILIES
        .iter()
        .map(|f| f.kind)
        .collect::<Vec<_>>()
        .join(", ")
}
