//! Runs every case of the bad-input corpus (tests/corpus/, made by
//! tests/corpus/make_corpus.py) through `candor run`: each bad input gives
//! exactly one `error:` line naming the file and line or key, a non-zero
//! exit that is not a panic, and no result tables; inputs marked "ok"
//! (a BOM, CRLF line ends) must be accepted.

use std::path::Path;
use std::process::Command;

#[test]
fn every_corpus_case_fails_cleanly_or_is_accepted() {
    let corpus = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/corpus");
    let datasets = Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets");
    let mut cases: Vec<_> = std::fs::read_dir(&corpus)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    cases.sort();
    assert!(cases.len() >= 25, "the corpus has {} cases", cases.len());
    let mut problems = Vec::new();
    for case in &cases {
        let name = case.file_name().unwrap().to_string_lossy().to_string();
        let expect = std::fs::read_to_string(case.join("expect.txt")).unwrap();
        let expect = expect.trim();
        let tmp = tempfile::tempdir().unwrap();
        let out = if name == "output_unwritable" {
            // A folder cannot be made under a plain file.
            std::fs::write(tmp.path().join("file"), b"").unwrap();
            tmp.path().join("file").join("results")
        } else {
            tmp.path().join("results")
        };
        let run = Command::new(env!("CARGO_BIN_EXE_candor"))
            .arg("run")
            .arg(case.join("manifest.toml"))
            .arg("--out")
            .arg(&out)
            .arg("--datasets")
            .arg(&datasets)
            .arg("--quiet")
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&run.stderr);
        if expect == "ok" {
            if !run.status.success() {
                problems.push(format!("{name}: should be accepted, got: {err}"));
            }
            continue;
        }
        let errors: Vec<&str> = err.lines().filter(|l| !l.starts_with("note:")).collect();
        if run.status.success() || run.status.code() == Some(101) || err.contains("panicked") {
            problems.push(format!("{name}: exit {:?}: {err}", run.status.code()));
        } else if errors.len() != 1 || !errors[0].starts_with("error: ") {
            problems.push(format!("{name}: not one error line: {err}"));
        } else if !errors[0].contains(expect) {
            problems.push(format!("{name}: error lacks {expect:?}: {}", errors[0]));
        }
        for table in ["summary.csv", "records.jsonl", "run.json"] {
            if out.join(table).exists() {
                problems.push(format!("{name}: wrote {table}"));
            }
        }
    }
    assert!(problems.is_empty(), "\n{}", problems.join("\n"));
}
