//! Every kind of bad manifest gets one line naming the file, line and column
//! and saying what is allowed.

use candor::experiment::manifest::{parse, ManifestSource};

const HEAD: &str = "name = \"t\"\nseed = 1\n";
const DATA: &str = "[[dataset]]\nname = \"iris\"\nbundled = \"iris\"\n";
const FAMILY: &str = "[[family]]\nname = \"logreg\"\nkind = \"logistic\"\n";

fn error_of(text: &str) -> String {
    let source = ManifestSource {
        path: "bad.toml".into(),
        text: text.to_string(),
        sha256: String::new(),
    };
    match parse(source) {
        Ok(_) => panic!("manifest was accepted:\n{text}"),
        Err(e) => {
            let msg = e.to_string();
            assert!(!msg.contains('\n'), "message spans lines: {msg}");
            msg
        }
    }
}

fn expect(text: &str, parts: &[&str]) {
    let msg = error_of(text);
    for p in parts {
        assert!(msg.contains(p), "expected `{p}` in: {msg}");
    }
}

#[test]
fn a_valid_manifest_is_accepted_with_defaults() {
    let source = ManifestSource {
        path: "ok.toml".into(),
        text: format!("{HEAD}{DATA}{FAMILY}"),
        sha256: String::new(),
    };
    let exp = parse(source).unwrap();
    let all: Vec<&str> = candor::calibrate::METHODS.iter().map(|m| m.name).collect();
    assert_eq!(exp.methods, all);
    assert_eq!(exp.calibration.histogram_bins, 10);
    assert_eq!(exp.metrics.len(), candor::metrics::METRICS.len());
    assert_eq!(exp.evaluation.hl_groups, 10);
    assert_eq!(exp.evaluation.bootstrap, 1000);
    assert_eq!(exp.evaluation.bootstrap_seed, 1);
    assert_eq!(exp.evaluation.outer_folds, 5);
    assert_eq!(exp.families[0].params.float("l2"), 1.0);
}

#[test]
fn unknown_top_level_key() {
    expect(
        &format!("name = \"t\"\nseeed = 1\n{DATA}{FAMILY}"),
        &[
            "bad.toml:2:1:",
            "unknown field `seeed`",
            "expected one of",
            "`seed`",
        ],
    );
}

#[test]
fn wrong_type() {
    expect(
        &format!("name = \"t\"\nseed = \"seven\"\n{DATA}{FAMILY}"),
        &["bad.toml:2:8:", "invalid type: string \"seven\"", "u64"],
    );
}

#[test]
fn unknown_key_in_evaluation() {
    expect(
        &format!("{HEAD}[evaluation]\nfolds = 3\n{DATA}{FAMILY}"),
        &["bad.toml:4:1:", "unknown field `folds`", "`outer_folds`"],
    );
}

#[test]
fn fold_count_out_of_range() {
    expect(
        &format!("{HEAD}[evaluation]\nouter_folds = 1\n{DATA}{FAMILY}"),
        &[
            "bad.toml:4:15:",
            "`outer_folds` = 1 is out of range",
            "from 2 to 100",
        ],
    );
}

#[test]
fn duplicate_dataset_name() {
    expect(
        &format!("{HEAD}{DATA}{DATA}{FAMILY}"),
        &[
            "bad.toml:7:8:",
            "duplicate dataset name `iris`",
            "first used at bad.toml:4:8",
        ],
    );
}

#[test]
fn duplicate_family_name() {
    expect(
        &format!("{HEAD}{DATA}{FAMILY}{FAMILY}"),
        &["bad.toml:10:8:", "duplicate family name `logreg`"],
    );
}

#[test]
fn unknown_family_kind() {
    expect(
        &format!("{HEAD}{DATA}[[family]]\nname = \"x\"\nkind = \"xgboost\"\n"),
        &[
            "bad.toml:8:8:",
            "unknown family kind `xgboost`",
            "known kinds: logistic, naive_bayes",
        ],
    );
}

#[test]
fn unknown_family_parameter() {
    expect(
        &format!("{HEAD}{DATA}{FAMILY}params = {{ C = 1.0 }}\n"),
        &[
            "bad.toml:9:12:",
            "unknown parameter `C`",
            "allowed: l2, max_steps",
        ],
    );
}

#[test]
fn a_renamed_family_kind_names_its_new_name() {
    expect(
        &format!("{HEAD}{DATA}[[family]]\nname = \"nb\"\nkind = \"gaussian_nb\"\n"),
        &[
            "bad.toml:8:8:",
            "family kind `gaussian_nb` is now called `naive_bayes`",
        ],
    );
}

#[test]
fn a_renamed_parameter_names_its_new_name() {
    expect(
        &format!("{HEAD}{DATA}{FAMILY}params = {{ max_iter = 50 }}\n"),
        &[
            "bad.toml:9:12:",
            "parameter `max_iter` is now called `max_steps`",
        ],
    );
}

#[test]
fn family_parameter_of_the_wrong_type() {
    expect(
        &format!("{HEAD}{DATA}{FAMILY}params = {{ max_steps = 2.5 }}\n"),
        &[
            "bad.toml:9:24:",
            "`max_steps` must be an integer, found float",
        ],
    );
}

#[test]
fn unknown_calibration_method() {
    expect(
        &format!("name = \"t\"\ncalibrators = [\"platt\", \"sigmoid\"]\n{DATA}{FAMILY}"),
        &[
            "bad.toml:2:25:",
            "unknown calibration method `sigmoid`",
            "known: none, platt, isotonic",
        ],
    );
}

#[test]
fn metric_listed_twice() {
    expect(
        &format!("name = \"t\"\nmetrics = [\"ece\", \"ece\"]\n{DATA}{FAMILY}"),
        &["bad.toml:2:19:", "metric `ece` is listed twice"],
    );
}

#[test]
fn dataset_with_both_sources() {
    expect(
        &format!("{HEAD}[[dataset]]\nname = \"d\"\nbundled = \"iris\"\npath = \"d.csv\"\n{FAMILY}"),
        &["bad.toml:5:11:", "either `bundled` or `path`, not both"],
    );
}

#[test]
fn file_dataset_without_target() {
    expect(
        &format!("{HEAD}[[dataset]]\nname = \"d\"\npath = \"d.csv\"\n{FAMILY}"),
        &["bad.toml:4:8:", "needs `target"],
    );
}

#[test]
fn no_datasets() {
    expect(
        &format!("{HEAD}{FAMILY}"),
        &["bad.toml: no datasets", "add a [[dataset]] table"],
    );
}

#[test]
fn names_must_be_portable() {
    expect(
        &format!("{HEAD}[[dataset]]\nname = \"../x\"\nbundled = \"iris\"\n{FAMILY}"),
        &["bad.toml:4:8:", "dataset name `../x` is not allowed"],
    );
}

#[test]
fn histogram_bins_out_of_range() {
    expect(
        &format!("{HEAD}[calibration]\nhistogram_bins = 1\n{DATA}{FAMILY}"),
        &["bad.toml:4:18:", "`histogram_bins` = 1 is out of range"],
    );
}

#[test]
fn toml_syntax_error() {
    expect(&format!("{HEAD}[[dataset]\n"), &["bad.toml:3:", "invalid"]);
}

#[test]
fn a_convention_parameter_names_its_choices() {
    let family = "[[family]]\nname = \"ada\"\nkind = \"boosted_stumps\"\n";
    expect(
        &format!("{HEAD}{DATA}{family}params = {{ probability = \"votes\" }}\n"),
        &[
            "bad.toml:9:26:",
            "`probability` = \"votes\" is not one of: logistic, vote_share",
        ],
    );
    expect(
        &format!("{HEAD}{DATA}{family}params = {{ probability = 1 }}\n"),
        &["must be one of the strings \"logistic\", \"vote_share\", found integer"],
    );
}
