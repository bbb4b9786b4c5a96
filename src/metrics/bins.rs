//! Shared binning for the binned metrics and reliability diagrams.
//!
//! **Equal-width bins** are right-closed, (b/B, (b+1)/B], with 0 in the first
//! bin: the convention of Guo et al. 2017 and of scikit-learn's
//! `calibration_curve`. Edges are computed exactly as `numpy.linspace(0, 1,
//! B + 1)` computes them (edge i is `i * (1/B)`), so a forecast lying on an
//! edge lands in the same bin as there: 0.3 with 10 bins falls in
//! (0.2, 0.3], because the edge is 0.30000000000000004.
//!
//! **Equal-mass bins** sort the forecasts and cut them into B groups of
//! about n/B by rank. A run of tied forecasts is never split: the whole run
//! joins the bin of its first member, so the result does not depend on row
//! order. Bins can then be unequal or empty; empty bins are skipped. (Rank
//! cutting as in `numpy.array_split` splits ties and gives different values
//! on tied data; see the tests.)

/// The index and value of the largest entry; the first wins ties.
pub fn argmax(values: impl Iterator<Item = f64>) -> (usize, f64) {
    let mut best = (0, f64::NEG_INFINITY);
    for (i, v) in values.enumerate() {
        if v > best.1 {
            best = (i, v);
        }
    }
    best
}

/// The equal-width bin of a forecast in [0, 1], right-closed with
/// numpy-linspace edges.
pub fn width_bin(p: f64, bins: usize) -> usize {
    let step = 1.0 / bins as f64;
    let edge = |i: usize| i as f64 * step;
    // The bin is the number of interior edges strictly below p.
    let mut k = ((p * bins as f64).ceil() as usize)
        .saturating_sub(1)
        .min(bins - 1);
    while k > 0 && edge(k) >= p {
        k -= 1;
    }
    while k + 1 < bins && edge(k + 1) < p {
        k += 1;
    }
    k
}

/// Count, forecast sum and outcome sum of one bin.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BinTotals {
    pub count: usize,
    pub sum_f: f64,
    pub sum_o: f64,
}

impl BinTotals {
    pub fn mean_f(&self) -> f64 {
        self.sum_f / self.count as f64
    }
    pub fn mean_o(&self) -> f64 {
        self.sum_o / self.count as f64
    }
}

/// Totals per bin for equal-width bins.
pub fn width_totals(f: &[f64], o: &[f64], bins: usize) -> Vec<BinTotals> {
    let mut t = vec![BinTotals::default(); bins];
    for (&fi, &oi) in f.iter().zip(o) {
        let b = &mut t[width_bin(fi, bins)];
        b.count += 1;
        b.sum_f += fi;
        b.sum_o += oi;
    }
    t
}

/// Totals per bin for equal-mass bins; tied forecasts share a bin.
///
/// A forecast's bin is floor(L B / n), where L counts the forecasts
/// strictly below it: the bin its tied run starts in when all forecasts are
/// ranked. Equivalently, it is the number of thresholds t_b it exceeds,
/// where t_b is the order statistic of rank ceil(b n / B) - 1. Finding the
/// B - 1 thresholds by selection costs O(n log B), well below a full sort.
pub fn mass_totals(f: &[f64], o: &[f64], bins: usize) -> Vec<BinTotals> {
    let n = f.len();
    // Ranks (1-based counts) whose order statistics are the thresholds.
    let ranks: Vec<usize> = (1..bins).map(|b| (b * n).div_ceil(bins)).collect();
    let wanted: Vec<usize> = {
        let mut w: Vec<usize> = ranks
            .iter()
            .copied()
            .filter(|&r| r >= 1 && r <= n)
            .collect();
        w.dedup();
        w
    };
    let mut scratch = f.to_vec();
    let mut found = vec![0.0; wanted.len()];
    select_ranks(&mut scratch, 0, &wanted, &mut found);
    let thresholds: Vec<f64> = ranks
        .iter()
        .map(|&r| match wanted.binary_search(&r) {
            Ok(k) => found[k],
            Err(_) if r == 0 => f64::NEG_INFINITY,
            Err(_) => f64::INFINITY,
        })
        .collect();
    let mut t = vec![BinTotals::default(); bins];
    for (&fi, &oi) in f.iter().zip(o) {
        let b = &mut t[thresholds.partition_point(|&x| fi > x)];
        b.count += 1;
        b.sum_f += fi;
        b.sum_o += oi;
    }
    t
}

/// Finds the order statistics of several sorted 1-based ranks by selecting
/// the middle rank and recursing on each side, O(n log k) for k ranks.
/// `offset` is the rank of `v[0]` minus one.
fn select_ranks(v: &mut [f64], offset: usize, ranks: &[usize], out: &mut [f64]) {
    if ranks.is_empty() {
        return;
    }
    let mid = ranks.len() / 2;
    let local = ranks[mid] - 1 - offset;
    let (left, nth, right) = v.select_nth_unstable_by(local, f64::total_cmp);
    out[mid] = *nth;
    select_ranks(left, offset, &ranks[..mid], &mut out[..mid]);
    select_ranks(
        right,
        offset + local + 1,
        &ranks[mid + 1..],
        &mut out[mid + 1..],
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn width_bins_follow_numpy_linspace_edges_right_closed() {
        // numpy.searchsorted(numpy.linspace(0, 1, 11)[1:-1], x) as used by
        // scikit-learn's calibration_curve: 0.3 -> 2, 0.2 -> 1, 0.7 -> 6.
        assert_eq!(width_bin(0.0, 10), 0);
        assert_eq!(width_bin(0.1, 10), 0);
        assert_eq!(width_bin(0.2, 10), 1);
        assert_eq!(width_bin(0.3, 10), 2);
        assert_eq!(width_bin(0.3000000000000001, 10), 3);
        assert_eq!(width_bin(0.7, 10), 6);
        assert_eq!(width_bin(1.0, 10), 9);
        assert_eq!(width_bin(1.0, 1), 0);
    }

    #[test]
    fn ties_stay_in_one_equal_mass_bin_whatever_the_row_order() {
        // toy-mass4 in docs/methods.md: rank cutting into 4 bins
        // splits the tie at 0.7 across bins 3 and 4; here it stays whole.
        let f = [0.1, 0.1, 0.4, 0.4, 0.7, 0.7, 0.7, 0.9];
        let o = [0.0, 0.0, 0.0, 1.0, 0.0, 1.0, 1.0, 1.0];
        let t = mass_totals(&f, &o, 4);
        assert_eq!(
            t.iter().map(|b| b.count).collect::<Vec<_>>(),
            vec![2, 2, 3, 1]
        );
        let shuffled = [0.7, 0.9, 0.1, 0.7, 0.4, 0.1, 0.7, 0.4];
        let so = [1.0, 1.0, 0.0, 0.0, 1.0, 0.0, 1.0, 0.0];
        assert_eq!(mass_totals(&shuffled, &so, 4), t);
    }

    #[test]
    fn selection_agrees_with_ranking_every_row() {
        // The definition, by brute force: bin = floor(L B / n) with L the
        // number of forecasts strictly below.
        let mut rng = crate::common::rng::SplitMix64::new(5);
        for _ in 0..200 {
            let n = 1 + rng.below(60);
            let bins = 1 + rng.below(20);
            let f: Vec<f64> = (0..n).map(|_| (rng.unit() * 8.0).floor() / 8.0).collect();
            let o: Vec<f64> = (0..n)
                .map(|_| f64::from(u8::from(rng.unit() < 0.5)))
                .collect();
            let mut want = vec![BinTotals::default(); bins];
            for (&fi, &oi) in f.iter().zip(&o) {
                let below = f.iter().filter(|&&x| x < fi).count();
                let b = &mut want[below * bins / n];
                b.count += 1;
                b.sum_f += fi;
                b.sum_o += oi;
            }
            let got = mass_totals(&f, &o, bins);
            for (g, w) in got.iter().zip(&want) {
                assert_eq!(g.count, w.count);
                assert!((g.sum_f - w.sum_f).abs() < 1e-12 && g.sum_o == w.sum_o);
            }
        }
    }
}
