//! Gradient-boosted trees: Newton boosting of the log loss (Friedman 2001;
//! the second-order leaf values of XGBoost and LightGBM) on our histogram
//! bins ([`super::tree::Binned`]).
//!
//! Binary tasks boost one score F, the log-odds, from the log of the prior
//! odds. Multiclass tasks boost one score per class under the softmax, K
//! trees per round, with the diagonal Hessian p(1 - p), as scikit-learn's
//! histogram gradient boosting does. Each tree grows depth-first to
//! `max_depth`, splitting where G_L^2/(H_L + l2) + G_R^2/(H_R + l2) most
//! exceeds G^2/(H + l2); a leaf's value is -G/(H + l2) times the learning
//! rate. There is no sampling, so results are deterministic. F (binary) or
//! the per-class scores (multiclass) are the native score.

use super::tree::{descend, partition, Binned, Node, Rows};
use super::Build;
use super::{Family, Learner, Model};
use crate::common::error::Result;
use crate::common::params::{ParamKind, ParamSpec, ParamValue};
use crate::common::scores::{binary_from_log_odds, softmax_rows, Scores};
use ndarray::{Array1, Array2, ArrayView2};

pub const FAMILY: Family = Family {
    kind: "gradient_boosting",
    about: "gradient-boosted trees (Newton steps on the log loss, histogram splits)",
    params: &[
        ParamSpec {
            name: "rounds",
            kind: ParamKind::Int {
                min: 1,
                max: 100_000,
            },
            default: ParamValue::Int(100),
            about: "boosting rounds",
        },
        ParamSpec {
            name: "learning_rate",
            kind: ParamKind::Float {
                min: 1e-6,
                max: 1.0,
            },
            default: ParamValue::Float(0.1),
            about: "shrinkage of every tree's values",
        },
        ParamSpec {
            name: "max_depth",
            kind: ParamKind::Int { min: 1, max: 32 },
            default: ParamValue::Int(5),
            about: "depth of every tree",
        },
        ParamSpec {
            name: "min_leaf_rows",
            kind: ParamKind::Int {
                min: 1,
                max: 100_000,
            },
            default: ParamValue::Int(20),
            about: "fewest training rows in a leaf",
        },
        ParamSpec {
            name: "l2",
            kind: ParamKind::Float { min: 0.0, max: 1e6 },
            default: ParamValue::Float(1.0),
            about: "L2 penalty on leaf values",
        },
    ],
    build: Build::Learner(|p| {
        Box::new(Boosting {
            rounds: p.int("rounds") as usize,
            learning_rate: p.float("learning_rate"),
            max_depth: p.int("max_depth") as usize,
            min_leaf_rows: p.int("min_leaf_rows") as usize,
            l2: p.float("l2"),
        })
    }),
    revision: 0,
    cost: super::Cost::Linear(5.3e-7),
};

struct Boosting {
    rounds: usize,
    learning_rate: f64,
    max_depth: usize,
    min_leaf_rows: usize,
    l2: f64,
}

struct RegressionTree {
    nodes: Vec<Node<f64>>,
}

impl RegressionTree {
    fn value(&self, x: &[f64]) -> f64 {
        descend(&self.nodes, x)
    }
}

/// Gradient, Hessian and row count per bin, for every feature, laid out
/// feature after feature.
type Histogram = Vec<(f64, f64, u32)>;

/// Adds the rows' gradients and Hessians into a zeroed histogram.
fn fill(
    data: &Binned,
    offsets: &[usize],
    rows: &[u32],
    g: &[f64],
    h: &[f64],
    hist: &mut Histogram,
) {
    // Gather once: the feature loop below then reads them in order.
    let gh: Vec<(f64, f64)> = rows
        .iter()
        .map(|&r| (g[r as usize], h[r as usize]))
        .collect();
    // Row by row, every feature: consecutive updates go to different
    // features' bins and do not wait on each other, while each bin still
    // adds its rows in order.
    for (&r, &(gr, hr)) in rows.iter().zip(&gh) {
        for (&code, &offset) in data.row(r as usize).iter().zip(offsets) {
            let e = &mut hist[offset + usize::from(code)];
            e.0 += gr;
            e.1 += hr;
            e.2 += 1;
        }
    }
}

impl Boosting {
    /// Grows one regression tree on gradients `g` and Hessians `h`, and
    /// returns it with the value it gives each training row. A child's
    /// histogram is built from its rows only when it is the smaller child;
    /// the larger one's is the parent's minus the smaller's (LightGBM's
    /// subtraction trick), which halves the work below the root.
    fn grow(
        &self,
        data: &Binned,
        offsets: &[usize],
        g: &[f64],
        h: &[f64],
    ) -> (RegressionTree, Vec<f64>) {
        let n = data.n();
        let total = offsets[data.d()];
        let mut rows: Vec<u32> = (0..n as u32).collect();
        let mut nodes = vec![Node::Leaf(0.0)];
        let mut fitted = vec![0.0; n];
        let can_split =
            |len: usize, depth: usize| depth < self.max_depth && len >= 2 * self.min_leaf_rows;
        let mut root = vec![(0.0, 0.0, 0u32); total];
        if can_split(n, 0) {
            fill(data, offsets, &rows, g, h, &mut root);
        }
        let mut stack: Vec<(usize, usize, usize, usize, Histogram)> = vec![(0, 0, n, 0, root)];
        while let Some((node, start, end, depth, hist)) = stack.pop() {
            let slice = &rows[start..end];
            let (sg, sh): (f64, f64) = slice.iter().fold((0.0, 0.0), |(a, b), &r| {
                (a + g[r as usize], b + h[r as usize])
            });
            let parent = sg * sg / (sh + self.l2);
            let mut best: Option<(f64, usize, usize)> = None;
            if can_split(slice.len(), depth) {
                for f in 0..data.d() {
                    let part = &hist[offsets[f]..offsets[f + 1]];
                    if part.len() < 2 {
                        continue;
                    }
                    let (mut lg, mut lh, mut lc) = (0.0, 0.0, 0usize);
                    for (b, &(bg, bh, bc)) in part[..part.len() - 1].iter().enumerate() {
                        if bc == 0 {
                            continue;
                        }
                        lg += bg;
                        lh += bh;
                        lc += bc as usize;
                        if lc < self.min_leaf_rows {
                            continue;
                        }
                        if slice.len() - lc < self.min_leaf_rows {
                            break;
                        }
                        let (rg, rh) = (sg - lg, sh - lh);
                        let gain = lg * lg / (lh + self.l2) + rg * rg / (rh + self.l2) - parent;
                        if gain > 1e-12 && best.is_none_or(|(bgain, _, _)| gain > bgain) {
                            best = Some((gain, f, b));
                        }
                    }
                }
            }
            match best {
                None => {
                    let v = -sg / (sh + self.l2) * self.learning_rate;
                    nodes[node] = Node::Leaf(v);
                    for &r in &rows[start..end] {
                        fitted[r as usize] = v;
                    }
                }
                Some((_, f, b)) => {
                    let mid = partition(data, &mut rows[start..end], f, b);
                    let left = nodes.len();
                    nodes.push(Node::Leaf(0.0));
                    nodes.push(Node::Leaf(0.0));
                    nodes[node] = Node::Split {
                        feature: f as u32,
                        threshold: data.cut(f, b),
                        left: left as u32,
                        right: left as u32 + 1,
                    };
                    let (l_len, r_len) = (mid, end - start - mid);
                    let (l_split, r_split) =
                        (can_split(l_len, depth + 1), can_split(r_len, depth + 1));
                    let (mut lh, mut rh) = (Vec::new(), Vec::new());
                    if l_split || r_split {
                        let mut small = vec![(0.0, 0.0, 0u32); total];
                        let small_is_left = l_len <= r_len;
                        let small_rows = if small_is_left {
                            &rows[start..start + mid]
                        } else {
                            &rows[start + mid..end]
                        };
                        fill(data, offsets, small_rows, g, h, &mut small);
                        let mut large = hist;
                        for (e, s) in large.iter_mut().zip(&small) {
                            e.0 -= s.0;
                            e.1 -= s.1;
                            e.2 -= s.2;
                        }
                        (lh, rh) = if small_is_left {
                            (small, large)
                        } else {
                            (large, small)
                        };
                    }
                    stack.push((left + 1, start + mid, end, depth + 1, rh));
                    stack.push((left, start, start + mid, depth + 1, lh));
                }
            }
        }
        (RegressionTree { nodes }, fitted)
    }
}

struct Fitted {
    base: Array1<f64>,
    /// Rounds of trees; one tree per round for binary tasks, K otherwise.
    rounds: Vec<Vec<RegressionTree>>,
    n_classes: usize,
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
        _seed: u64,
    ) -> Result<Box<dyn Model>> {
        let n = y.len();
        let data = Binned::new(x);
        let mut offsets = vec![0usize];
        for f in 0..data.d() {
            offsets.push(offsets[f] + data.bins(f));
        }
        let outputs = if n_classes == 2 { 1 } else { n_classes };
        let mut counts = vec![0.0f64; n_classes];
        for &c in y {
            counts[c] += 1.0;
        }
        let base: Array1<f64> = if n_classes == 2 {
            Array1::from(vec![(counts[1] / counts[0]).ln()])
        } else {
            counts.iter().map(|c| (c / n as f64).ln()).collect()
        };
        let mut f = Array2::from_shape_fn((n, outputs), |(_, k)| base[k]);
        let mut rounds = Vec::with_capacity(self.rounds);
        let (mut g, mut h) = (vec![0.0; n], vec![0.0; n]);
        for _ in 0..self.rounds {
            let p = if n_classes == 2 {
                f.mapv(crate::common::math::sigmoid)
            } else {
                softmax_rows(&f)
            };
            let mut trees = Vec::with_capacity(outputs);
            for k in 0..outputs {
                let class = if n_classes == 2 { 1 } else { k };
                for i in 0..n {
                    let pk = p[[i, k]];
                    g[i] = pk - f64::from(u8::from(y[i] == class));
                    h[i] = (pk * (1.0 - pk)).max(1e-16);
                }
                let (tree, fitted) = self.grow(&data, &offsets, &g, &h);
                for i in 0..n {
                    f[[i, k]] += fitted[i];
                }
                trees.push(tree);
            }
            rounds.push(trees);
        }
        Ok(Box::new(Fitted {
            base,
            rounds,
            n_classes,
        }))
    }
}

impl Model for Fitted {
    fn predict(&self, x: ArrayView2<'_, f64>) -> Scores {
        let outputs = self.base.len();
        let mut f = Array2::from_shape_fn((x.nrows(), outputs), |(_, k)| self.base[k]);
        for (row, mut out) in Rows::new(x).iter().zip(f.rows_mut()) {
            for trees in &self.rounds {
                for (k, tree) in trees.iter().enumerate() {
                    out[k] += tree.value(row);
                }
            }
        }
        if self.n_classes == 2 {
            let z: Vec<f64> = f.column(0).to_vec();
            Scores {
                proba: binary_from_log_odds(&z),
                native: Some(f),
            }
        } else {
            Scores {
                proba: softmax_rows(&f),
                native: Some(f),
            }
        }
    }
}
