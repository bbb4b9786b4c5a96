//! k-nearest neighbours: class fractions among the k closest training rows
//! (Euclidean distance on standardised features).
//!
//! Why our own: measured on this machine, linfa-nn took about 3.7 s for
//! 5,000 queries. Distances here come from one matrix product per block of
//! queries (|b|^2 - 2 a.b ranks training rows b as |a - b|^2 does), and the
//! k nearest from one pass that keeps a sorted list of k; equal distances are broken by the lower training-row index, so
//! the neighbours, and the probabilities, are deterministic. No native score:
//! calibrators read the fractions.

use super::Build;
use super::{Family, Learner, Model};
use crate::common::error::{Error, Result};
use crate::common::params::{ParamKind, ParamSpec, ParamValue};
use crate::common::scores::Scores;
use ndarray::linalg::general_mat_mul;
use ndarray::{s, Array1, Array2, ArrayView2, Axis};

pub const FAMILY: Family = Family {
    kind: "knn",
    about: "k-nearest neighbours on standardised features; class fractions among the k nearest",
    params: &[ParamSpec {
        name: "k",
        kind: ParamKind::Int {
            min: 1,
            max: 10_000,
        },
        default: ParamValue::Int(25),
        about: "neighbours per query",
    }],
    build: Build::Learner(|p| {
        Box::new(Knn {
            k: p.int("k") as usize,
        })
    }),
    revision: 0,
    cost: super::Cost::Quadratic(1.7e-10),
};

/// Queries per block of the distance matrix. The block's products are
/// written into one reused buffer of BLOCK x n: a fresh 512-row block cost
/// more in page faults than in arithmetic (measured with perf).
const BLOCK: usize = 64;

struct Knn {
    k: usize,
}

struct Fitted {
    x: Array2<f64>,
    norms: Array1<f64>,
    y: Vec<usize>,
    k: usize,
    n_classes: usize,
}

impl Learner for Knn {
    fn wants_standardised(&self) -> bool {
        true
    }

    fn fit(
        &self,
        x: ArrayView2<'_, f64>,
        y: &[usize],
        n_classes: usize,
        _seed: u64,
    ) -> Result<Box<dyn Model>> {
        if y.len() < self.k {
            return Err(Error::Fit(format!(
                "k = {} neighbours but only {} training rows; lower `k`",
                self.k,
                y.len()
            )));
        }
        Ok(Box::new(Fitted {
            norms: x.map_axis(Axis(1), |r| r.dot(&r)),
            x: x.to_owned(),
            y: y.to_vec(),
            k: self.k,
            n_classes,
        }))
    }
}

impl Model for Fitted {
    fn predict(&self, q: ArrayView2<'_, f64>) -> Scores {
        let n = q.nrows();
        let mut proba = Array2::zeros((n, self.n_classes));
        // The k best (distance, row) pairs so far, kept sorted; a row
        // enters only if it beats the current k-th, so most rows cost one
        // comparison.
        let mut best: Vec<(f64, u32)> = Vec::with_capacity(self.k + 1);
        let mut buffer = Array2::<f64>::zeros((BLOCK.min(n), self.x.nrows()));
        for start in (0..n).step_by(BLOCK) {
            let end = (start + BLOCK).min(n);
            let block = q.slice(s![start..end, ..]);
            let mut cross = buffer.slice_mut(s![..end - start, ..]);
            general_mat_mul(1.0, &block, &self.x.t(), 0.0, &mut cross);
            for (i, row) in cross.rows().into_iter().enumerate() {
                let row = row.as_slice().expect("a row of the product buffer");
                best.clear();
                // Eight rows at a time: a vectorised test whether any of
                // them could enter the list, then the exact scalar pass for
                // the few groups that can.
                let mut worst = f64::INFINITY;
                for (g, (cs, ns)) in row
                    .chunks(8)
                    .zip(self.norms.as_slice().expect("norms").chunks(8))
                    .enumerate()
                {
                    if best.len() == self.k {
                        let mut any = false;
                        for (&c, &nj) in cs.iter().zip(ns) {
                            any |= nj - 2.0 * c < worst;
                        }
                        if !any {
                            continue;
                        }
                    }
                    for (t, (&c, &nj)) in cs.iter().zip(ns).enumerate() {
                        // |q|^2 is the same for every training row, so it is
                        // left out of the ranking.
                        let dist = nj - 2.0 * c;
                        // Rows come in index order, so a tie with the k-th
                        // loses: the lower index wins, as documented.
                        if best.len() == self.k && dist >= worst {
                            continue;
                        }
                        let at = best.partition_point(|&(d, _)| d <= dist);
                        best.insert(at, (dist, (g * 8 + t) as u32));
                        best.truncate(self.k);
                        if best.len() == self.k {
                            worst = best[self.k - 1].0;
                        }
                    }
                }
                let mut out = proba.row_mut(start + i);
                for &(_, j) in &best {
                    out[self.y[j as usize]] += 1.0;
                }
                out.mapv_inplace(|v| v / self.k as f64);
            }
        }
        Scores {
            proba,
            native: None,
        }
    }
}
