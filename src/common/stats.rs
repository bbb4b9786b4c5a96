//! Tests for comparing many (family, method) pairs over many datasets, as
//! recommended by Demšar (2006, JMLR 7:1-30): average ranks, the Friedman
//! test with the Iman-Davenport correction, and the Nemenyi and
//! Bonferroni-Dunn critical differences; plus the fold-based interval the
//! report puts on every mean.

use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor, Normal, StudentsT};

/// Ranks within one dataset, 1 = best, lower values better; tied values
/// share the mean of the ranks they span (Demšar's convention).
pub fn ranks(values: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..values.len()).collect();
    order.sort_by(|&a, &b| values[a].total_cmp(&values[b]).then(a.cmp(&b)));
    let mut out = vec![0.0; values.len()];
    let mut i = 0;
    while i < order.len() {
        let mut j = i;
        while j + 1 < order.len() && values[order[j + 1]] == values[order[i]] {
            j += 1;
        }
        let shared = (i + j) as f64 / 2.0 + 1.0;
        for &o in &order[i..=j] {
            out[o] = shared;
        }
        i = j + 1;
    }
    out
}

/// The Friedman test on average ranks over `n` datasets, with the
/// Iman-Davenport F form, which Demšar recommends as less conservative.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Friedman {
    pub chi2: f64,
    pub chi2_df: f64,
    pub chi2_p: f64,
    pub f: f64,
    pub f_df1: f64,
    pub f_df2: f64,
    pub f_p: f64,
}

/// Friedman's statistic from the average ranks of k >= 2 pairs over n >= 2
/// datasets.
pub fn friedman(avg_ranks: &[f64], n: usize) -> Friedman {
    let k = avg_ranks.len() as f64;
    let nf = n as f64;
    let sum_sq: f64 = avg_ranks.iter().map(|r| r * r).sum();
    let chi2 = 12.0 * nf / (k * (k + 1.0)) * (sum_sq - k * (k + 1.0).powi(2) / 4.0);
    let chi2_df = k - 1.0;
    let chi2_p = upper_tail(ChiSquared::new(chi2_df).ok(), chi2);
    let denom = nf * (k - 1.0) - chi2;
    let f = if denom > 0.0 {
        (nf - 1.0) * chi2 / denom
    } else {
        f64::INFINITY
    };
    let (f_df1, f_df2) = (k - 1.0, (k - 1.0) * (nf - 1.0));
    let f_p = if f.is_infinite() {
        0.0
    } else {
        upper_tail(FisherSnedecor::new(f_df1, f_df2).ok(), f)
    };
    Friedman {
        chi2,
        chi2_df,
        chi2_p,
        f,
        f_df1,
        f_df2,
        f_p,
    }
}

fn upper_tail<D: ContinuousCDF<f64, f64>>(dist: Option<D>, x: f64) -> f64 {
    dist.map_or(f64::NAN, |d| d.sf(x))
}

fn std_normal() -> Normal {
    // Mean 0 and sd 1 are always valid parameters.
    Normal::new(0.0, 1.0).unwrap_or_else(|_| unreachable!())
}

/// The CDF of the range of k independent standard normals (the studentized
/// range with infinite degrees of freedom):
/// P(R <= q) = k * integral phi(z) [Phi(z) - Phi(z - q)]^(k-1) dz,
/// by Simpson's rule on a fine grid.
pub fn range_cdf(q: f64, k: usize) -> f64 {
    if q <= 0.0 {
        return 0.0;
    }
    let normal = std_normal();
    let (lo, hi) = (-9.0, 9.0 + q);
    let steps = 4000;
    let h = (hi - lo) / steps as f64;
    let f = |z: f64| {
        let inner = normal.cdf(z) - normal.cdf(z - q);
        (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI).sqrt() * inner.powi(k as i32 - 1)
    };
    let mut sum = f(lo) + f(hi);
    for i in 1..steps {
        let w = if i % 2 == 1 { 4.0 } else { 2.0 };
        sum += w * f(lo + i as f64 * h);
    }
    (k as f64 * sum * h / 3.0).clamp(0.0, 1.0)
}

/// The Nemenyi critical value q_alpha for k pairs: the studentized-range
/// quantile with infinite degrees of freedom divided by sqrt(2).
pub fn nemenyi_q(k: usize, alpha: f64) -> f64 {
    let (mut lo, mut hi) = (0.0, 30.0);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if range_cdf(mid, k) < 1.0 - alpha {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi) / std::f64::consts::SQRT_2
}

/// The Bonferroni-Dunn critical value for comparing k - 1 pairs with one
/// control: z at 1 - alpha / (2 (k - 1)).
pub fn bonferroni_dunn_q(k: usize, alpha: f64) -> f64 {
    std_normal().inverse_cdf(1.0 - alpha / (2.0 * (k as f64 - 1.0)))
}

/// The critical difference in average rank for critical value q:
/// q sqrt(k (k + 1) / (6 n)).
pub fn critical_difference(q: f64, k: usize, n: usize) -> f64 {
    let k = k as f64;
    q * (k * (k + 1.0) / (6.0 * n as f64)).sqrt()
}

/// A 95% interval for the mean of per-fold values from cross-validation,
/// with Nadeau & Bengio's (2003) corrected variance (1/J + n_test/n_train) s²
/// and Student's t with J - 1 degrees of freedom. Folds share training rows,
/// so the plain s²/J interval would be too narrow. NaN bounds for fewer than
/// two folds.
pub fn fold_interval(values: &[f64], test_over_train: f64) -> (f64, f64, f64) {
    let j = values.len() as f64;
    let mean = values.iter().sum::<f64>() / j;
    if values.len() < 2 {
        return (mean, f64::NAN, f64::NAN);
    }
    let var = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (j - 1.0);
    let se = ((1.0 / j + test_over_train) * var).sqrt();
    let t = StudentsT::new(0.0, 1.0, j - 1.0).map_or(f64::NAN, |d| d.inverse_cdf(0.975));
    (mean, mean - t * se, mean + t * se)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranks_share_ties() {
        assert_eq!(ranks(&[0.3, 0.1, 0.3, 0.2]), vec![3.5, 1.0, 3.5, 2.0]);
    }

    #[test]
    fn range_cdf_matches_known_quantile() {
        // studentized-range in docs/methods.md: q_0.05(k = 3, df = inf) =
        // 3.3145 (scipy.stats.studentized_range).
        assert!((range_cdf(3.3145, 3) - 0.95).abs() < 1e-4);
    }

    #[test]
    fn fold_interval_without_correction_is_the_t_interval() {
        // Values 1..5: mean 3, s = 1.5811, t_0.975(4) = 2.7764 (printed
        // t tables), so half-width 2.7764 * 1.5811 / sqrt 5 = 1.9632.
        let (m, lo, hi) = fold_interval(&[1.0, 2.0, 3.0, 4.0, 5.0], 0.0);
        assert_eq!(m, 3.0);
        assert!((hi - m - 1.9632).abs() < 1e-4 && (m - lo - 1.9632).abs() < 1e-4);
    }
}
