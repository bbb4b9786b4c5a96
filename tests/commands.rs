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
}

#[test]
fn a_command_error_comes_back_as_a_value_naming_the_file() {
    let mut out = Output::default();
    let missing = PathBuf::from("no/such/manifest.toml");
    let err = check::execute(
        CheckArgs {
            manifest: missing,
            datasets: None,
        },
        &mut out,
    )
    .expect_err("a missing manifest is an error");
    assert!(err.to_string().contains("no/such/manifest.toml"), "{err}");
}
