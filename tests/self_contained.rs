//! The published repository stands alone: no text a reader gets points to
//! a folder outside it, and every check value docs/methods.md lists is
//! asserted by some test that names it.

use std::path::{Path, PathBuf};

const ROOT: &str = env!("CARGO_MANIFEST_DIR");

/// The folders and files a reader of the repository gets.
const PUBLISHED: &[&str] = &[
    "src",
    "tests",
    "benches",
    "docs",
    "scripts",
    "experiments",
    ".ci",
    "ci",
    "assets",
    "datasets/PROVENANCE.md",
    "README.md",
    "ARCHITECTURE.md",
    "Cargo.toml",
];

fn text_files(path: &Path, out: &mut Vec<PathBuf>) {
    if path.is_dir() {
        for entry in std::fs::read_dir(path).expect("a readable folder") {
            text_files(&entry.expect("a directory entry").path(), out);
        }
    } else if std::fs::read_to_string(path).is_ok() {
        out.push(path.to_path_buf());
    }
}

fn published_texts() -> Vec<(PathBuf, String)> {
    let mut files = Vec::new();
    for p in PUBLISHED {
        let path = Path::new(ROOT).join(p);
        if path.exists() {
            text_files(&path, &mut files);
        }
    }
    files
        .into_iter()
        .map(|f| {
            let text = std::fs::read_to_string(&f).expect("read above");
            (f, text)
        })
        .collect()
}

#[test]
fn no_text_points_outside_the_repository() {
    // Built from parts so that this file does not match itself.
    let outside = ["reference", "peer", "datasets", "hooks"]
        .iter()
        .map(|sub| format!("{}/{sub}", "shared"))
        .chain([format!("../{}", "shared")])
        .collect::<Vec<_>>();
    let mut found = Vec::new();
    for (file, text) in published_texts() {
        for (n, line) in text.lines().enumerate() {
            if outside.iter().any(|o| line.contains(o.as_str())) {
                found.push(format!("{}:{}: {}", file.display(), n + 1, line.trim()));
            }
        }
    }
    assert!(
        found.is_empty(),
        "paths outside the repository:\n{}",
        found.join("\n")
    );
}

#[test]
fn every_listed_check_value_is_asserted_by_a_test_that_names_it() {
    let doc = std::fs::read_to_string(Path::new(ROOT).join("docs/methods.md")).unwrap();
    let ids: Vec<&str> = doc
        .lines()
        .skip_while(|l| !l.starts_with("## Check values"))
        .filter_map(|l| l.strip_prefix("| `"))
        .filter_map(|l| l.split('`').next())
        .collect();
    assert!(
        ids.len() >= 20,
        "the check-value table was not found: {ids:?}"
    );
    let code: String = published_texts()
        .into_iter()
        .filter(|(f, _)| f.extension().is_some_and(|e| e == "rs"))
        .map(|(_, t)| t)
        .collect();
    let missing: Vec<&&str> = ids.iter().filter(|id| !code.contains(**id)).collect();
    assert!(
        missing.is_empty(),
        "check values no test names: {missing:?}"
    );
}
