//! The `command` family: an outside program trained and scored under the
//! same cross-fitted protocol as candor's own families. The program here is
//! `tests/fixtures/program/rule.sh`, a POSIX shell and awk script, so the
//! exchange is covered without Python.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn candor() -> Command {
    Command::new(env!("CARGO_BIN_EXE_candor"))
}

/// A synthetic two-class table: P(y = 1 | x) = sigmoid(2x), with a text
/// column holding blanks and a level with a comma, so the raw exchange has
/// to quote and leave fields empty.
fn write_data(dir: &Path) {
    let mut rng = candor::common::rng::SplitMix64::new(0x2545_f491_4f6c_dd1d);
    let mut uniform = || rng.unit();
    let mut csv = String::from("x,colour,y\n");
    for i in 0..240 {
        let x = 4.0 * uniform() - 2.0;
        let y = u8::from(uniform() < 1.0 / (1.0 + (-2.0 * x).exp()));
        let colour = ["red", "\"red, dark\"", "", "blue"][i % 4];
        csv.push_str(&format!("{x},{colour},{y}\n"));
    }
    std::fs::write(dir.join("toy.csv"), csv).unwrap();
}

/// A folder with the data, the script and a manifest whose program runs in
/// `mode` with a per-fit `timeout`.
fn setup(mode: &str, timeout: f64, input: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    write_data(dir.path());
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/program/rule.sh");
    std::fs::copy(script, dir.path().join("rule.sh")).unwrap();
    std::fs::create_dir(dir.path().join("tmp")).unwrap();
    let manifest = format!(
        r#"
name = "own"
seed = 11
[evaluation]
outer_folds = 3
inner_folds = 3
bootstrap = 40
[[dataset]]
name = "toy"
path = "toy.csv"
target = "y"
[[family]]
name = "rule"
kind = "command"
command = "sh rule.sh {mode} {{train}} {{score}} {{output}} {{seed}}"
files = ["rule.sh"]
params = {{ timeout = {timeout}, input = "{input}" }}
[[family]]
name = "lr"
kind = "logistic"
"#
    );
    std::fs::write(dir.path().join("own.toml"), manifest).unwrap();
    dir
}

/// Runs the manifest in `dir` into `out` with `threads`, the program's
/// temporary files going to `dir/tmp`.
fn run(dir: &Path, out: &str, threads: usize) -> Output {
    candor()
        .current_dir(dir)
        .env("TMPDIR", dir.join("tmp"))
        .args(["run", "own.toml", "--out", out, "-j", &threads.to_string()])
        .output()
        .unwrap()
}

fn files_in(dir: PathBuf) -> Vec<PathBuf> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn a_program_gives_the_same_bytes_on_any_thread_count_and_leaves_no_files() {
    let dir = setup("ok", 60.0, "raw");
    let one = run(dir.path(), "one", 1);
    assert_eq!(one.status.code(), Some(0), "{}", stderr(&one));
    let two = run(dir.path(), "two", 2);
    assert_eq!(two.status.code(), Some(0), "{}", stderr(&two));
    for file in ["records.jsonl", "summary.csv", "run.json"] {
        let a = std::fs::read(dir.path().join("one").join(file)).unwrap();
        let b = std::fs::read(dir.path().join("two").join(file)).unwrap();
        assert!(a == b, "{file} differs between -j 1 and -j 2");
    }
    assert!(files_in(dir.path().join("tmp")).is_empty());

    // The program's native score reaches the calibrators: the rule's
    // log-odds are 2x + intercept, the data's true log-odds 2x, so Platt
    // on the native score is nearly the identity and the rule ranks rows
    // as well as logistic regression on x.
    let summary = std::fs::read_to_string(dir.path().join("one/summary.csv")).unwrap();
    let header: Vec<&str> = summary.lines().next().unwrap().split(',').collect();
    let col = |name: &str| header.iter().position(|h| *h == name).unwrap();
    let auc = |family: &str, method: &str| -> f64 {
        summary
            .lines()
            .map(|l| l.split(',').collect::<Vec<_>>())
            .find(|r| r[col("family")] == family && r[col("method")] == method)
            .map(|r| r[col("auc")].parse().unwrap())
            .unwrap()
    };
    assert!((auc("rule", "none") - auc("lr", "none")).abs() < 0.02);
    assert!((auc("rule", "platt") - auc("rule", "none")).abs() < 1e-9);

    // run.json records the command and the script's SHA-256.
    let info = std::fs::read_to_string(dir.path().join("one/run.json")).unwrap();
    assert!(info.contains("sh rule.sh ok {train} {score} {output} {seed}"));
    let script = std::fs::read(dir.path().join("rule.sh")).unwrap();
    assert!(info.contains(&candor::common::checksum::hex_sha256(&script)));
}

#[test]
fn the_encoded_matrix_can_be_sent_instead_of_the_raw_columns() {
    // With `input = "encoded"` the first column is x standardised on the
    // training rows, so the rule still ranks rows by x.
    let dir = setup("ok", 60.0, "encoded");
    let o = run(dir.path(), "out", 2);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let records = std::fs::read_to_string(dir.path().join("out/records.jsonl")).unwrap();
    assert!(!records.contains("\"error\""));
}

#[test]
fn each_program_fault_fails_its_cells_with_the_programs_last_words() {
    let cases = [
        (
            "fail",
            "the program exited with status 3; the last lines of its standard error: rule: reading",
        ),
        ("silent", "the program wrote no output file"),
        ("short", "rows to score; write exactly one per row"),
        ("long", "the output has more rows than"),
        ("badsum", "the probabilities sum to 1.4, not 1"),
        ("nan", "is NaN"),
        (
            "wide",
            "the output's header has columns candor does not read (extra)",
        ),
        (
            "slow",
            "the program did not finish within 0.5 s and was stopped",
        ),
    ];
    for (mode, expected) in cases {
        let dir = setup(mode, 0.5, "raw");
        let o = run(dir.path(), "out", 2);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(3), "{mode}: {err}");
        let failed: Vec<&str> = err.lines().filter(|l| l.starts_with("failed:")).collect();
        // Every cell of the program fails; logistic regression's cells go on.
        assert_eq!(failed.len(), 3, "{mode}: {err}");
        for line in &failed {
            assert!(line.starts_with("failed: toy/rule repeat 0 fold"), "{line}");
            assert!(line.contains(expected), "{mode}: {line}");
        }
        if mode == "fail" {
            assert!(
                err.contains("rule: cannot fit, the data look wrong"),
                "{err}"
            );
        }
        let summary = std::fs::read_to_string(dir.path().join("out/summary.csv")).unwrap();
        assert!(summary.lines().any(|l| l.contains(",lr,")), "{mode}");
        assert!(
            files_in(dir.path().join("tmp")).is_empty(),
            "{mode} left temporary files"
        );
    }
}

#[test]
fn editing_the_script_recomputes_its_cells_and_nothing_else() {
    let dir = setup("ok", 60.0, "raw");
    let last = |o: &Output| {
        String::from_utf8_lossy(&o.stdout)
            .lines()
            .find(|l| l.contains("cells computed"))
            .unwrap_or_default()
            .to_string()
    };
    let first = run(dir.path(), "out", 2);
    assert!(last(&first).starts_with("6 cells computed, 0 reused"));
    let again = run(dir.path(), "out", 2);
    assert!(last(&again).starts_with("0 cells computed, 6 reused"));
    let before = std::fs::read(dir.path().join("out/summary.csv")).unwrap();
    let script = dir.path().join("rule.sh");
    let mut text = std::fs::read_to_string(&script).unwrap();
    text.push_str("# tuned\n");
    std::fs::write(&script, text).unwrap();
    let edited = run(dir.path(), "out", 2);
    assert!(last(&edited).starts_with("3 cells computed, 3 reused"));
    // Same rule, new fingerprint: the numbers are unchanged.
    let after = std::fs::read(dir.path().join("out/summary.csv")).unwrap();
    assert!(before == after);
}

#[test]
fn a_command_family_is_checked_when_the_manifest_is_read() {
    let dir = tempfile::tempdir().unwrap();
    write_data(dir.path());
    let cases = [
        (
            "kind = \"command\"",
            "runs a program, so it needs `command = ",
        ),
        (
            "kind = \"command\"\ncommand = \"sh x.sh {train} {score}\"",
            "never uses `{output}`",
        ),
        (
            "kind = \"command\"\ncommand = \"sh x.sh {train} {score} {output} {fold}\"",
            "unknown placeholder `{fold}`",
        ),
        (
            "kind = \"command\"\ncommand = \"sh 'x.sh {train} {score} {output}\"",
            "unclosed quote",
        ),
        (
            "kind = \"command\"\ncommand = \"sh x.sh {train} {score} {output}\"\nfiles = [\"x.sh\"]",
            "cannot read the model file `x.sh`",
        ),
        (
            "kind = \"logistic\"\ncommand = \"sh x.sh {train} {score} {output}\"",
            "`command` applies only to families of kind `command`",
        ),
    ];
    for (family, expected) in cases {
        let manifest = format!(
            "name = \"m\"\n[[dataset]]\nname = \"toy\"\npath = \"toy.csv\"\ntarget = \"y\"\n[[family]]\nname = \"own\"\n{family}\n"
        );
        std::fs::write(dir.path().join("m.toml"), manifest).unwrap();
        let o = candor()
            .current_dir(dir.path())
            .args(["check", "m.toml"])
            .output()
            .unwrap();
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "{err}");
        assert!(err.contains(expected), "expected `{expected}` in: {err}");
        assert!(err.contains("m.toml:"), "{err}");
    }
}

#[test]
#[ignore = "installs scikit-learn into a virtual environment and runs 60 Python fits (about 3 minutes); run with --ignored"]
fn the_scikit_learn_example_runs_end_to_end_and_repeats_itself() {
    // examples/own-model: scikit-learn's HistGradientBoostingClassifier as a
    // command family next to candor's own families. Run twice, on one and
    // on two threads: the program seeds itself from {seed}, so the results
    // must be byte-identical.
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = tempfile::tempdir().unwrap();
    for (threads, name) in [("1", "one"), ("2", "two")] {
        let o = Command::new(root.join("scripts/own-model-example.sh"))
            .env("OUT", out.path().join(name))
            .args(["-j", threads, "-q"])
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", stderr(&o));
    }
    for file in ["records.jsonl", "summary.csv"] {
        let a = std::fs::read(out.path().join("one").join(file)).unwrap();
        let b = std::fs::read(out.path().join("two").join(file)).unwrap();
        assert!(a == b, "{file} differs between -j 1 and -j 2");
    }
    let records = std::fs::read_to_string(out.path().join("one/records.jsonl")).unwrap();
    assert!(records.contains("\"family\":\"sk_hist_gb\""));
    assert!(!records.contains("\"error\""), "a cell failed");
}
