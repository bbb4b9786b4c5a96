//! The README's family table must say what the registry (the source of
//! `candor list families`) does: every kind has a row, every parameter of
//! the kind is named in it, and every default it quotes is the real one.

use candor::common::params::ParamValue;
use candor::learner::FAMILIES;

fn readme() -> String {
    std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md"))
        .expect("README.md exists")
}

/// The `` `name` (value`` pairs of a table row, value up to `)` or `:`.
fn quoted_defaults(row: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut rest = row;
    while let Some(at) = rest.find('`') {
        rest = &rest[at + 1..];
        let Some(end) = rest.find('`') else { break };
        let name = &rest[..end];
        rest = &rest[end + 1..];
        if let Some(value) = rest.strip_prefix(" (") {
            let stop = value.find([')', ':']).unwrap_or(value.len());
            out.push((name.to_string(), value[..stop].trim().to_string()));
        }
    }
    out
}

#[test]
fn the_family_table_agrees_with_the_registry() {
    let text = readme();
    for family in FAMILIES {
        let start = format!("| `{}` |", family.kind);
        let row = text
            .lines()
            .find(|l| l.starts_with(&start))
            .unwrap_or_else(|| panic!("README has no family-table row for `{}`", family.kind));
        for p in family.params {
            assert!(
                row.contains(&format!("`{}`", p.name)),
                "README row `{}` does not name its parameter `{}`",
                family.kind,
                p.name
            );
        }
        let quoted = quoted_defaults(row);
        for (name, value) in &quoted {
            let Some(p) = family.params.iter().find(|p| p.name == name) else {
                panic!(
                    "README row `{}` quotes `{name}` ({value}), which is not one of its parameters",
                    family.kind
                );
            };
            let real = match p.default {
                ParamValue::Float(x) => x,
                ParamValue::Int(i) => i as f64,
                ParamValue::Choice(c) => {
                    assert_eq!(
                        value.trim_matches('"'),
                        c,
                        "README row `{}` quotes `{name}` ({value}), but its default is \"{c}\"",
                        family.kind
                    );
                    continue;
                }
            };
            let said: f64 = value.parse().unwrap_or_else(|_| {
                panic!(
                    "README row `{}`: `{name}` ({value}) is not a number",
                    family.kind
                )
            });
            assert_eq!(
                said, real,
                "README row `{}` says `{name}` defaults to {value}; the registry says {real}",
                family.kind
            );
        }
        assert_eq!(
            quoted.len(),
            family.params.len(),
            "README row `{}` should quote each parameter's default once",
            family.kind
        );
    }
}
