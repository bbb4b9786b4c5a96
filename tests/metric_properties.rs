//! Properties every metric must have on any input (properties in
//! docs/methods.md lists them), checked on many random
//! forecasters.

use candor::common::rng::SplitMix64;
use candor::metrics::{auc, brier, ce2_debiased, ece, ece_mass, mce, Forecasts, MetricOptions};
use ndarray::Array2;

fn binary(p: &[f64]) -> Array2<f64> {
    Array2::from_shape_fn(
        (p.len(), 2),
        |(i, j)| if j == 1 { p[i] } else { 1.0 - p[i] },
    )
}

/// A random forecaster: n rows, forecasts from one of several shapes
/// (spread, clumped, rounded to ties, extreme), labels drawn from a
/// distorted truth.
fn random_case(rng: &mut SplitMix64) -> (Vec<f64>, Vec<usize>) {
    let n = 20 + rng.below(400);
    let shape = rng.below(4);
    let distortion = 0.3 + 2.0 * rng.unit();
    let mut p = Vec::with_capacity(n);
    let mut y = Vec::with_capacity(n);
    for _ in 0..n {
        let mut q = match shape {
            0 => rng.unit(),
            1 => 0.4 + 0.2 * rng.unit(),
            2 => (rng.unit() * 10.0).round() / 10.0,
            _ => {
                if rng.unit() < 0.5 {
                    0.0
                } else {
                    1.0
                }
            }
        };
        q = q.clamp(0.0, 1.0);
        let truth = q.powf(distortion);
        y.push(usize::from(rng.unit() < truth));
        p.push(q);
    }
    (p, y)
}

#[test]
fn ece_lies_in_the_unit_interval_and_mce_bounds_it() {
    let mut rng = SplitMix64::new(1);
    for case in 0..500 {
        let (p, y) = random_case(&mut rng);
        let m = binary(&p);
        for bins in [1, 5, 15, 40] {
            let o = MetricOptions {
                bins,
                ..Default::default()
            };
            let e = ece(&Forecasts::new(m.view(), &y), &o);
            let em = ece_mass(&Forecasts::new(m.view(), &y), &o);
            let x = mce(&Forecasts::new(m.view(), &y), &o);
            assert!((0.0..=1.0).contains(&e), "case {case}: ece {e}");
            assert!((0.0..=1.0).contains(&em), "case {case}: ece_mass {em}");
            assert!(x >= e - 1e-12, "case {case}: mce {x} < ece {e}");
            let b = brier(&Forecasts::new(m.view(), &y));
            assert!((0.0..=1.0).contains(&b));
        }
    }
}

#[test]
fn a_calibrated_source_has_debiased_error_near_zero_but_positive_plug_in_ece() {
    // y ~ Bernoulli(p) exactly: the true calibration error is 0. Over many
    // samples the debiased squared error averages about 0, while the plug-in
    // ECE is positive in every sample (properties (d)).
    let mut rng = SplitMix64::new(2);
    let o = MetricOptions {
        bins: 10,
        ..Default::default()
    };
    let (mut sum_debiased, mut sum_plugin_sq) = (0.0, 0.0);
    let samples = 400;
    for _ in 0..samples {
        let p: Vec<f64> = (0..500).map(|_| rng.unit()).collect();
        let y: Vec<usize> = p.iter().map(|&q| usize::from(rng.unit() < q)).collect();
        let m = binary(&p);
        assert!(ece(&Forecasts::new(m.view(), &y), &o) > 0.0);
        sum_debiased += ce2_debiased(&Forecasts::new(m.view(), &y), &o);
        sum_plugin_sq += candor::metrics::ce2(&Forecasts::new(m.view(), &y), &o);
    }
    let mean_debiased = sum_debiased / samples as f64;
    let mean_plugin = sum_plugin_sq / samples as f64;
    // The plug-in bias here is about sum_b ybar(1 - ybar)/n ~ 0.0035.
    assert!(mean_plugin > 0.002, "{mean_plugin}");
    assert!(mean_debiased.abs() < 0.0003, "{mean_debiased}");
}

#[test]
fn auc_is_invariant_under_strictly_increasing_maps() {
    let mut rng = SplitMix64::new(3);
    for _ in 0..300 {
        let (p, y) = random_case(&mut rng);
        if y.iter().all(|&v| v == y[0]) {
            continue;
        }
        let a = auc(&Forecasts::new(binary(&p).view(), &y));
        let squashed: Vec<f64> = p.iter().map(|&q| q.powi(3) * 0.5 + 0.1).collect();
        let b = auc(&Forecasts::new(binary(&squashed).view(), &y));
        assert!((a - b).abs() < 1e-12, "{a} vs {b}");
        assert!((0.0..=1.0).contains(&a));
    }
}

#[test]
fn multiclass_brier_lies_in_zero_to_two() {
    // properties (g).
    let mut rng = SplitMix64::new(4);
    for _ in 0..200 {
        let n = 30;
        let k = 2 + rng.below(5);
        let mut p = Array2::from_shape_fn((n, k), |_| rng.unit().powi(3));
        for mut row in p.rows_mut() {
            let s = row.sum();
            row.mapv_inplace(|v| v / s);
        }
        let y: Vec<usize> = (0..n).map(|_| rng.below(k)).collect();
        let b = brier(&Forecasts::new(p.view(), &y));
        assert!((0.0..=2.0).contains(&b));
    }
}
