//! End-to-end runs on bundled open data: determinism across thread counts,
//! resuming after interruption, and failing cells that do not stop the rest.

use candor::experiment::manifest::{self, Experiment};
use candor::experiment::runner::{run, RunOptions};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

fn datasets() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets")
}

const SMALL: &str = r#"
name = "small"
seed = 3
[evaluation]
outer_folds = 3
repeats = 2
inner_folds = 3
bins = 10
[[dataset]]
name = "wine"
bundled = "wine"
[[dataset]]
name = "sonar"
bundled = "sonar"
[[family]]
name = "logreg"
kind = "logistic"
[[family]]
name = "nb"
kind = "naive_bayes"
"#;

fn experiment(dir: &Path, text: &str) -> Experiment {
    let path = dir.join("m.toml");
    std::fs::write(&path, text).unwrap();
    manifest::load(&path).unwrap()
}

fn options(out: PathBuf, threads: usize) -> RunOptions {
    RunOptions {
        out_dir: out,
        threads,
        datasets_dir: Some(datasets()),
        progress: false,
        shard: None,
    }
}

/// Every file under a folder, with its bytes, in a stable order.
fn snapshot(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for entry in std::fs::read_dir(&d).unwrap() {
            let p = entry.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push((
                    p.strip_prefix(dir).unwrap().to_path_buf(),
                    std::fs::read(&p).unwrap(),
                ));
            }
        }
    }
    out.sort();
    out
}

#[test]
fn results_are_byte_identical_for_one_thread_and_several() {
    let tmp = tempfile::tempdir().unwrap();
    let exp = experiment(tmp.path(), SMALL);
    let one = run(&exp, &options(tmp.path().join("one"), 1)).unwrap();
    run(&exp, &options(tmp.path().join("four"), 4)).unwrap();
    assert_eq!(one.computed, 24);
    assert!(one.failures.is_empty(), "{:?}", one.failures);
    let a = snapshot(&tmp.path().join("one"));
    let b = snapshot(&tmp.path().join("four"));
    // 24 cells, the three tables and the (empty) lock file.
    assert_eq!(a.len(), 24 + 3 + 1);
    assert!(a == b, "result files differ between 1 and 4 threads");
}

#[test]
fn a_rerun_after_interruption_recomputes_only_what_is_missing() {
    let tmp = tempfile::tempdir().unwrap();
    let exp = experiment(tmp.path(), SMALL);
    let full = tmp.path().join("full");
    run(&exp, &options(full.clone(), 2)).unwrap();
    let expected = snapshot(&full);

    // Simulate a run killed part-way: two cells never written, one cell file
    // cut short, and no tables yet.
    let part = tmp.path().join("part");
    run(&exp, &options(part.clone(), 2)).unwrap();
    let cells = part.join("cells");
    std::fs::remove_file(cells.join("wine/nb/r1-f2.json")).unwrap();
    std::fs::remove_file(cells.join("sonar/logreg/r0-f0.json")).unwrap();
    let cut = cells.join("sonar/nb/r1-f1.json");
    let text = std::fs::read(&cut).unwrap();
    std::fs::write(&cut, &text[..text.len() / 2]).unwrap();
    for table in ["records.jsonl", "summary.csv", "run.json"] {
        std::fs::remove_file(part.join(table)).unwrap();
    }

    let report = run(&exp, &options(part.clone(), 2)).unwrap();
    assert_eq!((report.computed, report.reused), (3, 21));
    assert!(
        snapshot(&part) == expected,
        "resumed results differ from an uninterrupted run"
    );

    // A changed setting invalidates the stored cells instead of mixing them.
    let changed = experiment(tmp.path(), &SMALL.replace("bins = 10", "bins = 12"));
    let report = run(&changed, &options(part, 2)).unwrap();
    assert_eq!(report.computed, 24);
}

#[test]
fn a_killed_process_leaves_no_partial_tables_refuses_a_second_writer_and_resumes_to_the_same_bytes()
{
    let tmp = tempfile::tempdir().unwrap();
    let manifest = tmp.path().join("m.toml");
    std::fs::write(&manifest, SMALL.replace("repeats = 2", "repeats = 8")).unwrap();
    let bin = env!("CARGO_BIN_EXE_candor");
    let out = tmp.path().join("killed");
    let args = |out: &Path| {
        vec![
            "run".to_string(),
            manifest.display().to_string(),
            "--out".into(),
            out.display().to_string(),
            "--threads".into(),
            "1".into(),
            "--datasets".into(),
            datasets().display().to_string(),
            "--quiet".into(),
        ]
    };
    let mut child = Command::new(bin).args(args(&out)).spawn().unwrap();
    let start = Instant::now();
    let cells = out.join("cells");
    let count = || walk_count(&cells);
    while count() < 3 && start.elapsed() < Duration::from_secs(120) {
        std::thread::sleep(Duration::from_millis(1));
    }
    // A second run on the same folder while the first is writing is
    // refused, with a clear message, and changes nothing.
    let second = Command::new(bin).args(args(&out)).output().unwrap();
    let err = String::from_utf8_lossy(&second.stderr);
    assert!(!second.status.success());
    assert!(
        err.contains("another candor run, shard or merge is writing"),
        "{err}"
    );
    child.kill().unwrap();
    let status = child.wait().unwrap();
    assert!(
        !status.success(),
        "the run finished before it could be interrupted"
    );
    assert!(count() >= 3);
    assert!(count() < 96, "every cell finished before the kill");
    for table in ["records.jsonl", "summary.csv", "run.json"] {
        assert!(
            !out.join(table).exists(),
            "{table} was written before the run finished"
        );
    }

    let resumed = Command::new(bin).args(args(&out)).output().unwrap();
    assert!(
        resumed.status.success(),
        "{}",
        String::from_utf8_lossy(&resumed.stderr)
    );
    let fresh = tmp.path().join("fresh");
    let clean = Command::new(bin).args(args(&fresh)).output().unwrap();
    assert!(clean.status.success());
    assert!(
        snapshot(&out) == snapshot(&fresh),
        "resumed run differs from a clean run"
    );
}

fn walk_count(dir: &Path) -> usize {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return 0;
    };
    entries
        .filter_map(|e| e.ok())
        .map(|e| {
            let p = e.path();
            if p.is_dir() {
                walk_count(&p)
            } else {
                usize::from(p.extension().is_some_and(|x| x == "json"))
            }
        })
        .sum()
}

#[test]
fn a_family_that_cannot_train_is_recorded_and_the_rest_complete() {
    let tmp = tempfile::tempdir().unwrap();
    // `k` is constant within each class, so naive Bayes with no variance
    // smoothing has zero variances and cannot produce probabilities;
    // logistic regression trains normally on the same rows.
    let mut csv = String::from("x,k,y\n");
    for i in 0..60 {
        let y = i % 2;
        csv.push_str(&format!("{},{},{y}\n", (i * 13) % 17, 10 * y));
    }
    std::fs::write(tmp.path().join("d.csv"), csv).unwrap();
    let exp = experiment(
        tmp.path(),
        r#"
name = "fails"
[evaluation]
outer_folds = 3
inner_folds = 3
[[dataset]]
name = "d"
path = "d.csv"
target = "y"
[[family]]
name = "nb"
kind = "naive_bayes"
params = { variance_floor = 0.0 }
[[family]]
name = "logreg"
kind = "logistic"
"#,
    );
    let report = run(&exp, &options(tmp.path().join("out"), 2)).unwrap();
    assert_eq!(report.failures.len(), 3, "{:?}", report.failures);
    assert!(report.failures[0].starts_with("d/nb repeat 0 fold 0: "));
    let logreg = report
        .summary
        .rows
        .iter()
        .find(|r| r.family == "logreg" && r.method == "platt")
        .unwrap();
    assert_eq!((logreg.folds, logreg.failed), (3, 0));
    let csv = std::fs::read_to_string(tmp.path().join("out/summary.csv")).unwrap();
    assert!(csv.contains("d,nb,none,,,"), "{csv}");
}
