//! Time to compute every registered metric, the reliability data and the
//! Murphy terms on 1,000,000 binary predictions (and 200,000 five-class
//! ones). Run with `cargo bench --bench metrics`; the README quotes the
//! figures. The target is well under one second for all binary metrics.

use candor::common::rng::SplitMix64;
use candor::metrics::bootstrap::{intervals, RESAMPLED};
use candor::metrics::reliability::reliability;
use candor::metrics::{Forecasts, MetricOptions, METRICS};
use ndarray::Array2;
use std::time::Instant;

fn main() {
    let mut rng = SplitMix64::new(7);
    let (p, y) = binary(&mut rng, 1_000_000, |q| q * q);
    let opts = MetricOptions::default();
    report("binary, 1,000,000 rows", &p, &y, &opts);

    let (n, k) = (200_000, 5);
    let mut p = Array2::from_shape_fn((n, k), |_| rng.unit());
    for mut row in p.rows_mut() {
        let s = row.sum();
        row.mapv_inplace(|v| v / s);
    }
    let y: Vec<usize> = (0..n).map(|_| rng.below(k)).collect();
    report("5 classes, 200,000 rows", &p, &y, &opts);

    // The bootstrap intervals of ECE and Brier, 1,000 resamples, at the
    // test-fold sizes of 100,000- to 5,000,000-row datasets: row by row up
    // to 50,000 rows, from the normal limit beyond.
    for n in [20_000, 50_000, 200_000, 1_000_000] {
        let (p, y) = binary(&mut rng, n, |q| q);
        let fc = Forecasts::new(p.view(), &y);
        let start = Instant::now();
        std::hint::black_box(intervals(&fc, &RESAMPLED, &opts, 1000, 1));
        println!(
            "bootstrap, 1,000 resamples of {n} rows: {:.3} s",
            start.elapsed().as_secs_f64()
        );
    }
}

/// n binary forecasts q, uniform on [0, 1], whose outcome is 1 with
/// probability `truth(q)`.
fn binary(rng: &mut SplitMix64, n: usize, truth: impl Fn(f64) -> f64) -> (Array2<f64>, Vec<usize>) {
    let mut p = Array2::zeros((n, 2));
    let mut y = Vec::with_capacity(n);
    for i in 0..n {
        let q = rng.unit();
        p[[i, 1]] = q;
        p[[i, 0]] = 1.0 - q;
        y.push(usize::from(rng.unit() < truth(q)));
    }
    (p, y)
}

fn report(what: &str, p: &Array2<f64>, y: &[usize], opts: &MetricOptions) {
    let mut best = f64::INFINITY;
    for _ in 0..5 {
        let start = Instant::now();
        let mut sink = 0.0;
        let fc = Forecasts::new(p.view(), y);
        for m in METRICS {
            sink += (m.compute)(&fc, opts);
        }
        sink += reliability(&fc, opts.bins).len() as f64;
        best = best.min(start.elapsed().as_secs_f64());
        std::hint::black_box(sink);
    }
    println!(
        "{what}: all {} metrics + reliability data in {best:.3} s (best of 5)",
        METRICS.len()
    );
    println!("  each metric alone, on fresh (uncached) forecasts:");
    for m in METRICS {
        let fc = Forecasts::new(p.view(), y);
        let start = Instant::now();
        std::hint::black_box((m.compute)(&fc, opts));
        println!(
            "  {:22} {:8.1} ms",
            m.name,
            start.elapsed().as_secs_f64() * 1e3
        );
    }
}
