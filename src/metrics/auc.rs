//! Area under the ROC curve: the probability that a random positive row
//! scores above a random negative one, ties counting one half (the
//! Mann-Whitney statistic from average ranks, O(n log n)). Multiclass tasks
//! average the one-vs-rest AUC of every class (macro average, as
//! scikit-learn's `roc_auc_score(multi_class="ovr")`). Undefined (NaN) when
//! the labels hold a single class.

use super::Forecasts;

/// AUC of scores against binary outcomes.
pub fn binary_auc(scores: &[f64], positive: &[bool]) -> f64 {
    let n = scores.len();
    let n_pos = positive.iter().filter(|&&p| p).count();
    let n_neg = n - n_pos;
    if n_pos == 0 || n_neg == 0 {
        return f64::NAN;
    }
    // Sorting pairs keeps the sort in cache; tied runs are handled as a
    // whole, so their inner order does not matter.
    let mut pairs: Vec<(f64, bool)> = scores
        .iter()
        .copied()
        .zip(positive.iter().copied())
        .collect();
    pairs.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
    // Sum of the positives' ranks, tied runs sharing their average rank.
    let mut rank_sum = 0.0;
    let mut i = 0;
    while i < n {
        let mut j = i;
        while j + 1 < n && pairs[j + 1].0 == pairs[i].0 {
            j += 1;
        }
        let average_rank = (i + j) as f64 / 2.0 + 1.0;
        let positives = pairs[i..=j].iter().filter(|p| p.1).count();
        rank_sum += average_rank * positives as f64;
        i = j + 1;
    }
    let n_pos = n_pos as f64;
    (rank_sum - n_pos * (n_pos + 1.0) / 2.0) / (n_pos * n_neg as f64)
}

/// Binary AUC of the positive-class probability, or the macro one-vs-rest
/// AUC for multiclass tasks.
pub fn auc(fc: &Forecasts<'_>) -> f64 {
    let (p, y) = (fc.p, fc.y);
    let classes: Vec<usize> = if p.ncols() == 2 {
        vec![1]
    } else {
        (0..p.ncols()).collect()
    };
    let total: f64 = classes
        .iter()
        .map(|&c| {
            let is_c: Vec<bool> = y.iter().map(|&l| l == c).collect();
            binary_auc(&p.column(c).to_vec(), &is_c)
        })
        .sum();
    total / classes.len() as f64
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::testing::toy_forecaster;
    use crate::metrics::Forecasts;

    #[test]
    fn toy_forecaster_counts_ties_half() {
        // Pairs (positive, negative) on the toy forecaster of
        // docs/methods.md: positives .4 .7 .7 .9, negatives .1 .1 .4 .7.
        // Wins: .4 beats 2 and ties 1 (2.5); each .7 beats 3 and ties 1
        // (3.5 twice); .9 beats 4: 13.5 of 16 = 0.84375,
        // which scikit-learn's roc_auc_score also gives.
        let (p, y) = toy_forecaster();
        assert!((auc(&Forecasts::new(p.view(), &y)) - 0.84375).abs() < 1e-15);
    }

    #[test]
    fn single_class_is_undefined() {
        assert!(binary_auc(&[0.1, 0.2], &[true, true]).is_nan());
    }
}
