//! The ranking statistics against Demšar (2006), "Statistical comparisons
//! of classifiers over multiple data sets", JMLR 7:1-30, and the check
//! values critical-values, studentized-range, friedman-small and
//! demsar-friedman in docs/methods.md, recomputed with scipy.stats.

use candor::common::stats::{bonferroni_dunn_q, critical_difference, friedman, nemenyi_q, ranks};

#[test]
fn nemenyi_and_bonferroni_dunn_critical_values() {
    // critical-values: q_0.05, q_0.10 (Nemenyi) and the Bonferroni-Dunn values for
    // k = 2..10, computed as scipy.stats.studentized_range.ppf(1 - a, k,
    // inf) / sqrt(2) and the normal quantile; they match Demšar's Table 5
    // to the third decimal. Tolerance 1e-3, as the reference asks.
    let table = [
        (2, 1.960, 1.645, 1.960, 1.645),
        (3, 2.344, 2.052, 2.241, 1.960),
        (4, 2.569, 2.291, 2.394, 2.128),
        (5, 2.728, 2.460, 2.498, 2.241),
        (6, 2.850, 2.589, 2.576, 2.326),
        (7, 2.948, 2.693, 2.638, 2.394),
        (8, 3.031, 2.780, 2.690, 2.450),
        (9, 3.102, 2.855, 2.734, 2.498),
        (10, 3.164, 2.920, 2.773, 2.539),
    ];
    for (k, n05, n10, b05, b10) in table {
        assert!(
            (nemenyi_q(k, 0.05) - n05).abs() < 1e-3,
            "Nemenyi k={k}: {}",
            nemenyi_q(k, 0.05)
        );
        assert!(
            (nemenyi_q(k, 0.10) - n10).abs() < 1e-3,
            "Nemenyi k={k}, 0.10"
        );
        assert!((bonferroni_dunn_q(k, 0.05) - b05).abs() < 1e-3, "B-D k={k}");
        assert!(
            (bonferroni_dunn_q(k, 0.10) - b10).abs() < 1e-3,
            "B-D k={k}, 0.10"
        );
    }
}

#[test]
fn studentized_range_quantile() {
    // studentized-range: q_0.05(k = 3, df = inf) = 3.3145, so 3.3145 / sqrt 2 = 2.3437.
    assert!((nemenyi_q(3, 0.05) - 2.3437).abs() < 1e-4);
}

#[test]
fn friedman_on_a_published_rank_table() {
    // friedman-small: 9 methods on 2 data sets with ranks (1, 8, 6, 4, 7, 2, 5, 3, 9)
    // and (1, 6, 3, 9, 7, 2, 8, 4, 5), as printed on a statistics Q&A page
    // with R's output: chi-square 11.733 (df 8, p = 0.1635); Iman-Davenport
    // F = 2.75 (df 8, 8), p = 0.08697. Our ranks() reproduces the ranks
    // from the scores they order.
    let a = [1.0, 8.0, 6.0, 4.0, 7.0, 2.0, 5.0, 3.0, 9.0];
    let b = [1.0, 6.0, 3.0, 9.0, 7.0, 2.0, 8.0, 4.0, 5.0];
    assert_eq!(ranks(&a), a.to_vec());
    let avg: Vec<f64> = a.iter().zip(&b).map(|(x, y)| (x + y) / 2.0).collect();
    let f = friedman(&avg, 2);
    assert!((f.chi2 - 11.733).abs() < 1e-3, "{}", f.chi2);
    assert_eq!(f.chi2_df, 8.0);
    assert!((f.chi2_p - 0.1635).abs() < 1e-4, "{}", f.chi2_p);
    assert!((f.f - 2.75).abs() < 5e-3, "{}", f.f);
    assert_eq!((f.f_df1, f.f_df2), (8.0, 8.0));
    assert!((f.f_p - 0.08697).abs() < 1e-4, "{}", f.f_p);
}

#[test]
fn demsar_friedman_worked_example() {
    // demsar-friedman: four C4.5 variants on 14 data sets, average ranks exactly
    // 44/14, 28/14, 40.5/14 and 27.5/14 (printed 3.143, 2.000, 2.893,
    // 1.964). Demšar: chi-square_F = 9.28, F_F = 3.69 against
    // F(3, 39) = 2.85; CD_0.05 = 1.25, CD_0.10 = 1.12 (Nemenyi) and
    // CD_0.10 = 1.04 (Bonferroni-Dunn). Recomputed values in brackets in
    // the reference: 9.2786, 3.6863, 1.2535, 1.1179, 1.0384.
    let avg = [44.0 / 14.0, 28.0 / 14.0, 40.5 / 14.0, 27.5 / 14.0];
    let f = friedman(&avg, 14);
    assert!((f.chi2 - 9.2786).abs() < 1e-4, "{}", f.chi2);
    assert!((f.f - 3.6863).abs() < 1e-4, "{}", f.f);
    assert_eq!((f.f_df1, f.f_df2), (3.0, 39.0));
    assert!(f.f_p < 0.05, "the null is rejected: {}", f.f_p);
    let cd05 = critical_difference(nemenyi_q(4, 0.05), 4, 14);
    let cd10 = critical_difference(nemenyi_q(4, 0.10), 4, 14);
    let bd10 = critical_difference(bonferroni_dunn_q(4, 0.10), 4, 14);
    assert!((cd05 - 1.2535).abs() < 1e-3, "{cd05}");
    assert!((cd10 - 1.1179).abs() < 1e-3, "{cd10}");
    assert!((bd10 - 1.0384).abs() < 1e-3, "{bd10}");
}
