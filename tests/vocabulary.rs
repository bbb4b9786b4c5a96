//! One vocabulary across subcommands: the same flag names the same thing
//! everywhere, old spellings work only as hidden aliases, `--out` is always
//! a folder, errors name the flag the user typed, and a manifest's problems
//! are all reported in one pass.

use std::path::Path;
use std::process::{Command, Output};

fn candor(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_candor"))
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap()
}

fn help(args: &[&str]) -> String {
    let mut all = args.to_vec();
    all.push("--help");
    let o = candor(Path::new(env!("CARGO_MANIFEST_DIR")), &all);
    assert!(o.status.success(), "{args:?}");
    String::from_utf8(o.stdout).unwrap()
}

const COMMANDS: &[&[&str]] = &[
    &["run"],
    &["report"],
    &["gate"],
    &["score"],
    &["apply"],
    &["demo"],
    &["data", "inspect"],
    &["data", "add"],
    &["check"],
    &["list"],
];

#[test]
fn every_command_uses_the_same_words() {
    for c in COMMANDS {
        let h = help(c);
        // Old spellings stay accepted but hidden.
        for old in ["--label", "--folds ", "--features"] {
            assert!(!h.contains(old), "{c:?} shows {old}:\n{h}");
        }
        // `--out` is always a folder.
        if h.contains("--out ") {
            assert!(h.contains("-o, --out <DIR>"), "{c:?}:\n{h}");
        }
        for (long, short) in [
            ("--target", "-t"),
            ("--positive", "-p"),
            ("--threads", "-j"),
            ("--quiet", "-q"),
            ("--metric", "-m"),
            ("--seed", "-s"),
        ] {
            if h.contains(long) {
                assert!(
                    h.contains(&format!("{short}, {long}")),
                    "{c:?}: {long} has no {short}:\n{h}"
                );
            }
        }
    }
    // Fold counts carry the manifest's [evaluation] key names.
    assert!(help(&["data", "inspect"]).contains("--outer-folds"));
    assert!(help(&["data", "inspect"]).contains("--inner-folds"));
    assert!(help(&["score"]).contains("--outer-folds"));
    // One way to list the bundled datasets.
    assert!(!help(&["data"]).contains("list"));
}

#[test]
fn defaults_are_one_set() {
    // src/common/defaults.rs is the one place; every command shows it.
    let seed = candor::common::defaults::SEED.to_string();
    let bootstrap = candor::common::defaults::BOOTSTRAP.to_string();
    assert!(help(&["score"]).contains(&format!("[default: {seed}]")));
    assert!(help(&["demo"]).contains(&format!("[default: {seed}]")));
    assert!(help(&["score"]).contains(&format!("[default: {bootstrap}]")));
    let exp = candor::experiment::manifest::default_evaluation(0);
    assert_eq!(exp.bootstrap, candor::common::defaults::BOOTSTRAP);
    assert_eq!(exp.outer_folds, candor::common::defaults::OUTER_FOLDS);
}

#[test]
fn old_spellings_still_work_and_out_is_a_folder() {
    let tmp = tempfile::tempdir().unwrap();
    let o = candor(tmp.path(), &["demo", "-n", "400", "-o", "demo"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(tmp.path().join("demo/deliveries.csv").exists());
    assert!(tmp.path().join("demo/parcels.csv").exists());
    // The hidden aliases --label and --folds.
    let o = candor(
        tmp.path(),
        &[
            "score",
            "demo/deliveries.csv",
            "--label",
            "late",
            "--group",
            "region",
            "--folds",
            "3",
            "--bootstrap",
            "0",
            "--fit",
            "platt",
            "--save",
            "platt.json",
            "-o",
            "scored",
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(tmp.path().join("scored/summary.csv").exists());
    let o = candor(
        tmp.path(),
        &[
            "apply",
            "platt.json",
            "demo/deliveries.csv",
            "-t",
            "late",
            "-g",
            "region",
            "-o",
            "calibrated",
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let written = tmp.path().join("calibrated/deliveries.calibrated.csv");
    let text = std::fs::read_to_string(&written).unwrap();
    assert!(text.lines().next().unwrap().ends_with("calibrated_1"));
    assert_eq!(text.lines().count(), 401);
}

#[test]
fn command_line_errors_name_the_flag() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(tmp.path().join("d.csv"), "x,y\n1,cat\n2,dog\n3,cat\n").unwrap();
    let o = candor(tmp.path(), &["data", "inspect", "d.csv", "-t", "y"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(err.contains("set --positive"), "{err}");
    let o = candor(tmp.path(), &["data", "inspect", "d.csv", "-t", "z"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("set --target to one of them"), "{err}");
    let o = candor(tmp.path(), &["score", "d.csv"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--target COLUMN"), "{err}");
    // The same problem in a manifest names the key instead.
    std::fs::write(
        tmp.path().join("m.toml"),
        "name = \"m\"\n[[dataset]]\nname = \"d\"\npath = \"d.csv\"\ntarget = \"y\"\n[[family]]\nname = \"logistic\"\n",
    )
    .unwrap();
    let o = candor(tmp.path(), &["check", "m.toml"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("set `positive`"), "{err}");
}

#[test]
fn a_manifest_reports_all_its_problems_at_once() {
    let tmp = tempfile::tempdir().unwrap();
    let text = "name = \"m\"\n\
        calibrators = [\"platt\", \"spline\"]\n\
        [evaluation]\nouter_folds = 1\n\
        [[dataset]]\nname = \"a\"\nbundled = \"iris\"\n\
        [[dataset]]\nname = \"a\"\nbundled = \"iris\"\n\
        [[family]]\nname = \"f\"\nkind = \"forest_of_doom\"\n\
        [[family]]\nname = \"g\"\nkind = \"logistic\"\nparams = { max_iter = 5, l2 = -1.0 }\n";
    std::fs::write(tmp.path().join("m.toml"), text).unwrap();
    let o = candor(tmp.path(), &["check", "m.toml"]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    let lines: Vec<&str> = err.lines().collect();
    for want in [
        "m.toml:2:25: unknown calibration method `spline`",
        "m.toml:4:15: `outer_folds` = 1 is out of range",
        "m.toml:9:8: duplicate dataset name `a`",
        "m.toml:13:8: unknown family kind `forest_of_doom`",
        "m.toml:17:12: parameter `max_iter` is now called `max_steps`",
        "m.toml:17:31: parameter `l2` = -1 is out of range",
    ] {
        assert!(
            lines
                .iter()
                .any(|l| l.starts_with("error: ") && l.contains(want)),
            "missing `{want}` in:\n{err}"
        );
    }
    assert_eq!(lines.len(), 6, "{err}");
}
