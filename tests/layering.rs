//! The source layout's one rule: imports point down the pipeline. Each
//! stage folder under `src/` has a rank, and code in a stage may name
//! another stage only if that stage's rank is strictly lower. Stages of
//! equal rank (such as `data` and `metrics`) are independent of each other.
//! The ranks mirror ARCHITECTURE.md; moving a module means updating both.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

/// The stages, lowest first.
const RANKS: &[(&str, u8)] = &[
    ("common", 0),
    ("data", 1),
    ("metrics", 1),
    ("export", 1),
    ("learner", 2),
    ("calibrate", 2),
    ("experiment", 3),
    ("report", 4),
    ("gate", 5),
    ("commands", 6),
];

fn rank(stage: &str) -> Option<u8> {
    RANKS.iter().find(|(s, _)| *s == stage).map(|(_, r)| *r)
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).expect("src/ is readable") {
        let path = entry.expect("a directory entry").path();
        if path.is_dir() {
            rust_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

/// The top-level modules a source text names through `crate::`, whether
/// as `crate::data::csv` or inside a group such as
/// `crate::{calibrate, learner::{self, Learner}}`. Comments are skipped.
fn named_modules(text: &str) -> BTreeSet<String> {
    let code: String = text
        .lines()
        .filter(|l| !l.trim_start().starts_with("//"))
        .collect::<Vec<_>>()
        .join("\n");
    let mut found = BTreeSet::new();
    let mut rest = code.as_str();
    while let Some(at) = rest.find("crate::") {
        rest = &rest[at + "crate::".len()..];
        if let Some(group) = rest.strip_prefix('{') {
            // Top-level items of the group, up to its closing brace.
            let mut depth = 0;
            let mut item = String::new();
            for ch in group.chars() {
                match ch {
                    '{' => depth += 1,
                    '}' if depth == 0 => break,
                    '}' => depth -= 1,
                    ',' if depth == 0 => {
                        found.insert(first_segment(&item));
                        item.clear();
                        continue;
                    }
                    _ => {}
                }
                item.push(ch);
            }
            found.insert(first_segment(&item));
        } else {
            found.insert(first_segment(rest));
        }
    }
    found.remove("");
    found
}

fn first_segment(path: &str) -> String {
    path.trim()
        .chars()
        .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
        .collect()
}

#[test]
fn the_group_parser_sees_nested_and_plain_paths() {
    let text = "use crate::{calibrate, learner::{self, Learner}};\n\
                // crate::report is only mentioned in a comment\n\
                let x = crate::data::csv::parse_csv(b, f, t, None);";
    let found: Vec<String> = named_modules(text).into_iter().collect();
    assert_eq!(found, ["calibrate", "data", "learner"]);
}

#[test]
fn every_stage_imports_only_lower_stages() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let mut violations = Vec::new();
    let mut edges = 0;
    for file in &files {
        let relative = file.strip_prefix(&src).expect("under src/");
        let mut parts = relative.components();
        let first = parts
            .next()
            .map(|c| c.as_os_str().to_string_lossy().into_owned())
            .unwrap_or_default();
        if parts.next().is_none() {
            // lib.rs and main.rs sit above every stage.
            assert!(
                first == "lib.rs" || first == "main.rs",
                "{first}: a module at the top of src/ belongs in a stage folder"
            );
            continue;
        }
        let own = rank(&first).unwrap_or_else(|| {
            panic!("src/{first}/: not a known stage; add it to RANKS and ARCHITECTURE.md")
        });
        let text = std::fs::read_to_string(file).expect("a readable source file");
        for module in named_modules(&text) {
            if module == first || module == "VERSION" || module == "Error" || module == "Result" {
                continue;
            }
            edges += 1;
            match rank(&module) {
                Some(r) if r < own => {}
                _ => violations.push(format!(
                    "{} (stage {first}, rank {own}) imports crate::{module}",
                    relative.display()
                )),
            }
        }
    }
    // The pipeline has many downward imports; finding none would mean the
    // scan itself is broken.
    assert!(edges > 50, "only {edges} cross-stage imports found");
    assert!(
        violations.is_empty(),
        "imports that point up or sideways:\n{}",
        violations.join("\n")
    );
}

#[test]
fn source_paths_named_in_the_docs_exist() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut named = 0;
    for doc in ["README.md", "ARCHITECTURE.md"] {
        let text = std::fs::read_to_string(root.join(doc)).expect("the doc exists");
        for (at, _) in text.match_indices("src/") {
            if at > 0 && text.as_bytes()[at - 1].is_ascii_alphanumeric() {
                continue;
            }
            let path: String = text[at..]
                .chars()
                .take_while(|c| c.is_ascii_alphanumeric() || "_/.".contains(*c))
                .collect();
            let path = path.trim_end_matches('.');
            named += 1;
            assert!(
                root.join(path).exists(),
                "{doc} names `{path}`, which does not exist; update the doc"
            );
        }
    }
    assert!(named > 5, "only {named} source paths found in the docs");
}
