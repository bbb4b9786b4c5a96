//! Every metric against reference values computed by scikit-learn, scipy and
//! statsmodels on random binary and multiclass forecasts with ties, forecasts
//! of exactly 0 and 1, values on bin edges and one-sided bins. The fixtures
//! and the versions that produced them come from
//! tests/fixtures/make_metric_fixtures.py.

use candor::metrics::reliability::reliability;
use candor::metrics::{Forecasts, MetricOptions, METRICS};
use ndarray::Array2;
use serde_json::Value;

struct Fixture {
    p: Array2<f64>,
    y: Vec<usize>,
    opts: MetricOptions,
    expected: Value,
}

fn load(name: &str) -> Fixture {
    let path = format!("{}/tests/fixtures/{name}", env!("CARGO_MANIFEST_DIR"));
    let v: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let rows: Vec<Vec<f64>> = serde_json::from_value(v["p"].clone()).unwrap();
    let k = rows[0].len();
    let p = Array2::from_shape_fn((rows.len(), k), |(i, j)| rows[i][j]);
    Fixture {
        p,
        y: serde_json::from_value(v["y"].clone()).unwrap(),
        opts: MetricOptions {
            bins: v["bins"].as_u64().unwrap() as usize,
            hl_groups: v["hl_groups"].as_u64().unwrap() as usize,
        },
        expected: v["expected"].clone(),
    }
}

fn close(ours: f64, theirs: f64) -> bool {
    (ours - theirs).abs() <= 1e-9 * theirs.abs().max(1.0)
}

fn check_all_metrics(f: &Fixture) {
    // One shared value for all metrics, as the runner uses it; fresh
    // values for each metric would give the same numbers.
    let fc = Forecasts::new(f.p.view(), &f.y);
    for m in METRICS {
        let theirs = f.expected[m.name]
            .as_f64()
            .unwrap_or_else(|| panic!("fixture lacks {}", m.name));
        let ours = (m.compute)(&fc, &f.opts);
        let alone = (m.compute)(&Forecasts::new(f.p.view(), &f.y), &f.opts);
        assert_eq!(ours.to_bits(), alone.to_bits(), "{}", m.name);
        assert!(
            close(ours, theirs),
            "{}: ours {ours}, reference {theirs}",
            m.name
        );
    }
    let r = reliability(&Forecasts::new(f.p.view(), &f.y), f.opts.bins);
    let want = &f.expected["reliability"];
    let col = |name: &str| -> Vec<f64> { serde_json::from_value(want[name].clone()).unwrap() };
    let counts: Vec<usize> = serde_json::from_value(want["count"].clone()).unwrap();
    assert_eq!(r.iter().map(|b| b.count).collect::<Vec<_>>(), counts);
    for (i, b) in r.iter().enumerate() {
        assert!(close(b.mean_forecast, col("mean_forecast")[i]));
        assert!(close(b.observed, col("observed")[i]));
        assert!(
            close(b.wilson_low, col("wilson_low")[i]),
            "{} {}",
            b.wilson_low,
            col("wilson_low")[i]
        );
        assert!(close(b.wilson_high, col("wilson_high")[i]));
    }
}

#[test]
fn binary_forecasts_match_the_reference_libraries() {
    check_all_metrics(&load("metrics_binary.json"));
}

#[test]
fn multiclass_forecasts_match_the_reference_libraries() {
    check_all_metrics(&load("metrics_multiclass.json"));
}

#[test]
fn equal_mass_bins_differ_from_scikit_learns_quantile_strategy_on_ties() {
    // scikit-learn's calibration_curve(strategy="quantile") cuts at
    // percentile values: a tied run that straddles a percentile goes wholly
    // to the bin below by value, and repeated edges leave empty bins that
    // are dropped. We cut by rank and keep each tied run in the bin where it
    // starts, so every bin holds about n/B rows. On the tied multiclass
    // fixture the two ECEs differ; on the binary one they happen to agree.
    let f = load("metrics_multiclass.json");
    let ours = candor::metrics::ece_mass(&Forecasts::new(f.p.view(), &f.y), &f.opts);
    let theirs = f.expected["sklearn_quantile_ece"].as_f64().unwrap();
    assert!(close(ours, f.expected["ece_mass"].as_f64().unwrap()));
    assert!((ours - theirs).abs() > 1e-3, "{ours} vs {theirs}");
    let b = load("metrics_binary.json");
    let ours = candor::metrics::ece_mass(&Forecasts::new(b.p.view(), &b.y), &b.opts);
    assert!((ours - b.expected["sklearn_quantile_ece"].as_f64().unwrap()).abs() < 1e-9);
}
