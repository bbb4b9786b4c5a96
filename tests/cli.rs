//! The command line as a user meets it: one-line errors with what to do,
//! no result files on failure, and the quickstart reproducing the committed
//! summary that the README shows.

use std::path::Path;
use std::process::{Command, Output};

fn candor(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_candor"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn an_unwritable_results_folder_is_refused_before_any_work() {
    let tmp = tempfile::tempdir().unwrap();
    let blocker = tmp.path().join("file");
    std::fs::write(&blocker, "not a folder").unwrap();
    let out = blocker.join("results");
    let o = candor(&[
        "run",
        "experiments/quickstart.toml",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1));
    let err = stderr(&o);
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.starts_with("error: ") && err.contains("cannot write results there"),
        "{err}"
    );
    assert!(err.contains("choose another folder with --out"), "{err}");
}

#[test]
fn a_bad_manifest_names_its_line_and_writes_nothing() {
    let tmp = tempfile::tempdir().unwrap();
    let m = tmp.path().join("m.toml");
    std::fs::write(&m, "name = \"x\"\n[[dataset]]\nname = \"a\"\nbundled = \"no_such_data\"\n[[family]]\nname = \"logistic\"\n").unwrap();
    let out = tmp.path().join("out");
    let o = candor(&["run", m.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    let err = stderr(&o);
    assert!(
        err.contains("m.toml:3:8: no bundled dataset `no_such_data`; bundled ids: adult"),
        "{err}"
    );
    assert!(!out.join("summary.csv").exists());

    let o = candor(&["run", tmp.path().join("missing.toml").to_str().unwrap()]);
    assert!(stderr(&o).contains("missing.toml: cannot read the manifest"));
}

#[test]
fn check_reports_the_datasets_and_cell_count() {
    let o = candor(&["check", "experiments/quickstart.toml"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = String::from_utf8_lossy(&o.stdout);
    // Class counts as published with the datasets (datasets/catalog.json).
    assert!(
        text.contains(
            "spambase: 4601 rows, 57 feature columns, classes {nonspam: 2788, spam: 1813}"
        ),
        "{text}"
    );
    assert!(text.contains("penguins: 344 rows"), "{text}");
    assert!(text.contains("= 60 cells"), "{text}");
}

fn rows(path: &Path) -> Vec<Vec<String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let mut out = vec![r.headers().unwrap().iter().map(String::from).collect()];
    out.extend(
        r.records()
            .map(|x| x.unwrap().iter().map(String::from).collect()),
    );
    out
}

#[test]
fn the_quickstart_reproduces_the_committed_summary() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("q");
    let o = candor(&[
        "run",
        "experiments/quickstart.toml",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let printed = String::from_utf8_lossy(&o.stdout);
    assert!(printed.contains("60 cells computed, 0 reused"), "{printed}");
    let committed =
        rows(&Path::new(env!("CARGO_MANIFEST_DIR")).join("results/quickstart/summary.csv"));
    let fresh = rows(&out.join("summary.csv"));
    assert_eq!(committed.len(), fresh.len());
    assert_eq!(committed.len(), 1 + 6 * 2 * 7);
    for (a, b) in committed.iter().zip(&fresh) {
        for (x, y) in a.iter().zip(b) {
            match (x.parse::<f64>(), y.parse::<f64>()) {
                // Identical on one machine; a tolerance allows for another
                // processor's fused multiply-add in the matrix kernels.
                (Ok(u), Ok(v)) => assert!((u - v).abs() <= 1e-9 * (1.0 + u.abs()), "{x} vs {y}"),
                _ => assert_eq!(x, y),
            }
        }
    }
}
