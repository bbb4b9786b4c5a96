//! The subcommands are library functions: another program can call them
//! without starting a process, and gets the text and notes separately.

use candor::commands::check::{self, CheckArgs};
use candor::commands::{Output, Status};
use std::path::{Path, PathBuf};

#[test]
fn check_called_as_a_function_reports_the_catalogued_row_counts() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut out = Output::default();
    let status = check::execute(
        CheckArgs {
            manifest: root.join("experiments/quickstart.toml"),
            datasets: Some(root.join("datasets")),
            metric: None,
            baseline: Some(root.join("ci/quickstart.gate.toml")),
            out: Some(std::env::temp_dir().join("candor-check-probe")),
        },
        &mut out,
    )
    .expect("the quickstart manifest checks");
    assert_eq!(status, Status::Success);
    // The row counts come from the files; catalog.json records the counts
    // of the published datasets (see datasets/PROVENANCE.md), so the two
    // agree only if every row was read.
    let catalog: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root.join("datasets/catalog.json")).expect("the catalog"),
    )
    .expect("catalog.json is JSON");
    for (name, id) in [
        ("spambase", "spambase"),
        ("german_credit", "german_credit"),
        ("heart_disease", "heart_disease_cleveland"),
    ] {
        let rows = catalog
            .as_array()
            .and_then(|a| a.iter().find(|e| e["id"] == id))
            .and_then(|e| e["rows"].as_u64())
            .expect("the dataset is catalogued");
        let line = format!("{name}: {rows} rows,");
        assert!(
            out.text.lines().any(|l| l.starts_with(&line)),
            "no `{line}` in:\n{}",
            out.text
        );
    }
    assert!(out.text.contains("= 60 cells"), "{}", out.text);
    assert!(
        out.text.contains("quickstart.gate.toml: 5 rules fit"),
        "{}",
        out.text
    );
    assert!(!std::env::temp_dir().join("candor-check-probe").exists());
}

#[test]
fn a_command_error_comes_back_as_a_value_naming_the_file() {
    let mut out = Output::default();
    let missing = PathBuf::from("no/such/manifest.toml");
    let err = check::execute(
        CheckArgs {
            manifest: missing,
            datasets: None,
            metric: None,
            baseline: None,
            out: None,
        },
        &mut out,
    )
    .expect_err("a missing manifest is an error");
    assert!(err.to_string().contains("no/such/manifest.toml"), "{err}");
}

/// A manifest that computes AUC and log loss only.
fn without_brier(dir: &Path) -> PathBuf {
    let path = dir.join("m.toml");
    std::fs::write(
        &path,
        "name = \"m\"\nmetrics = [\"auc\", \"log_loss\"]\n[[dataset]]\nname = \"heart\"\nbundled = \"heart_disease_cleveland\"\n[[family]]\nname = \"logistic\"\n",
    )
    .unwrap();
    path
}

#[test]
fn what_a_run_would_refuse_is_refused_before_any_work() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let tmp = tempfile::tempdir().unwrap();
    let manifest = without_brier(tmp.path());
    let args = |metric: Option<&str>, baseline: Option<PathBuf>, out: Option<PathBuf>| CheckArgs {
        manifest: manifest.clone(),
        datasets: Some(root.join("datasets")),
        metric: metric.map(str::to_string),
        baseline,
        out,
    };
    // A deciding metric the manifest does not compute.
    let err = check::execute(args(Some("brier"), None, None), &mut Output::default())
        .expect_err("brier is not computed");
    assert!(err.to_string().contains("--metric brier"), "{err}");
    // None named: the report picks a proper score that was computed, and
    // says so.
    let mut out = Output::default();
    check::execute(args(None, None, Some(tmp.path().join("r"))), &mut out).unwrap();
    assert!(
        out.notes.contains("use log_loss (brier was not computed"),
        "{}",
        out.notes
    );
    // Gate rules on a metric the manifest does not compute.
    let rules = tmp.path().join("gate.toml");
    std::fs::write(&rules, "[[rule]]\nmetric = \"ece\"\nmax = 0.1\n").unwrap();
    let err = check::execute(args(None, Some(rules), None), &mut Output::default())
        .expect_err("ece is not computed");
    assert!(
        err.to_string()
            .contains("rule 1: the manifest's `metrics` do not include `ece`"),
        "{err}"
    );
    // An output folder that cannot be made.
    let blocker = tmp.path().join("file");
    std::fs::write(&blocker, "").unwrap();
    let err = check::execute(
        args(None, None, Some(blocker.join("out"))),
        &mut Output::default(),
    )
    .expect_err("a file is in the way");
    assert!(
        err.to_string().contains("cannot write results there"),
        "{err}"
    );
}

#[test]
fn run_refuses_an_uncomputed_metric_before_training() {
    let tmp = tempfile::tempdir().unwrap();
    let manifest = without_brier(tmp.path());
    let out = tmp.path().join("results");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_candor"))
        .arg("run")
        .arg(&manifest)
        .args(["--metric", "brier", "-q", "--out"])
        .arg(&out)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--metric brier"));
    assert!(!out.exists(), "no cell was computed");
}
