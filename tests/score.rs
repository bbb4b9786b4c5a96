//! `candor score`, `candor apply` and the demo scenario.

use candor::data::demo;
use candor::metrics::{ece, Forecasts, MetricOptions};
use ndarray::Array2;
use std::path::Path;
use std::process::Command;

fn candor(dir: &Path) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_candor"));
    c.current_dir(dir);
    c
}

/// Runs a command that must succeed; its output.
fn ok(c: &mut Command) -> std::process::Output {
    let out = c.output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

fn estimated_ece(n: usize, seed: u64) -> f64 {
    let d = demo::generate(n, seed);
    let p = Array2::from_shape_fn((n, 2), |(i, j)| {
        let q = d.parcels[i].predicted;
        if j == 1 {
            q
        } else {
            1.0 - q
        }
    });
    let y: Vec<usize> = d.parcels.iter().map(|x| usize::from(x.late)).collect();
    ece(&Forecasts::new(p.view(), &y), &MetricOptions::default())
}

#[test]
fn estimated_ece_converges_to_the_known_true_ece() {
    // The demo's truth is known by construction (src/data/demo.rs), so the
    // plug-in ECE on sampled outcomes must approach the true ECE as n
    // grows: its sampling error and upward bias shrink like 1/sqrt(n).
    let truth = demo::true_ece(15);
    assert!(
        truth > 0.05 && truth < 0.1,
        "an over-confident model: {truth}"
    );
    let error = |n: usize| -> f64 {
        (1..=4)
            .map(|s| (estimated_ece(n, s) - truth).abs())
            .sum::<f64>()
            / 4.0
    };
    let (small, medium, large) = (error(1_000), error(30_000), error(1_000_000));
    assert!(small > medium && medium > large, "{small} {medium} {large}");
    assert!(large < 0.002, "{large}");
}

/// `candor score` on the demo's `deliveries.csv` by region, without
/// bootstrap intervals, plus `extra` arguments.
fn score_demo(dir: &Path, extra: &[&str]) {
    let mut args = vec![
        "score",
        "deliveries.csv",
        "--target",
        "late",
        "--group",
        "region",
        "--bootstrap",
        "0",
    ];
    args.extend_from_slice(extra);
    ok(candor(dir).args(&args));
}

#[test]
fn score_reports_the_demo_and_finds_its_known_flaws() {
    let tmp = tempfile::tempdir().unwrap();
    ok(candor(tmp.path()).args(["demo", "--rows", "20000"]));
    score_demo(tmp.path(), &["--model", "coop"]);
    let dir = tmp.path().join("results/score-deliveries");
    for f in [
        "summary.csv",
        "records.jsonl",
        "run.json",
        "report/report.html",
        "report/segments.md",
    ] {
        assert!(dir.join(f).exists(), "{f}");
    }
    let summary = std::fs::read_to_string(dir.join("summary.csv")).unwrap();
    // The whole file and four regions, seven methods each.
    assert_eq!(summary.lines().count(), 1 + 5 * 7);
    // The model stretches log-odds by 1.5 (slope 1/1.5) and misses the
    // north's extra delay: the diagnosis must say so.
    let diag = std::fs::read_to_string(dir.join("report/diagnosis.csv")).unwrap();
    let row = |name: &str| {
        diag.lines()
            .find(|l| l.starts_with(name))
            .unwrap()
            .to_string()
    };
    assert!(row("deliveries,").contains("over-confident"), "{diag}");
    // Segments are not datasets: the counts run over the one file, the
    // ranking needs independent datasets (Demšar 2006: the Friedman test
    // treats datasets as independent samples, which segments of one file
    // are not), and each region has its own row in the segments table,
    // diagnosis included.
    let all = row("all datasets");
    assert!(all.contains("over-confident in 1 of 1"), "{all}");
    assert!(!diag.contains("region="), "{diag}");
    assert!(!dir.join("report/ranking.csv").exists());
    let segments = std::fs::read_to_string(dir.join("report/segments.csv")).unwrap();
    assert_eq!(segments.lines().count(), 1 + 4, "{segments}");
    let segment = |name: &str| {
        segments
            .lines()
            .find(|l| l.starts_with(name))
            .unwrap()
            .to_string()
    };
    assert!(segment("deliveries region=north,deliveries,coop,").contains("biased down"));
    assert!(!segment("deliveries region=east,deliveries,coop,").contains("biased"));
    // Recalibration helps: Platt's ECE on the whole file is well below the
    // raw one.
    assert!(ece_of(&summary, "deliveries", "platt") < 0.5 * ece_of(&summary, "deliveries", "none"));
}

fn ece_of(summary: &str, dataset: &str, method: &str) -> f64 {
    let mut r = csv::Reader::from_reader(summary.as_bytes());
    let h = r.headers().unwrap().clone();
    let col = h.iter().position(|c| c == "ece").unwrap();
    for rec in r.records() {
        let rec = rec.unwrap();
        if &rec[0] == dataset && &rec[2] == method {
            return rec[col].parse().unwrap();
        }
    }
    panic!("no row {dataset} {method}");
}

/// The documented formulas of a calibration file (src/calibrate/export.rs),
/// written out independently, as another program would.
fn by_the_documentation(map: &serde_json::Value, p: f64) -> f64 {
    let logit = |q: f64| {
        let q = q.clamp(1e-15, 1.0 - 1e-15);
        (q / (1.0 - q)).ln()
    };
    if let Some(t) = map["temperature"].as_f64() {
        let (a, b) = (p.powf(1.0 / t), (1.0 - p).powf(1.0 / t));
        return a / (a + b);
    }
    let s = if map["reads"] == "logit" { logit(p) } else { p };
    let m = &map["maps"][0];
    let f = |k: &str| m[k].as_f64().unwrap();
    let v = |k: &str| -> Vec<f64> {
        m[k].as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    };
    match m["kind"].as_str().unwrap() {
        "sigmoid" => 1.0 / (1.0 + (f("a") * s + f("b")).exp()),
        "beta" => {
            let s = s.clamp(1e-12, 1.0 - 1e-12);
            1.0 / (1.0 + (-(f("c") + f("a") * s.ln() - f("b") * (1.0 - s).ln())).exp())
        }
        "steps" => {
            let (upper, y) = (v("upper"), v("y"));
            let i = upper.iter().position(|&u| s <= u).unwrap_or(upper.len());
            y[i]
        }
        "piecewise_linear" => {
            let (x, y) = (v("x"), v("y"));
            if s <= x[0] {
                return y[0];
            }
            if s >= x[x.len() - 1] {
                return y[y.len() - 1];
            }
            let j = x.iter().position(|&xi| xi > s).unwrap();
            y[j - 1] + (y[j] - y[j - 1]) * (s - x[j - 1]) / (x[j] - x[j - 1])
        }
        other => panic!("kind {other}"),
    }
}

#[test]
fn saved_maps_apply_as_documented() {
    let tmp = tempfile::tempdir().unwrap();
    ok(candor(tmp.path()).args(["demo", "--rows", "3000"]));
    for method in ["platt", "isotonic", "histogram", "beta", "temperature"] {
        let file = format!("{method}.json");
        score_demo(tmp.path(), &["--fit", method, "--save", &file]);
        let map: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(tmp.path().join(&file)).unwrap())
                .unwrap();
        let applied = ok(candor(tmp.path()).args([
            "apply",
            &file,
            "deliveries.csv",
            "--target",
            "late",
            "--group",
            "region",
        ]));
        let text = String::from_utf8(applied.stdout).unwrap();
        let mut r = csv::Reader::from_reader(text.as_bytes());
        assert_eq!(
            r.headers().unwrap().iter().next_back(),
            Some("calibrated_1")
        );
        for rec in r.records().take(500) {
            let rec = rec.unwrap();
            let p: f64 = rec[2].parse().unwrap();
            let got: f64 = rec[4].parse().unwrap();
            let want = by_the_documentation(&map, p);
            assert!(
                (got - want).abs() < 1e-9,
                "{method}: p {p}: {got} vs {want}"
            );
        }
    }
}

#[test]
fn multiclass_columns_map_by_name_and_bad_rows_are_listed() {
    let tmp = tempfile::tempdir().unwrap();
    let mut rows = String::from("truth,p_red,p_green,p_blue\n");
    for i in 0..90 {
        let label = ["red", "green", "blue"][i % 3];
        let (a, b) = (0.2 + 0.005 * (i % 7) as f64, 0.3);
        rows.push_str(&format!("{label},{a},{b},{}\n", 1.0 - a - b));
    }
    std::fs::write(tmp.path().join("m.csv"), &rows).unwrap();
    let out = ok(candor(tmp.path()).args([
        "score",
        "m.csv",
        "--target",
        "truth",
        "--json",
        "--bootstrap",
        "0",
        "--outer-folds",
        "3",
    ]));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["classes"], serde_json::json!(["red", "green", "blue"]));
    assert!(v["metrics"]["brier"].as_f64().unwrap() > 0.0);

    // A multiclass temperature map applies as documented:
    // p_k^(1/T) / sum_j p_j^(1/T).
    ok(candor(tmp.path()).args([
        "score",
        "m.csv",
        "--target",
        "truth",
        "--bootstrap",
        "0",
        "--outer-folds",
        "3",
        "--fit",
        "temperature",
        "--save",
        "t.json",
    ]));
    let map: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(tmp.path().join("t.json")).unwrap()).unwrap();
    let t = map["temperature"].as_f64().unwrap();
    let applied = ok(candor(tmp.path()).args(["apply", "t.json", "m.csv", "--target", "truth"]));
    let text = String::from_utf8(applied.stdout).unwrap();
    for line in text.lines().skip(1).take(20) {
        let f: Vec<f64> = line
            .split(',')
            .skip(1)
            .map(|v| v.parse().unwrap())
            .collect();
        let powered: Vec<f64> = f[..3].iter().map(|p| p.powf(1.0 / t)).collect();
        let sum: f64 = powered.iter().sum();
        for k in 0..3 {
            assert!((f[3 + k] - powered[k] / sum).abs() < 1e-9, "{line}");
        }
    }

    let broken = rows.replacen("red,0.2,0.3,0.5", "red,0.2,0.3,0.9", 1);
    std::fs::write(tmp.path().join("b.csv"), broken).unwrap();
    let out = candor(tmp.path())
        .args(["score", "b.csv", "--target", "truth"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success());
    assert!(
        err.contains("do not sum to 1") && err.contains("lines 2"),
        "{err}"
    );
    for (args, want) in [
        (
            vec!["score", "m.csv", "--target", "colour"],
            "no target column `colour`",
        ),
        (
            vec![
                "score", "m.csv", "--target", "truth", "--fit", "spline", "--save", "x.json",
            ],
            "unknown method",
        ),
    ] {
        let out = candor(tmp.path()).args(&args).output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            !out.status.success() && err.contains(want),
            "{args:?}: {err}"
        );
    }
}

/// Writes the demo's predictions as `f(logit(p))` under column `score`.
fn rescaled(dir: &Path, name: &str, f: impl Fn(f64) -> f64) {
    let text = std::fs::read_to_string(dir.join("deliveries.csv")).unwrap();
    let mut out = String::from("late,region,score\n");
    for line in text.lines().skip(1) {
        let v: Vec<&str> = line.split(',').collect();
        let p: f64 = v[2].parse().unwrap();
        out.push_str(&format!("{},{},{}\n", v[0], v[1], f((p / (1.0 - p)).ln())));
    }
    std::fs::write(dir.join(name), out).unwrap();
}

/// The rows of a summary by (dataset without its file name, method), with
/// every metric column as a number (NaN for an empty field).
fn summary_rows(dir: &Path) -> Vec<(String, String, Vec<f64>)> {
    let text = std::fs::read_to_string(dir.join("summary.csv")).unwrap();
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let h = r.headers().unwrap().clone();
    let last = h.iter().position(|c| c == "strategy").unwrap();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            let segment = rec[0].split_once(' ').map_or("", |(_, s)| s).to_string();
            let values = (3..last)
                .map(|i| rec[i].parse().unwrap_or(f64::NAN))
                .collect();
            (segment, rec[2].to_string(), values)
        })
        .collect()
}

#[test]
fn log_odds_score_like_the_probabilities_they_stand_for() {
    // The same forecasts given as p and as ln(p / (1 - p)): every metric of
    // every method, raw row included, agrees (the logistic function and its
    // inverse, round-tripped in floating point).
    let tmp = tempfile::tempdir().unwrap();
    ok(candor(tmp.path()).args(["demo", "--rows", "3000"]));
    rescaled(tmp.path(), "logodds.csv", |z| z);
    score_demo(tmp.path(), &["--out", "p"]);
    let mut args = vec!["score", "logodds.csv", "-t", "late", "-g", "region"];
    args.extend(["--bootstrap", "0", "--scores", "log-odds", "--out", "z"]);
    ok(candor(tmp.path()).args(&args));
    let (p, z) = (
        summary_rows(&tmp.path().join("p")),
        summary_rows(&tmp.path().join("z")),
    );
    assert_eq!(p.len(), z.len());
    for ((sp, mp, vp), (sz, mz, vz)) in p.iter().zip(&z) {
        assert_eq!((sp, mp), (sz, mz));
        for (a, b) in vp.iter().zip(vz) {
            assert!(
                (a - b).abs() <= 1e-7 * (1.0 + a.abs()) || (a.is_nan() && b.is_nan()),
                "{sp} {mp}: {a} vs {b}"
            );
        }
    }
}

#[test]
fn margins_calibrate_on_the_native_scale_and_their_raw_row_is_not_applicable() {
    // Margins 3·logit(p) + 1 carry the same ranking as p but no probability
    // meaning. Platt scaling's sigmoid has its own slope and offset, so its
    // fit on the margin is the fit on logit(p) (Platt 1999; up to the
    // solver's tolerance); AUC, a rank statistic, is unchanged; the raw
    // row's probability metrics are blank, with the reason.
    let tmp = tempfile::tempdir().unwrap();
    ok(candor(tmp.path()).args(["demo", "--rows", "3000"]));
    rescaled(tmp.path(), "margin.csv", |z| 3.0 * z + 1.0);
    score_demo(tmp.path(), &["--out", "p"]);
    let mut args = vec!["score", "margin.csv", "-t", "late", "-g", "region"];
    args.extend(["--bootstrap", "0", "--scores", "margin", "--out", "m"]);
    args.extend(["--fit", "platt", "--save", "platt.json"]);
    let out = ok(candor(tmp.path()).args(&args));
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(stdout.contains("n/a"), "{stdout}");
    let header: Vec<String> = {
        let text = std::fs::read_to_string(tmp.path().join("m/summary.csv")).unwrap();
        text.lines()
            .next()
            .unwrap()
            .split(',')
            .map(String::from)
            .collect()
    };
    let col = |name: &str| header.iter().position(|h| h == name).unwrap() - 3;
    let (p, m) = (
        summary_rows(&tmp.path().join("p")),
        summary_rows(&tmp.path().join("m")),
    );
    for ((_, method, vp), (_, _, vm)) in p.iter().zip(&m) {
        assert!((vp[col("auc")] - vm[col("auc")]).abs() < 1e-12 || method != "none");
        if method == "none" {
            assert!(vm[col("ece")].is_nan() && vm[col("brier")].is_nan());
        }
        if method == "platt" {
            assert!((vp[col("brier")] - vm[col("brier")]).abs() < 1e-6);
        }
    }
    let summary = std::fs::read_to_string(tmp.path().join("m/summary.csv")).unwrap();
    assert!(summary.contains("not applicable: margins are not probabilities"));
    let diag = std::fs::read_to_string(tmp.path().join("m/report/diagnosis.md")).unwrap();
    assert!(diag.contains("not applicable"), "{diag}");

    // The saved map records the scale, reads the margin itself, and
    // refuses predictions read as probabilities.
    let map: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(tmp.path().join("platt.json")).unwrap())
            .unwrap();
    assert_eq!(map["scores"], "margin");
    let applied = ok(candor(tmp.path()).args([
        "apply",
        "platt.json",
        "margin.csv",
        "-t",
        "late",
        "-g",
        "region",
        "--scores",
        "margin",
    ]));
    let text = String::from_utf8(applied.stdout).unwrap();
    let (a, b) = (
        map["maps"][0]["a"].as_f64().unwrap(),
        map["maps"][0]["b"].as_f64().unwrap(),
    );
    for line in text.lines().skip(1).take(200) {
        let v: Vec<&str> = line.split(',').collect();
        let s: f64 = v[2].parse().unwrap();
        let got: f64 = v[4].parse().unwrap();
        assert!((got - 1.0 / (1.0 + (a * s + b).exp())).abs() < 1e-12);
    }
    let wrong = candor(tmp.path())
        .args(["apply", "platt.json", "margin.csv", "-t", "late"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&wrong.stderr);
    assert!(!wrong.status.success());
    assert!(err.contains("pass --scores margin"), "{err}");
}

#[test]
fn a_saved_isotonic_map_keeps_only_its_knots() {
    // 5,000 forecasts give thousands of distinct scores but a few dozen
    // fitted levels; the interpolated map needs only the ends of each level.
    let tmp = tempfile::tempdir().unwrap();
    ok(candor(tmp.path()).args(["demo"]));
    score_demo(tmp.path(), &["--fit", "isotonic", "--save", "iso.json"]);
    let map: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(tmp.path().join("iso.json")).unwrap())
            .unwrap();
    let y: Vec<f64> = map["maps"][0]["y"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let mut levels = y.clone();
    levels.dedup();
    assert!(
        y.len() <= 2 * levels.len(),
        "{} points, {} levels",
        y.len(),
        levels.len()
    );
    assert!(y.len() < 200, "{}", y.len());
}
