//! Choosing on one dataset: pairs compared with the best pair fold by fold
//! (Nadeau & Bengio 2003, "Inference for the generalization error", Machine
//! Learning 52: the corrected resampled t interval), and the report's flag
//! on calibration that gives up discrimination.

use candor::common::rng::SplitMix64;
use candor::report::{self, standings, ReportOptions, Standing};
use std::path::Path;

/// A standard normal draw (Box-Muller).
fn normal(rng: &mut SplitMix64) -> f64 {
    let (u1, u2) = (rng.unit().max(1e-300), rng.unit());
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

/// Per-fold Brier scores of two pairs on the same folds: a fold effect both
/// share (some folds are harder), the second pair's true excess `shift`,
/// and each pair's own noise.
fn two_pairs(rng: &mut SplitMix64, folds: usize, shift: f64) -> Vec<Vec<f64>> {
    let mut a = Vec::new();
    let mut b = Vec::new();
    for _ in 0..folds {
        let fold = 0.2 + 0.03 * normal(rng);
        a.push(fold + 0.004 * normal(rng));
        b.push(fold + shift + 0.004 * normal(rng));
    }
    vec![a, b]
}

#[test]
fn a_truly_better_pair_is_found() {
    // A Brier excess of 0.01 against fold noise of 0.03 that both pairs
    // share: unpaired intervals would overlap, the paired one mostly does
    // not. Its power here is about 90% (a paired difference of 0.01 with a
    // corrected standard error near 0.0034 on 9 degrees of freedom), so at
    // least 40 of 50 runs must find it.
    let mut rng = SplitMix64::new(11);
    let mut found = 0;
    for _ in 0..50 {
        let s = standings(&two_pairs(&mut rng, 10, 0.01), 0.25);
        assert_eq!(s[0], Standing::Best);
        if matches!(s[1], Standing::Worse { .. }) {
            found += 1;
        }
    }
    assert!(found >= 40, "{found} of 50");
}

#[test]
fn equal_pairs_are_tied_at_about_the_nominal_rate() {
    // paired-choice in docs/methods.md. With no true difference and
    // independent folds (ratio 0, so the
    // interval is the plain paired t interval and exact for normal data), a
    // pair is called worse than the best in 5% of runs: the best is chosen
    // by its mean, and the two-sided interval excludes 0 exactly when
    // |t| > t(0.975, J-1).
    let mut rng = SplitMix64::new(12);
    let runs = 4000;
    let mut worse = 0;
    for _ in 0..runs {
        let s = standings(&two_pairs(&mut rng, 10, 0.0), 0.0);
        if s.iter().any(|x| matches!(x, Standing::Worse { .. })) {
            worse += 1;
        }
    }
    let rate = f64::from(worse) / f64::from(runs);
    // 4000 runs: the binomial standard error at 5% is 0.0034.
    assert!((0.04..=0.06).contains(&rate), "{rate}");
}

#[test]
fn a_failed_fold_is_not_compared() {
    let s = standings(
        &[
            vec![0.1, 0.2, 0.15],
            vec![0.1, f64::NAN, 0.1],
            vec![0.3, 0.4, 0.35],
        ],
        0.25,
    );
    assert_eq!(s[0], Standing::Best);
    assert_eq!(s[1], Standing::Ineligible);
    assert!(matches!(s[2], Standing::Worse { .. }), "{s:?}");
}

/// The committed report fixture, with one calibrated pair made to state
/// the base rate: ECE 0 in every fold, AUC 0.5.
fn flattened_fixture() -> (tempfile::TempDir, std::path::PathBuf) {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/report/results");
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("results");
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::copy(src.join("run.json"), dir.join("run.json")).unwrap();
    let records = std::fs::read_to_string(src.join("records.jsonl")).unwrap();
    let mut out = String::new();
    for line in records.lines() {
        let mut r: serde_json::Value = serde_json::from_str(line).unwrap();
        if r["dataset"] == "heart" && r["family"] == "nbayes" {
            for m in r["results"].as_array_mut().unwrap() {
                if m["method"] == "platt" {
                    m["metrics"]["ece"] = serde_json::json!(0.0);
                    m["metrics"]["auc"] = serde_json::json!(0.5);
                }
            }
        }
        out.push_str(&serde_json::to_string(&r).unwrap());
        out.push('\n');
    }
    std::fs::write(dir.join("records.jsonl"), out).unwrap();
    (tmp, dir)
}

#[test]
fn calibration_that_loses_discrimination_is_never_best_unflagged() {
    let (_tmp, dir) = flattened_fixture();
    let opts = ReportOptions {
        metric: Some("ece".into()),
        png: false,
    };
    report::generate(&dir, &opts).unwrap();
    let datasets = std::fs::read_to_string(dir.join("report/datasets.csv")).unwrap();
    let heart = datasets.lines().find(|l| l.starts_with("heart,")).unwrap();
    assert!(
        heart.contains("nbayes + platt (AUC below raw by"),
        "{heart}"
    );
    let md = std::fs::read_to_string(dir.join("report/datasets.md")).unwrap();
    assert!(md.contains("rewards constant forecasts"), "{md}");
    let families = std::fs::read_to_string(dir.join("report/families.csv")).unwrap();
    let row = families
        .lines()
        .find(|l| l.starts_with("nbayes,platt,"))
        .unwrap();
    assert!(row.contains(",1,"), "one dataset lost AUC: {row}");
    let html = std::fs::read_to_string(dir.join("report/report.html")).unwrap();
    assert!(html.contains("AUC below raw by"));
    // By a proper score the flattened pair is not the best.
    report::generate(&dir, &ReportOptions::default()).unwrap();
    let datasets = std::fs::read_to_string(dir.join("report/datasets.csv")).unwrap();
    let heart = datasets.lines().find(|l| l.starts_with("heart,")).unwrap();
    assert!(!heart.contains("nbayes + platt"), "{heart}");
}
