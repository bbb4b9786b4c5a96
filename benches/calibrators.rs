//! Time to fit each calibration method on n held-out scores and apply it to
//! n/4 test scores, for n from 1,000 to 1,000,000 (binary, log-odds from a
//! logistic model with a little rounding, so some scores tie). Run with
//! `cargo bench --bench calibrators`; the README quotes the figures. The
//! target: Venn-Abers within 3x of isotonic regression at every size (the
//! last column).

use candor::calibrate::{Settings, METHODS};
use candor::common::rng::SplitMix64;
use candor::common::scores::{binary_from_log_odds, Scores};
use ndarray::Array2;
use std::time::Instant;

fn scores(rng: &mut SplitMix64, n: usize) -> (Scores, Vec<usize>) {
    let z: Vec<f64> = (0..n)
        .map(|_| ((rng.unit() * 8.0 - 4.0) * 1e6).round() / 1e6)
        .collect();
    let y: Vec<usize> = z
        .iter()
        .map(|&v| usize::from(rng.unit() < 1.0 / (1.0 + (-0.7 * v).exp())))
        .collect();
    let native = Array2::from_shape_vec((n, 1), z.clone()).expect("n x 1");
    (
        Scores {
            proba: binary_from_log_odds(&z),
            native: Some(native),
        },
        y,
    )
}

fn main() {
    let wanted: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    let mut rng = SplitMix64::new(11);
    println!(
        "{:>9}  fit + apply in milliseconds (best of 3, of 300 at 1,000 rows, 30 at 10,000), fit alone in brackets",
        "rows"
    );
    for n in [1_000, 10_000, 100_000, 1_000_000] {
        let (oof, y) = scores(&mut rng, n);
        let (test, _) = scores(&mut rng, n / 4);
        let mut line = format!("{n:>9}");
        let mut times = std::collections::BTreeMap::new();
        for m in METHODS
            .iter()
            .filter(|m| m.name != "none")
            .filter(|m| wanted.is_empty() || wanted.iter().any(|w| w == m.name))
        {
            let method = (m.build)(&Settings::default());
            let (mut best, mut fit_part) = (f64::INFINITY, 0.0);
            for _ in 0..(300_000 / n).max(3) {
                let start = Instant::now();
                let fitted = method.fit(&oof, &y, 2).expect("fits");
                let fit = start.elapsed().as_secs_f64();
                std::hint::black_box(fitted.apply(&test));
                std::hint::black_box(fitted.details(&test));
                let all = start.elapsed().as_secs_f64();
                if all < best {
                    (best, fit_part) = (all, fit);
                }
            }
            line.push_str(&format!(
                "  {} {:.3} ({:.3})",
                m.name,
                best * 1e3,
                fit_part * 1e3
            ));
            times.insert(m.name, best);
        }
        if let (Some(va), Some(iso)) = (times.get("venn_abers"), times.get("isotonic")) {
            line.push_str(&format!("  venn_abers/isotonic {:.1}x", va / iso));
        }
        println!("{line}");
    }
}
