//! `candor gate` end to end, as a team reproducing a comparison in CI uses
//! it: it passes on fold-to-fold noise (the same experiment with other
//! seeds), fails on real regressions (families crippled on purpose), fails
//! when rows the baseline accepted disappear, and exits 2 on bad input.
//!
//! The change rules compare runs on the same seed fold by fold, with the
//! corrected resampled t interval of Nadeau & Bengio (2003), so crippled
//! families are caught even when the two runs' fold intervals overlap.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn candor() -> Command {
    Command::new(env!("CARGO_BIN_EXE_candor"))
}

/// The report fixture's manifest (three small bundled datasets, logistic
/// regression and naive Bayes, three folds) with a seed, two more families
/// and text replaced as given.
fn manifest(dir: &Path, name: &str, seed: u64, edits: &[(&str, &str)]) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/report/manifest.toml");
    let mut text = std::fs::read_to_string(src)
        .unwrap()
        .replace("seed = 7", &format!("seed = {seed}"));
    text.push_str("\n[[family]]\nname = \"mlp\"\nkind = \"mlp\"\n");
    text.push_str("\n[[family]]\nname = \"boosting\"\nkind = \"gradient_boosting\"\n");
    for (from, to) in edits {
        assert!(text.contains(from), "{from}");
        text = text.replace(from, to);
    }
    let path = dir.join(format!("{name}.toml"));
    std::fs::write(&path, text).unwrap();
    path
}

fn run(dir: &Path, name: &str, seed: u64, edits: &[(&str, &str)]) -> PathBuf {
    let out = dir.join(format!("results-{name}"));
    let datasets = Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets");
    let status = candor()
        .arg("run")
        .arg(manifest(dir, name, seed, edits))
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

fn gate(results: &Path, baseline: &Path, extra: &[&Path]) -> Output {
    let mut c = candor();
    c.arg("gate").arg(results).arg("--baseline").arg(baseline);
    for (flag, path) in ["--junit", "--markdown"].iter().zip(extra) {
        c.arg(flag).arg(path);
    }
    c.output().unwrap()
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// A baseline with the default rules (`--update` on a new file writes the
/// template: Brier and AUC change rules), accepted from `results`.
fn accept(results: &Path, baseline: &Path) {
    let s = candor()
        .arg("gate")
        .arg(results)
        .arg("--baseline")
        .arg(baseline)
        .arg("--update")
        .status()
        .unwrap();
    assert!(s.success());
}

#[test]
fn the_default_rules_pass_noise_and_catch_crippled_families() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let base = run(dir, "base", 7, &[]);
    let baseline = dir.join("gate.toml");
    accept(&base, &baseline);
    let text = std::fs::read_to_string(&baseline).unwrap();
    assert!(text.contains("[accepted]\nformat = \"candor-gate-baseline\"\nversion = 2\nseed = 7"));
    // 3 datasets x 4 families x 4 methods, for brier and auc, each with
    // its three per-fold values.
    assert_eq!(text.matches("[[value]]").count(), 96);
    assert_eq!(text.matches("\nfolds = [").count(), 96);

    // The same experiment rerun: identical, so nothing changes.
    let o = gate(&base, &baseline, &[]);
    assert_eq!(o.status.code(), Some(0), "{}", stdout(&o));

    // Noise alone: other seeds split the rows differently and train the
    // MLP from other weights. The folds are not shared, the gate says so,
    // and the unpaired rule lets noise through, on every seed.
    for seed in 8..13 {
        let noisy = run(dir, &format!("seed{seed}"), seed, &[]);
        let o = gate(&noisy, &baseline, &[]);
        let out = stdout(&o);
        assert_eq!(o.status.code(), Some(0), "seed {seed}: {out}");
        assert!(
            out.contains("note: the baseline was accepted with seed 7"),
            "{out}"
        );
        assert!(out.contains("3 of 3 rules hold"), "{out}");
    }

    // An MLP stopped after one epoch: its AUC and Brier score fall, fold
    // by fold, even where the two runs' intervals overlap.
    let mlp = run(
        dir,
        "mlp1",
        7,
        &[(
            "kind = \"mlp\"\n",
            "kind = \"mlp\"\nparams = { max_epochs = 1 }\n",
        )],
    );
    let junit = dir.join("junit.xml");
    let md = dir.join("summary.md");
    let o = gate(&mlp, &baseline, &[&junit, &md]);
    let out = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{out}");
    assert!(
        out.contains("FAIL auc") && out.contains("/ mlp / none: auc ="),
        "{out}"
    );
    assert!(out.contains("fold by fold"), "{out}");
    assert!(!out.contains("/ logreg /"), "only the MLP changed: {out}");
    let xml = std::fs::read_to_string(&junit).unwrap();
    let doc = roxmltree::Document::parse(&xml).unwrap();
    let cases: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .collect();
    assert_eq!(
        cases.len(),
        3,
        "one test case per rule, and one for the rows"
    );
    let md = std::fs::read_to_string(&md).unwrap();
    assert!(
        md.contains("(regression)") && md.contains("| fail |"),
        "{md}"
    );

    // Gradient boosting with three rounds: a worse Brier score.
    let gb = run(
        dir,
        "gb3",
        7,
        &[(
            "kind = \"gradient_boosting\"\n",
            "kind = \"gradient_boosting\"\nparams = { rounds = 3 }\n",
        )],
    );
    let o = gate(&gb, &baseline, &[]);
    let out = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{out}");
    assert!(
        out.contains("FAIL brier") && out.contains("/ boosting / none: brier ="),
        "{out}"
    );
}

#[test]
fn rows_that_disappear_fail_and_new_rows_are_listed() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let edits_base: &[(&str, &str)] = &[];
    let base = run(dir, "base", 7, edits_base);
    let baseline = dir.join("gate.toml");
    accept(&base, &baseline);
    // Drop a family, a dataset and a method.
    let fewer = run(
        dir,
        "fewer",
        7,
        &[
            ("\n[[family]]\nname = \"mlp\"\nkind = \"mlp\"\n", "\n"),
            (
                "[[dataset]]\nname = \"credit\"\nbundled = \"german_credit\"\n",
                "",
            ),
            ("\"isotonic\", ", ""),
        ],
    );
    let o = gate(&fewer, &baseline, &[]);
    let out = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{out}");
    assert!(
        out.contains("FAIL every accepted row is still in the results"),
        "{out}"
    );
    for row in [
        "family mlp: all 12 of its accepted rows are missing",
        "dataset credit: all 16 of its accepted rows are missing",
        "method isotonic: all 12 of its accepted rows are missing",
    ] {
        assert!(out.contains(row), "{row}: {out}");
    }
    assert!(out.contains("accept the removal with --update"), "{out}");
    // Accepting the removal makes the gate pass again.
    accept(&fewer, &baseline);
    let o = gate(&fewer, &baseline, &[]);
    assert_eq!(o.status.code(), Some(0), "{}", stdout(&o));

    // A new row is listed, not failed...
    let o = gate(&base, &baseline, &[]);
    let out = stdout(&o);
    assert_eq!(o.status.code(), Some(0), "{out}");
    assert!(out.contains("new row(s) with no accepted value"), "{out}");
    assert!(out.contains("credit / mlp / isotonic"), "{out}");
    // ...unless the baseline asks for that.
    let text = std::fs::read_to_string(&baseline).unwrap();
    std::fs::write(&baseline, format!("new_rows = \"fail\"\n{text}")).unwrap();
    let o = gate(&base, &baseline, &[]);
    let out = stdout(&o);
    assert_eq!(o.status.code(), Some(1), "{out}");
    assert!(out.contains("new, with no accepted value"), "{out}");
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
        // A baseline from an earlier candor: values without per-fold
        // numbers and no [accepted] table.
        (
            "[[rule]]\nmetric = \"brier\"\ntolerance = 0.0\n\n[[value]]\ndataset = \"heart\"\nfamily = \"logreg\"\nmethod = \"none\"\nmetric = \"brier\"\nmean = 0.12\nlow = 0.1\nhigh = 0.14\n",
            "written by an earlier candor",
        ),
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
