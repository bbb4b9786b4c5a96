//! Tree families built on our tree learner ([`super::tree`]): a single
//! decision tree, a random forest and bagged trees.
//!
//! Probabilities are leaf class frequencies (the tree) or their mean over
//! the trees (the ensembles). None of these has a native score, so Platt
//! scaling and Venn-Abers read the probabilities. Each tree's seed derives
//! from the model seed and the tree's index, and trees are grown in parallel
//! and averaged in index order, so results do not depend on thread count.

use super::tree::{grow, Binned, Growth, Rows, Tree};
use super::Build;
use super::{Family, Learner, Model};
use crate::common::error::Result;
use crate::common::params::{ParamKind, ParamSpec, ParamValue, Params};
use crate::common::rng::{derive_seed, SplitMix64};
use crate::common::scores::Scores;
use ndarray::{Array2, ArrayView2};
use rayon::prelude::*;

const MAX_DEPTH: ParamSpec = ParamSpec {
    name: "max_depth",
    kind: ParamKind::Int { min: 1, max: 64 },
    default: ParamValue::Int(64),
    about: "largest depth of a tree",
};

const TREES: ParamSpec = ParamSpec {
    name: "trees",
    kind: ParamKind::Int {
        min: 1,
        max: 10_000,
    },
    default: ParamValue::Int(100),
    about: "number of trees",
};

pub const TREE: Family = Family {
    kind: "decision_tree",
    about: "one classification tree (Gini); probabilities are leaf class frequencies",
    params: &[MAX_DEPTH, MIN_LEAF_5],
    build: Build::Learner(|p| Box::new(Ensemble::from_params(p, Kind::Single))),
    revision: 0,
    cost: super::Cost::Linear(8.5e-8),
};

pub const RANDOM_FOREST: Family = Family {
    kind: "random_forest",
    about: "random forest: bootstrap rows, sqrt(features) per split, mean leaf frequencies",
    params: &[TREES, MAX_DEPTH, MIN_LEAF_1],
    build: Build::Learner(|p| Box::new(Ensemble::from_params(p, Kind::Forest))),
    revision: 0,
    cost: super::Cost::Linear(1.3e-6),
};

pub const BAGGED_TREES: Family = Family {
    kind: "bagged_trees",
    about: "bagged trees: bootstrap rows, every feature per split, mean leaf frequencies",
    params: &[TREES, MAX_DEPTH, MIN_LEAF_1],
    build: Build::Learner(|p| Box::new(Ensemble::from_params(p, Kind::Bagging))),
    revision: 0,
    cost: super::Cost::Linear(2.9e-6),
};

const MIN_LEAF_5: ParamSpec = ParamSpec {
    name: "min_leaf_rows",
    kind: ParamKind::Int {
        min: 1,
        max: 100_000,
    },
    default: ParamValue::Int(5),
    about: "fewest training rows in a leaf",
};

const MIN_LEAF_1: ParamSpec = ParamSpec {
    name: "min_leaf_rows",
    kind: ParamKind::Int {
        min: 1,
        max: 100_000,
    },
    default: ParamValue::Int(1),
    about: "fewest training rows in a leaf",
};

#[derive(Clone, Copy, PartialEq)]
enum Kind {
    Single,
    Forest,
    Bagging,
}

struct Ensemble {
    kind: Kind,
    trees: usize,
    max_depth: usize,
    min_leaf_rows: usize,
}

impl Ensemble {
    fn from_params(p: &Params, kind: Kind) -> Ensemble {
        Ensemble {
            kind,
            trees: if kind == Kind::Single {
                1
            } else {
                p.int("trees") as usize
            },
            max_depth: p.int("max_depth") as usize,
            min_leaf_rows: p.int("min_leaf_rows") as usize,
        }
    }
}

struct Fitted {
    trees: Vec<Tree>,
    n_classes: usize,
}

impl Learner for Ensemble {
    fn wants_standardised(&self) -> bool {
        false
    }

    fn fit(
        &self,
        x: ArrayView2<'_, f64>,
        y: &[usize],
        n_classes: usize,
        seed: u64,
    ) -> Result<Box<dyn Model>> {
        let data = Binned::new(x);
        let (n, d) = x.dim();
        let growth = Growth {
            max_depth: self.max_depth,
            min_leaf_rows: self.min_leaf_rows,
            features_per_split: match self.kind {
                Kind::Forest => ((d as f64).sqrt().floor() as usize).max(1),
                Kind::Single | Kind::Bagging => d,
            },
        };
        let trees = (0..self.trees)
            .into_par_iter()
            .map(|t| {
                let mut rng = SplitMix64::new(derive_seed(seed, &["tree", &t.to_string()]));
                let weights = if self.kind == Kind::Single {
                    vec![1u32; n]
                } else {
                    let mut w = vec![0u32; n];
                    for _ in 0..n {
                        w[rng.below(n)] += 1;
                    }
                    w
                };
                grow(&data, y, &weights, n_classes, growth, &mut rng)
            })
            .collect();
        Ok(Box::new(Fitted { trees, n_classes }))
    }
}

impl Model for Fitted {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        let mut proba = Array2::zeros((x.nrows(), self.n_classes));
        // Tree by tree, so each tree's nodes stay in cache while every row
        // descends it; each row still sums its trees in index order.
        let rows = Rows::new(x);
        for tree in &self.trees {
            for (row, mut out) in rows.iter().zip(proba.rows_mut()) {
                for (o, v) in out.iter_mut().zip(tree.leaf(row)) {
                    *o += v;
                }
            }
        }
        proba.mapv_inplace(|v| v / self.trees.len() as f64);
        Scores {
            proba,
            native: None,
        }
    }
}
