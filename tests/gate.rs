//! `candor gate` end to end: it passes on fold-to-fold noise (the same
//! experiment with another seed), fails on a real regression (a family made
//! much worse), and exits 2 on bad input, as documented.

use std::path::{Path, PathBuf};
use std::process::Command;

fn candor() -> Command {
    Command::new(env!("CARGO_BIN_EXE_candor"))
}

fn manifest(dir: &Path, seed: u64, l2: f64) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/report/manifest.toml");
    let text = std::fs::read_to_string(src)
        .unwrap()
        .replace("seed = 7", &format!("seed = {seed}"))
        .replace(
            "kind = \"logistic\"",
            &format!("kind = \"logistic\"\nparams = {{ l2 = {l2:?} }}"),
        );
    let path = dir.join(format!("m-{seed}-{l2}.toml"));
    std::fs::write(&path, text).unwrap();
    path
}

fn run(dir: &Path, seed: u64, l2: f64) -> PathBuf {
    let out = dir.join(format!("results-{seed}-{l2}"));
    let datasets = Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets");
    let status = candor()
        .arg("run")
        .arg(manifest(dir, seed, l2))
        .arg("--out")
        .arg(&out)
        .arg("--datasets")
        .arg(datasets)
        .arg("-q")
        .status()
        .unwrap();
    assert!(status.success());
    out
}

const RULES: &str = "[[rule]]\nmetric = \"brier\"\ntolerance = 0.0\n\n[[rule]]\nmetric = \"ece\"\nmethod = \"isotonic\"\nmax = 0.3\n\n[[rule]]\nmetric = \"auc\"\ntolerance = 0.0\n";

#[test]
fn gate_passes_on_noise_and_fails_on_a_regression() {
    let tmp = tempfile::tempdir().unwrap();
    let base = run(tmp.path(), 7, 1.0);
    let baseline = tmp.path().join("gate.toml");
    std::fs::write(&baseline, format!("# our rules\n{RULES}")).unwrap();
    let s = candor()
        .args(["gate"])
        .arg(&base)
        .arg("--baseline")
        .arg(&baseline)
        .arg("--update")
        .status()
        .unwrap();
    assert!(s.success());
    let text = std::fs::read_to_string(&baseline).unwrap();
    assert!(
        text.starts_with("# our rules\n[[rule]]"),
        "rules and comments kept"
    );
    // 3 datasets x 2 families x 4 methods, for brier and auc.
    assert_eq!(text.matches("[[value]]").count(), 48);

    // Another seed: new fold splits, the same models. Noise only.
    let noisy = run(tmp.path(), 8, 1.0);
    let junit = tmp.path().join("junit.xml");
    let out = candor()
        .arg("gate")
        .arg(&noisy)
        .arg("--baseline")
        .arg(&baseline)
        .arg("--junit")
        .arg(&junit)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}");
    assert!(stdout.contains("3 of 3 rules hold"), "{stdout}");

    // Logistic regression with a crushing penalty predicts close to the
    // base rate: a real loss of Brier score and AUC.
    let worse = run(tmp.path(), 7, 1e4);
    let md = tmp.path().join("summary.md");
    let out = candor()
        .arg("gate")
        .arg(&worse)
        .arg("--baseline")
        .arg(&baseline)
        .arg("--junit")
        .arg(&junit)
        .arg("--markdown")
        .arg(&md)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(1), "{stdout}");
    assert!(
        stdout.contains("FAIL brier") && stdout.contains("logreg"),
        "{stdout}"
    );
    let xml = std::fs::read_to_string(&junit).unwrap();
    let doc = roxmltree::Document::parse(&xml).unwrap();
    let cases: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .collect();
    assert_eq!(cases.len(), 3, "one test case per rule");
    assert!(cases
        .iter()
        .any(|c| c.children().any(|f| f.has_tag_name("failure"))));
    let md = std::fs::read_to_string(&md).unwrap();
    assert!(
        md.contains("(regression)") && md.contains("| fail |"),
        "{md}"
    );
}

#[test]
fn bad_baselines_exit_with_2_and_say_what_to_do() {
    let results = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/report/results");
    let tmp = tempfile::tempdir().unwrap();
    let cases = [
        (
            "[[rule]]\nmetric = \"sharpness\"\nmax = 1.0\n",
            "unknown metric `sharpness`",
        ),
        (
            "[[rule]]\nmetric = \"ece\"\nfamily = \"svm\"\nmax = 1.0\n",
            "no family `svm`",
        ),
        ("[[rule]]\nmetric = \"ece\"\n", "give either `max`/`min`"),
        (
            "[[rule]]\nmetric = \"calibration_slope\"\ntolerance = 0.1\n",
            "no better direction",
        ),
        (
            "[[rule]]\nmetric = \"ece\"\ntolerance = 0.1\n",
            "accept the current results with --update",
        ),
        (
            "[[rule]]\nmetric = \"ece\"\nlimit = 0.1\n",
            "unknown field `limit`",
        ),
        ("[[rule]\n", "gate.toml:1"),
    ];
    for (text, want) in cases {
        let path = tmp.path().join("gate.toml");
        std::fs::write(&path, text).unwrap();
        let out = candor()
            .arg("gate")
            .arg(&results)
            .arg("--baseline")
            .arg(&path)
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{text}: {err}");
        assert!(
            err.contains(want) && err.contains("gate.toml"),
            "{text}: {err}"
        );
        assert_eq!(err.trim().lines().count(), 1, "one line: {err}");
    }
    let out = candor()
        .arg("gate")
        .arg(&results)
        .arg("--baseline")
        .arg(tmp.path().join("missing.toml"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--update"));
}
