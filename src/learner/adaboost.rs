//! Boosted stumps: AdaBoost on depth-1 trees (Freund & Schapire 1997),
//! SAMME for multiclass tasks (Zhu, Zou, Rosset & Hastie 2009).
//!
//! Binary: discrete AdaBoost with h in {-1, +1} and alpha = ln((1 - e)/e) / 2
//! gives the real-valued score F = sum alpha h; the probability is
//! Friedman, Hastie & Tibshirani's (2000) logistic correction
//! p = 1 / (1 + exp(-2F)), and 2F is the native log-odds the calibrators
//! read. Multiclass: SAMME's alpha = ln((1 - e)/e) + ln(K - 1) and
//! F_k = sum alpha [h = k]; probabilities are softmax(F / (K - 1)), the
//! multiclass form of the same correction, with F / (K - 1) as the logits.
//! Boosting stops early when a stump is no better than chance or perfect.
//!
//! The raw probability is a convention, and the two in common use tell
//! opposite raw stories: the logistic correction above (the default) tends
//! to read over-confident, while the weighted vote share, p = (1 + F / sum
//! alpha) / 2 for two classes and F_k / sum alpha in general, is squeezed
//! towards the middle and reads strongly under-confident.
//! `probability = "vote_share"` selects the second, so a team can compare
//! like with like; the native score the calibrators read is the same under
//! both, and after calibration the two agree.

use super::tree::{grow, Binned, Growth, Rows, Tree};
use super::Build;
use super::{Family, Learner, Model};
use crate::common::error::{Error, Result};
use crate::common::params::{ParamKind, ParamSpec, ParamValue};
use crate::common::rng::SplitMix64;
use crate::common::scores::{binary_from_log_odds, softmax_rows, Scores};
use ndarray::{Array1, Array2, ArrayView2};

pub const FAMILY: Family = Family {
    kind: "boosted_stumps",
    about: "AdaBoost on stumps (SAMME for multiclass), logistic correction p = 1/(1+exp(-2F)) by default",
    params: &[
        ParamSpec {
            name: "rounds",
            kind: ParamKind::Int {
                min: 1,
                max: 100_000,
            },
            default: ParamValue::Int(200),
            about: "boosting rounds (stumps)",
        },
        ParamSpec {
            name: "probability",
            kind: ParamKind::Choice(&[LOGISTIC, VOTE_SHARE]),
            default: ParamValue::Choice(LOGISTIC),
            about: "raw probability convention: \"logistic\" (p = 1/(1+exp(-2F))) or \"vote_share\" (each class's share of the stump weights)",
        },
    ],
    build: Build::Learner(|p| {
        Box::new(Boosting {
            rounds: p.int("rounds") as usize,
            vote_share: p.choice("probability") == VOTE_SHARE,
        })
    }),
    revision: 0,
    cost: super::Cost::Linear(5.6e-7),
};

/// The two raw probability conventions.
pub const LOGISTIC: &str = "logistic";
pub const VOTE_SHARE: &str = "vote_share";

struct Boosting {
    rounds: usize,
    vote_share: bool,
}

struct Fitted {
    stumps: Vec<(Tree, f64)>,
    n_classes: usize,
    vote_share: bool,
}

/// The stump's predicted class for a row (its leaf's most frequent class;
/// ties go to the lower index).
fn vote(tree: &Tree, row: &[f64]) -> usize {
    let leaf = tree.leaf(row);
    let mut best = 0;
    for (c, &v) in leaf.iter().enumerate() {
        if v > leaf[best] {
            best = c;
        }
    }
    best
}

impl Learner for Boosting {
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
        let n = y.len();
        let data = Binned::new(x);
        let rows = Rows::new(x);
        let growth = Growth {
            max_depth: 1,
            min_leaf_rows: 1,
            features_per_split: x.ncols(),
        };
        let mut rng = SplitMix64::new(seed);
        let mut w = vec![1.0 / n as f64; n];
        let mut stumps = Vec::new();
        let k = n_classes as f64;
        for _ in 0..self.rounds {
            let tree = grow(&data, y, &w, n_classes, growth, &mut rng);
            let wrong: Vec<bool> = rows
                .iter()
                .zip(y)
                .map(|(row, &label)| vote(&tree, row) != label)
                .collect();
            let err: f64 = w
                .iter()
                .zip(&wrong)
                .filter(|(_, &bad)| bad)
                .map(|(wi, _)| wi)
                .sum();
            if err <= 0.0 {
                // A perfect stump: keep it with a large finite weight and stop.
                stumps.push((tree, 10.0));
                break;
            }
            if err >= 1.0 - 1.0 / k {
                break;
            }
            let alpha = if n_classes == 2 {
                0.5 * ((1.0 - err) / err).ln()
            } else {
                ((1.0 - err) / err).ln() + (k - 1.0).ln()
            };
            // Binary: w *= exp(-alpha y h) = exp(+alpha) on mistakes,
            // exp(-alpha) on hits; SAMME: w *= exp(alpha) on mistakes.
            let (up, down) = if n_classes == 2 {
                (alpha.exp(), (-alpha).exp())
            } else {
                (alpha.exp(), 1.0)
            };
            let mut total = 0.0;
            for (wi, &bad) in w.iter_mut().zip(&wrong) {
                *wi *= if bad { up } else { down };
                total += *wi;
            }
            w.iter_mut().for_each(|wi| *wi /= total);
            stumps.push((tree, alpha));
        }
        if stumps.is_empty() {
            return Err(Error::Fit(
                "boosting found no stump better than chance on this training split".into(),
            ));
        }
        Ok(Box::new(Fitted {
            stumps,
            n_classes,
            vote_share: self.vote_share,
        }))
    }
}

impl Model for Fitted {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        let k = self.n_classes;
        let mut f = Array2::<f64>::zeros((x.nrows(), k));
        for (row, mut out) in Rows::new(x).iter().zip(f.rows_mut()) {
            for (tree, alpha) in &self.stumps {
                out[vote(tree, row)] += alpha;
            }
        }
        // Each stump votes its weight for one class, so the votes of a row
        // sum to the total weight.
        let total: f64 = self.stumps.iter().map(|(_, a)| a).sum();
        let shares = || f.mapv(|v| v / total);
        if k == 2 {
            // F = sum alpha h with h = +1 for class 1 and -1 for class 0.
            let two_f: Vec<f64> = f.rows().into_iter().map(|r| 2.0 * (r[1] - r[0])).collect();
            Scores {
                proba: if self.vote_share {
                    shares()
                } else {
                    binary_from_log_odds(&two_f)
                },
                native: Some(Array1::from(two_f).insert_axis(ndarray::Axis(1))),
            }
        } else {
            let logits = &f / (k as f64 - 1.0);
            Scores {
                proba: if self.vote_share {
                    shares()
                } else {
                    softmax_rows(&logits)
                },
                native: Some(logits),
            }
        }
    }
}
