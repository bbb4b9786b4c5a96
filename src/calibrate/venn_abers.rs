//! Inductive Venn-Abers prediction (Vovk & Petej 2014).
//!
//! For a test score s, isotonic regression is fitted twice on the
//! calibration set plus the point (s, 0) and plus (s, 1); the two fitted
//! values at s are p0 <= p1, an interval that is well calibrated under
//! exchangeability. The single probability reported is the merge
//! p = p1 / (1 - p0 + p1) (Vovk, Petej & Fedorova 2015), which minimises the
//! worst-case log-loss regret; the interval's mean bounds and width over the
//! test fold are recorded with every result.
//!
//! The isotonic fits pool tied scores as [`super::Isotonic`] does and are
//! read as step functions at s, as the method defines them.
//!
//! Computing them fast (after Vovk, Petej & Fedorova 2015, "Large-scale
//! probabilistic predictors with and without guarantees of validity", who
//! precompute both fits once and answer each test score by search). Isotonic
//! regression's value on a block is the slope of the greatest convex
//! minorant of the cumulative sum diagram: the points Q_i = (weight, label
//! sum) of the first i pooled calibration points. Adding the test point
//! with label y after the first `l` points shifts every later point by
//! (1, y), and its fitted value is the slope of the bridge, the common lower
//! tangent, between the lower convex hull of Q_0..Q_l and that of the
//! shifted Q_r..Q_k (r = l, or l + 1 when the test score ties point l and
//! joins it). Every prefix's hull and every suffix's hull are stored at
//! once as two trees of parent pointers (a hull is a path to the root),
//! with skew-binary jump pointers (Myers 1983) so that a monotone search
//! along a path takes O(log n) steps. The bridge is a search along the left
//! path whose every step finds a tangent by a search along the right path:
//! O(n log n) to fit and O(log² h) per test score, h being the hull's size
//! (a few hundred points at most in practice), instead of O(n) per score.
//! `tests` keeps the direct O(n) computation and checks the two agree.

use super::{BinaryCalibrator, BinaryMap, Input};
use crate::common::error::Result;
use std::cell::RefCell;

/// Inductive Venn-Abers on the native score.
pub struct VennAbers;

/// No parent: the root of a hull tree.
const NONE: u32 = u32::MAX;

/// Steps walked one by one before searching with jump pointers.
const WALK: usize = 4;

/// The calibration set, pooled and summed, with every prefix's and every
/// suffix's lower hull of its cumulative sum diagram.
#[derive(Debug)]
pub struct VennAbersMap {
    /// Distinct calibration scores, increasing.
    scores: Vec<f64>,
    /// Q_i: the weight (`x`) and label sum (`y`) of the first i pooled
    /// points, i = 0..=k.
    x: Vec<f64>,
    y: Vec<f64>,
    /// Prefix hulls: the hull of Q_0..Q_i is the path from i to the root 0.
    left: Tree,
    /// Suffix hulls: the hull of Q_i..Q_k is the path from i to the root k.
    right: Tree,
    /// The last column of test scores and its intervals: the protocol asks
    /// for the probabilities and then for the intervals of the same scores.
    last: RefCell<Option<Answered>>,
}

/// Test scores with their intervals.
type Answered = (Vec<f64>, Vec<(f64, f64)>);

/// Paths to a root, with jump pointers for fast monotone search.
#[derive(Debug)]
struct Tree {
    parent: Vec<u32>,
    jump: Vec<u32>,
    depth: Vec<u32>,
}

impl Tree {
    fn with_capacity(n: usize) -> Tree {
        Tree {
            parent: vec![NONE; n],
            jump: vec![NONE; n],
            depth: vec![0; n],
        }
    }

    /// Hangs `v` under `p` (`NONE` for a root), setting its jump pointer
    /// by the skew-binary rule.
    fn attach(&mut self, v: usize, p: u32) {
        self.parent[v] = p;
        if p == NONE {
            self.jump[v] = v as u32;
            self.depth[v] = 0;
            return;
        }
        let pi = p as usize;
        let j = self.jump[pi] as usize;
        let jj = self.jump[j];
        self.depth[v] = self.depth[pi] + 1;
        self.jump[v] = if self.depth[pi] - self.depth[j] == self.depth[j] - self.depth[jj as usize]
        {
            jj
        } else {
            p
        };
    }

    /// The first node on the path from `start` to the root where `pred`
    /// holds, for a `pred` that is false up to some node and true from
    /// there on (it must hold at the root).
    fn first(&self, start: usize, mut pred: impl FnMut(usize) -> bool) -> usize {
        // The answer is usually a few steps away (the test point's block
        // rarely reaches far), so a short walk comes first.
        let mut v = start;
        for _ in 0..WALK {
            if pred(v) {
                return v;
            }
            v = self.parent[v] as usize;
        }
        while !pred(v) {
            let j = self.jump[v] as usize;
            v = if j != v && !pred(j) {
                j
            } else {
                self.parent[v] as usize
            };
        }
        v
    }
}

/// z-component of (b - a) x (c - a): positive for a left turn.
fn cross(ax: f64, ay: f64, bx: f64, by: f64, cx: f64, cy: f64) -> f64 {
    (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)
}

/// The lower hulls of the points taken in `order`, as a tree: each point's
/// parent is the hull vertex beside it when it was added. `convex(p, q, i)`
/// says whether the hull's last two vertices p, q stay when i comes.
fn hull_tree(
    n: usize,
    order: impl Iterator<Item = usize>,
    convex: impl Fn(usize, usize, usize) -> bool,
) -> Tree {
    let mut tree = Tree::with_capacity(n);
    let mut stack: Vec<usize> = Vec::new();
    for i in order {
        while let [.., p, q] = stack[..] {
            if convex(p, q, i) {
                break;
            }
            stack.pop();
        }
        tree.attach(i, stack.last().map_or(NONE, |&p| p as u32));
        stack.push(i);
    }
    tree
}

impl VennAbersMap {
    /// Pools the calibration set and builds both hull trees.
    pub fn fit(scores: &[f64], labels: &[bool]) -> VennAbersMap {
        let mut pairs: Vec<(f64, bool)> =
            scores.iter().copied().zip(labels.iter().copied()).collect();
        pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut distinct: Vec<f64> = Vec::new();
        let (mut x, mut y) = (vec![0.0], vec![0.0]);
        for (s, label) in pairs {
            let label = f64::from(u8::from(label));
            let last = x.len() - 1;
            if distinct.last() == Some(&s) {
                x[last] += 1.0;
                y[last] += label;
            } else {
                distinct.push(s);
                x.push(x[last] + 1.0);
                y.push(y[last] + label);
            }
        }
        let n = x.len();
        // Lower hulls by the monotone chain: left to right for prefixes,
        // right to left for suffixes; a point's parent is the hull vertex
        // beside it when it was added.
        let turn = |a: usize, b: usize, c: usize| cross(x[a], y[a], x[b], y[b], x[c], y[c]);
        let left = hull_tree(n, 0..n, |p, q, i| turn(p, q, i) > 0.0);
        let right = hull_tree(n, (0..n).rev(), |p, q, i| turn(i, q, p) > 0.0);
        VennAbersMap {
            scores: distinct,
            x,
            y,
            left,
            right,
            last: RefCell::new(None),
        }
    }

    /// The pair (p0, p1) for a test score.
    pub fn interval(&self, s: f64) -> (f64, f64) {
        let pos = self.scores.partition_point(|&v| v < s);
        let tied = pos < self.scores.len() && self.scores[pos] == s;
        let r = if tied { pos + 1 } else { pos };
        (self.fitted(pos, r, 0.0), self.fitted(pos, r, 1.0))
    }

    /// The intervals of many test scores, found by one merge of the sorted
    /// scores with the calibration scores rather than a binary search each,
    /// and computed in score order, so that neighbouring scores touch
    /// neighbouring parts of the hulls.
    fn intervals_in_order(&self, scores: &[f64]) -> Vec<(f64, f64)> {
        if let Some((seen, intervals)) = self.last.borrow().as_ref() {
            if seen.len() == scores.len()
                && seen
                    .iter()
                    .zip(scores)
                    .all(|(a, b)| a.to_bits() == b.to_bits())
            {
                return intervals.clone();
            }
        }
        let mut order: Vec<usize> = (0..scores.len()).collect();
        order.sort_by(|&a, &b| scores[a].total_cmp(&scores[b]));
        let mut out = vec![(0.0, 0.0); scores.len()];
        let mut pos = 0;
        for i in order {
            let s = scores[i];
            while pos < self.scores.len() && self.scores[pos] < s {
                pos += 1;
            }
            let tied = pos < self.scores.len() && self.scores[pos] == s;
            let r = if tied { pos + 1 } else { pos };
            out[i] = (self.fitted(pos, r, 0.0), self.fitted(pos, r, 1.0));
        }
        *self.last.borrow_mut() = Some((scores.to_vec(), out.clone()));
        out
    }

    /// The isotonic value of the test point with `label`, between the
    /// hull of Q_0..Q_l and the hull of Q_r..Q_k shifted by (1, label).
    fn fitted(&self, l: usize, r: usize, label: f64) -> f64 {
        let (x, y) = (&self.x, &self.y);
        let slope = |ax: f64, ay: f64, bx: f64, by: f64| (by - ay) / (bx - ax);
        // The least slope from Q_a to the shifted right hull: its tangent.
        let tangent = |a: usize| -> f64 {
            let to = |u: usize| slope(x[a], y[a], x[u] + 1.0, y[u] + label);
            let u = self.right.first(r, |u| {
                let p = self.right.parent[u];
                p == NONE || to(u) <= slope(x[u], y[u], x[p as usize], y[p as usize])
            });
            to(u)
        };
        // The bridge leaves the left hull at the last vertex (walking left
        // from Q_l) whose tangent is at least the slope of the hull edge
        // arriving at it.
        let mut last = (usize::MAX, 0.0);
        let a = self.left.first(l, |a| {
            let t = tangent(a);
            last = (a, t);
            let p = self.left.parent[a];
            p == NONE || t >= slope(x[p as usize], y[p as usize], x[a], y[a])
        });
        if last.0 == a {
            last.1
        } else {
            tangent(a)
        }
    }
}

/// The single probability of an interval: p1 / (1 - p0 + p1).
fn merged((p0, p1): (f64, f64)) -> f64 {
    p1 / (1.0 - p0 + p1)
}

impl BinaryMap for VennAbersMap {
    fn apply(&self, s: f64) -> f64 {
        merged(self.interval(s))
    }

    fn apply_all(&self, scores: &[f64]) -> Vec<f64> {
        self.intervals_in_order(scores)
            .into_iter()
            .map(merged)
            .collect()
    }

    fn interval(&self, s: f64) -> Option<(f64, f64)> {
        Some(VennAbersMap::interval(self, s))
    }

    fn intervals(&self, scores: &[f64]) -> Option<Vec<(f64, f64)>> {
        Some(self.intervals_in_order(scores))
    }
}

impl BinaryCalibrator for VennAbers {
    fn input(&self) -> Input {
        Input::Native
    }

    fn fit(&self, scores: &[f64], labels: &[bool]) -> Result<Box<dyn BinaryMap>> {
        Ok(Box::new(VennAbersMap::fit(scores, labels)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::calibrate::isotonic::pool_adjacent_violators;

    /// The direct computation the fast one replaced: isotonic regression
    /// by pool-adjacent-violators on the pooled calibration points with the
    /// test point added, O(n) per test score.
    fn direct_interval(scores: &[f64], labels: &[bool], s: f64) -> (f64, f64) {
        let mut pairs: Vec<(f64, bool)> =
            scores.iter().copied().zip(labels.iter().copied()).collect();
        pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut points: Vec<(f64, f64, f64)> = Vec::new();
        for (v, l) in pairs {
            let l = f64::from(u8::from(l));
            match points.last_mut() {
                Some(p) if p.0 == v => {
                    p.1 += l;
                    p.2 += 1.0;
                }
                _ => points.push((v, l, 1.0)),
            }
        }
        let pos = points.partition_point(|p| p.0 < s);
        let tied = pos < points.len() && points[pos].0 == s;
        let fitted = |label: f64| {
            let before = points[..pos].iter().map(|&(_, s, w)| (s, w));
            let (at, after) = if tied {
                let (_, s, w) = points[pos];
                ((s + label, w + 1.0), &points[pos + 1..])
            } else {
                ((label, 1.0), &points[pos..])
            };
            let sequence = before
                .chain(std::iter::once(at))
                .chain(after.iter().map(|&(_, s, w)| (s, w)));
            let mut seen = 0;
            for (sum, weight, count) in pool_adjacent_violators(sequence) {
                seen += count;
                if pos < seen {
                    return sum / weight;
                }
            }
            f64::NAN
        };
        (fitted(0.0), fitted(1.0))
    }

    #[test]
    fn the_fast_intervals_equal_the_direct_ones_on_random_data_with_ties() {
        // Scores on coarse grids, so that calibration and test scores tie
        // often, with labels from a noisy increasing rule; test scores both
        // on and between the calibration scores and beyond both ends.
        let mut rng = crate::common::rng::SplitMix64::new(0x853c_49e6_748f_ea9b);
        let mut next = || rng.unit();
        for case in 0..60 {
            let n = [1, 2, 3, 5, 20, 200, 1000][case % 7];
            let grid = [4.0, 10.0, 50.0, 1e6][case % 4];
            let scores: Vec<f64> = (0..n).map(|_| (next() * grid).round() / grid).collect();
            let labels: Vec<bool> = scores.iter().map(|&s| next() < 0.2 + 0.6 * s).collect();
            let map = VennAbersMap::fit(&scores, &labels);
            let probes = (0..300)
                .map(|_| (next() * 1.4 - 0.2) * grid)
                .map(|v| v.round() / grid)
                .chain(scores.iter().copied());
            let probes: Vec<f64> = probes.collect();
            let batch = map.intervals(&probes).unwrap_or_default();
            assert_eq!(batch.len(), probes.len());
            for (&s, &together) in probes.iter().zip(&batch) {
                let fast = map.interval(s);
                assert_eq!(fast, together);
                let direct = direct_interval(&scores, &labels, s);
                assert!(
                    (fast.0 - direct.0).abs() <= 1e-12 && (fast.1 - direct.1).abs() <= 1e-12,
                    "case {case}, n {n}, s {s}: {fast:?} vs {direct:?}"
                );
            }
        }
    }

    #[test]
    fn reference_sheet_toy_example() {
        // venn-abers-toy in docs/methods.md: calibration scores
        // (.1 .2 .3 .4 .6 .7 .8 .9), labels (0 0 1 0 1 0 1 1).
        // s = 0.5: (p0, p1) = (1/3, 2/3), merged 0.5.
        // s = 0.95: (2/3, 1), merged 0.75.
        let s = [0.1, 0.2, 0.3, 0.4, 0.6, 0.7, 0.8, 0.9];
        let y = [false, false, true, false, true, false, true, true];
        let m = VennAbersMap::fit(&s, &y);
        let (p0, p1) = m.interval(0.5);
        assert!((p0 - 1.0 / 3.0).abs() < 1e-12 && (p1 - 2.0 / 3.0).abs() < 1e-12);
        assert!((m.apply(0.5) - 0.5).abs() < 1e-12);
        let (p0, p1) = m.interval(0.95);
        assert!((p0 - 2.0 / 3.0).abs() < 1e-12 && (p1 - 1.0).abs() < 1e-12);
        assert!((m.apply(0.95) - 0.75).abs() < 1e-12);
    }
}
