//! The diagnosis on synthetic sources whose miscalibration is known by
//! construction: the true log-odds LP ~ N(0, 1.5^2), outcomes y ~
//! Bernoulli(sigmoid(LP)), and forecasts sigmoid(c LP + s). A factor c > 1
//! makes the forecasts too extreme (calibration slope 1/c < 1, as in slope-overfit
//! of docs/methods.md), c < 1 too moderate, and a shift s moves
//! them up or down.

use candor::common::rng::SplitMix64;
use candor::metrics::{calibration_gap, calibration_intercept, calibration_slope, Forecasts};
use candor::report::{diagnose, Shape};
use ndarray::Array2;

fn sigmoid(z: f64) -> f64 {
    1.0 / (1.0 + (-z).exp())
}

/// Five folds of 2,000 rows; per-fold slope, intercept and gap.
fn folds(c: f64, s: f64, seed: u64) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let mut rng = SplitMix64::new(seed);
    let (mut slope, mut intercept, mut gap) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..5 {
        let n = 2000;
        let mut p = Array2::zeros((n, 2));
        let mut y = Vec::with_capacity(n);
        for i in 0..n {
            // Box-Muller.
            let (u1, u2) = (rng.unit().max(1e-300), rng.unit());
            let lp = 1.5 * (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos();
            y.push(usize::from(rng.unit() < sigmoid(lp)));
            let q = sigmoid(c * lp + s);
            p[[i, 1]] = q;
            p[[i, 0]] = 1.0 - q;
        }
        let fc = Forecasts::new(p.view(), &y);
        slope.push(calibration_slope(&fc));
        intercept.push(calibration_intercept(&fc));
        gap.push(calibration_gap(&fc));
    }
    (slope, intercept, gap)
}

fn label(c: f64, s: f64, seed: u64) -> String {
    let (a, b, g) = folds(c, s, seed);
    diagnose(&a, &b, &g, 0.25).label()
}

#[test]
fn calibrated_sources_are_near_calibrated() {
    for seed in 1..4 {
        assert_eq!(label(1.0, 0.0, seed), "near-calibrated", "seed {seed}");
        // A 5% stretch is inside the margin: not worth a label.
        assert_eq!(label(1.05, 0.0, seed), "near-calibrated", "seed {seed}");
    }
}

#[test]
fn too_extreme_forecasts_are_over_confident() {
    for seed in 1..4 {
        let (a, b, g) = folds(1.6, 0.0, seed);
        let d = diagnose(&a, &b, &g, 0.25);
        assert_eq!(d.shape, Some(Shape::OverConfident), "seed {seed}");
        assert_eq!(d.label(), "over-confident");
    }
}

#[test]
fn too_moderate_forecasts_are_under_confident() {
    for seed in 1..4 {
        assert_eq!(label(0.6, 0.0, seed), "under-confident", "seed {seed}");
    }
}

#[test]
fn shifted_forecasts_are_biased() {
    for seed in 1..4 {
        assert_eq!(label(1.0, 0.8, seed), "biased up", "seed {seed}");
        assert_eq!(label(1.0, -0.8, seed), "biased down", "seed {seed}");
        assert_eq!(
            label(1.6, 0.8, seed),
            "over-confident, biased up",
            "seed {seed}"
        );
    }
}

#[test]
fn undefined_folds_leave_the_diagnosis_undetermined() {
    let (a, b, mut g) = folds(1.0, 0.0, 9);
    g[2] = f64::NAN;
    assert_eq!(diagnose(&a, &b, &g, 0.25).label(), "undetermined");
}

#[test]
fn the_summary_counts_each_property_separately() {
    // Eight rows over-confident, five over-confident and biased down, one
    // near-calibrated: over-confidence holds in 13 of 14, not 8.
    use candor::report::{summarise, Bias, Diagnosis};
    let d = |shape, bias| Diagnosis {
        shape,
        bias,
        determined: true,
    };
    let mut rows = vec![d(Some(Shape::OverConfident), None); 8];
    rows.extend(vec![d(Some(Shape::OverConfident), Some(Bias::Down)); 5]);
    rows.push(d(None, None));
    assert_eq!(
        summarise(&rows),
        "over-confident in 13 of 14; biased down in 5 of 14; near-calibrated in 1 of 14"
    );
    let undetermined = Diagnosis {
        shape: None,
        bias: None,
        determined: false,
    };
    assert_eq!(
        summarise(&[undetermined, d(None, Some(Bias::Up))]),
        "biased up in 1 of 2; undetermined in 1 of 2"
    );
}
