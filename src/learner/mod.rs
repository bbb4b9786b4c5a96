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
pub mod program;
mod svm;
mod tree;

use crate::common::error::{Error, Result};
use crate::common::params::{ParamSpec, Params};
use crate::common::scores::Scores;
use crate::data::preprocess::Preprocessor;
use crate::data::table::Table;
use ndarray::{ArrayView2, Axis};
use program::{Fit, Program};
use std::path::Path;

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
    /// How a cell gets its model.
    pub build: Build,
    /// Raised whenever a change to the algorithm changes its results within
    /// one candor version, so that a resumed run does not reuse cells the
    /// earlier algorithm computed (it is part of every cell's fingerprint).
    pub revision: u32,
    /// How the family's training time grows with the data, for balancing
    /// shards of a run and for warning before a run that will take hours.
    pub cost: Cost,
}

/// A family's time per fit, as measured with `cargo bench --bench families`
/// on magic_gamma (15,216 training rows, 10 columns) on a 2-core machine:
/// rough, but it orders families and data sizes correctly.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Cost {
    /// Seconds per training row and column: training grows linearly with
    /// the data (give or take a logarithm).
    Linear(f64),
    /// Seconds per (training row × scored row × column): every scored row is
    /// compared with every training row, so time grows with the square of
    /// the rows (nearest neighbours).
    Quadratic(f64),
}

impl Cost {
    /// Estimated seconds to fit on `train` rows of `columns` columns and
    /// score `scored` rows.
    pub fn seconds(self, train: usize, scored: usize, columns: usize) -> f64 {
        let (n, m, c) = (train as f64, scored as f64, columns.max(1) as f64);
        match self {
            Cost::Linear(s) => s * n * c,
            Cost::Quadratic(s) => s * n * m * c,
        }
    }

    /// Whether the time grows faster than the rows.
    pub fn is_superlinear(self) -> bool {
        matches!(self, Cost::Quadratic(_))
    }
}

impl Family {
    /// candor's own learner with these parameters; `None` for the family
    /// that runs an outside program, which needs its command as well (see
    /// [`Trainer::build`]).
    pub fn learner(&self, params: &Params) -> Option<Box<dyn Learner>> {
        match self.build {
            Build::Learner(build) => Some(build(params)),
            Build::Program => None,
        }
    }
}

/// candor's own families: those that train in-process on the encoded
/// matrix, which benchmarks and property tests range over.
pub fn own_families() -> impl Iterator<Item = &'static Family> {
    FAMILIES
        .iter()
        .copied()
        .filter(|f| matches!(f.build, Build::Learner(_)))
}

/// How a family's entry becomes something the protocol can train.
pub enum Build {
    /// One of candor's own learners, built from checked parameters.
    Learner(fn(&Params) -> Box<dyn Learner>),
    /// An outside program, described by the family's `command` keys.
    Program,
}

/// What the protocol trains in a cell: one of candor's learners on the
/// encoded matrix, or an outside program on files.
pub enum Trainer {
    Learner(Box<dyn Learner>),
    Program(Program),
}

impl Trainer {
    /// Builds a family's trainer from its checked parameters; `program` is
    /// the family's command, if it runs one, and `dir` the folder its
    /// relative paths are resolved against.
    pub fn build(
        family: &Family,
        params: &Params,
        program: Option<&program::ProgramSpec>,
        dir: &Path,
    ) -> Result<Trainer> {
        match (&family.build, program) {
            (Build::Learner(build), _) => Ok(Trainer::Learner(build(params))),
            (Build::Program, Some(spec)) => Ok(Trainer::Program(Program::new(spec, params, dir)?)),
            (Build::Program, None) => Err(Error::Manifest(format!(
                "family kind `{}` needs `command = \"...\"`",
                family.kind
            ))),
        }
    }

    /// Trains on `fit_rows` of `table` and scores `score_rows`, the one step
    /// the cross-fitting protocol repeats for every inner fold and the final
    /// fit. Preprocessing is fitted on `fit_rows` only. Whatever trains, the
    /// scores come back as finite probabilities whose rows sum to 1.
    pub fn fit_and_score(
        &self,
        table: &Table,
        fit_rows: &[usize],
        score_rows: &[usize],
        n_classes: usize,
        seed: u64,
    ) -> Result<Scores> {
        let y_fit: Vec<usize> = fit_rows.iter().map(|&r| table.labels[r]).collect();
        if y_fit.iter().all(|&c| c == y_fit[0]) {
            return Err(Error::Fit(format!(
                "the training split holds a single class (`{}`, {} rows); no family can learn from it",
                table.classes[y_fit[0]],
                y_fit.len()
            )));
        }
        let learner = match self {
            Trainer::Program(program) => {
                return program.fit_and_score(&Fit {
                    table,
                    train: fit_rows,
                    score: score_rows,
                    n_classes,
                    seed,
                })
            }
            Trainer::Learner(learner) => learner,
        };
        let prep = Preprocessor::fit(table, fit_rows, learner.wants_standardised());
        if prep.width() == 0 {
            return Err(Error::Fit(
                "every feature is constant on this training split; the dataset needs varying columns"
                    .into(),
            ));
        }
        let x_fit = prep.transform(table, fit_rows);
        let model = learner.fit(x_fit.view(), &y_fit, n_classes, seed)?;
        // Freed before the rows to score are encoded, so the two matrices
        // are never held at once.
        drop(x_fit);
        let scores = model.predict(prep.transform(table, score_rows).view());
        let finite = scores.proba.iter().all(|p| p.is_finite())
            && scores
                .native
                .iter()
                .flatten()
                .all(|s| !s.is_nan() && *s != f64::INFINITY);
        let sums_to_one = scores
            .proba
            .sum_axis(Axis(1))
            .iter()
            .all(|s| (s - 1.0).abs() < 1e-6);
        if !finite || !sums_to_one {
            return Err(Error::Fit(
                "the family produced non-finite or unnormalised probabilities; try stronger regularisation".into(),
            ));
        }
        Ok(scores)
    }
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
    &program::FAMILY,
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
