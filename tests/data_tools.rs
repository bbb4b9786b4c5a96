//! `candor data list`, `inspect` and `add`.

use std::path::Path;
use std::process::Command;

fn candor(dir: &Path) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_candor"));
    c.current_dir(dir);
    c
}

fn stdout(c: &mut Command) -> String {
    let out = c.output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

#[test]
fn inspect_names_identifiers_leaks_and_sparse_columns() {
    let tmp = tempfile::tempdir().unwrap();
    let mut csv = String::from("row_id,outcome_code,branch,score,signal,notes,y\n");
    for i in 0..200 {
        let y = if i % 3 == 0 { "churned" } else { "stayed" };
        let code = if y == "churned" { "C" } else { "S" };
        // Ten branches, each with one outcome only: perfectly predictive.
        let branch = format!("b{}", (i % 3 == 0) as usize * 10 + i % 5);
        let score = if y == "churned" { 50 + i % 7 } else { i % 40 };
        let signal = (i * 37 % 101) as f64 / 10.0;
        let notes = match i % 8 {
            0 => "late",
            4 => "early",
            _ => "",
        };
        csv.push_str(&format!(
            "{i},{code},{branch},{score},{signal},{notes},{y}\n"
        ));
    }
    std::fs::write(tmp.path().join("c.csv"), csv).unwrap();
    let out = stdout(candor(tmp.path()).args([
        "data",
        "inspect",
        "c.csv",
        "--target",
        "y",
        "--positive",
        "churned",
    ]));
    let warning = |col: &str, what: &str| {
        out.lines().any(|l| {
            l.starts_with("warning:") && l.contains(&format!("`{col}`")) && l.contains(what)
        })
    };
    assert!(warning("row_id", "identifier"), "{out}");
    assert!(warning("outcome_code", "copy of the target"), "{out}");
    assert!(warning("branch", "predicts the target perfectly"), "{out}");
    assert!(warning("score", "separates the two classes"), "{out}");
    assert!(warning("notes", "missing in 75%"), "{out}");
    assert!(
        !out.contains("`signal`"),
        "an honest column is not flagged: {out}"
    );
    assert!(out.contains("churned") && out.contains("positive"));
}

#[test]
fn inspect_warns_about_a_class_too_rare_for_the_folds() {
    let tmp = tempfile::tempdir().unwrap();
    let mut csv = String::from("x,y\n");
    for i in 0..60 {
        csv.push_str(&format!("{},{}\n", i % 13, if i < 4 { 1 } else { 0 }));
    }
    std::fs::write(tmp.path().join("r.csv"), csv).unwrap();
    let out = stdout(candor(tmp.path()).args(["data", "inspect", "r.csv", "--target", "y"]));
    let first = out.lines().find(|l| l.starts_with("warning:")).unwrap();
    assert!(
        first.contains("class `1` has 4 rows, too few for 5 outer and 5 inner folds"),
        "{out}"
    );
}

#[test]
fn add_appends_an_entry_keeping_the_manifest_text() {
    let tmp = tempfile::tempdir().unwrap();
    stdout(candor(tmp.path()).args(["demo", "--rows", "400"]));
    let manifest = "# Our comparison: keep this comment.\nname = \"ours\"\n\n[[family]]\nname = \"lr\"   # the baseline\nkind = \"logistic\"\n";
    std::fs::write(tmp.path().join("m.toml"), manifest).unwrap();
    let out = stdout(candor(tmp.path()).args([
        "data",
        "add",
        "parcels.csv",
        "--target",
        "late",
        "--positive",
        "yes",
        "--to",
        "m.toml",
    ]));
    assert!(
        out.contains("added dataset `parcels` (400 rows, 2 classes)"),
        "{out}"
    );
    let text = std::fs::read_to_string(tmp.path().join("m.toml")).unwrap();
    assert!(
        text.starts_with(manifest),
        "the old text is kept byte for byte"
    );
    assert!(text.ends_with("[[dataset]]\nname = \"parcels\"\npath = \"parcels.csv\"\ntarget = \"late\"\npositive = \"yes\"\n"), "{text}");
    // The manifest runs as it stands.
    let check = stdout(candor(tmp.path()).args(["check", "m.toml"]));
    assert!(check.contains("parcels: 400 rows"), "{check}");

    // Adding it again under the same name is refused, and changes nothing.
    let again = candor(tmp.path())
        .args([
            "data",
            "add",
            "parcels.csv",
            "--target",
            "late",
            "--positive",
            "yes",
            "--to",
            "m.toml",
        ])
        .output()
        .unwrap();
    assert!(!again.status.success());
    assert!(String::from_utf8_lossy(&again.stderr).contains("--name"));
    assert_eq!(
        std::fs::read_to_string(tmp.path().join("m.toml")).unwrap(),
        text
    );

    // A semicolon file with decimal commas is recorded with its format.
    let euro = std::fs::read_to_string(tmp.path().join("parcels.csv"))
        .unwrap()
        .replace(',', ";")
        .replace('.', ",");
    std::fs::write(tmp.path().join("euro.csv"), euro).unwrap();
    stdout(candor(tmp.path()).args([
        "data",
        "add",
        "euro.csv",
        "--target",
        "late",
        "--positive",
        "yes",
        "--delimiter",
        ";",
        "--decimal",
        ",",
        "--to",
        "m.toml",
    ]));
    let text = std::fs::read_to_string(tmp.path().join("m.toml")).unwrap();
    assert!(
        text.ends_with("delimiter = \";\"\ndecimal = \",\"\n"),
        "{text}"
    );
    let check = stdout(candor(tmp.path()).args(["check", "m.toml"]));
    assert!(
        check.contains("euro: 400 rows, 3 feature columns"),
        "{check}"
    );
}

#[test]
fn add_refuses_data_the_manifest_cannot_run() {
    let tmp = tempfile::tempdir().unwrap();
    let mut csv = String::from("x,y\n");
    for i in 0..40 {
        csv.push_str(&format!("{i},{}\n", if i < 3 { 1 } else { 0 }));
    }
    std::fs::write(tmp.path().join("rare.csv"), csv).unwrap();
    let manifest = "name = \"ours\"\n[[family]]\nname = \"lr\"\nkind = \"logistic\"\n";
    std::fs::write(tmp.path().join("m.toml"), manifest).unwrap();
    let out = candor(tmp.path())
        .args(["data", "add", "rare.csv", "--target", "y", "--to", "m.toml"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success() && err.contains("too few"), "{err}");
    assert_eq!(
        std::fs::read_to_string(tmp.path().join("m.toml")).unwrap(),
        manifest
    );
}

#[test]
fn list_shows_every_bundled_dataset_with_its_licence() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = stdout(candor(root).args(["list", "datasets"]));
    let catalog: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(root.join("datasets/catalog.json")).unwrap())
            .unwrap();
    for e in catalog.as_array().unwrap() {
        let id = e["id"].as_str().unwrap();
        let line = out
            .lines()
            .find(|l| l.starts_with(&format!("{id} ")))
            .unwrap_or_else(|| panic!("{id} missing"));
        assert!(line.contains(&e["rows"].to_string()), "{line}");
    }
    assert!(out.contains("CC BY 4.0") && out.contains("PROVENANCE.md"));
}

/// A churn-like table as teams have it: a customer identifier, a
/// continuous measurement with a new value in every row, a plan and the
/// outcome.
fn churn(dir: &Path) {
    let mut csv = String::from("customer_id,spend,plan,churned\n");
    for i in 0..400 {
        let spend = 20.0 + (i as f64 * 0.7311).sin() * 15.0 + i as f64 * 0.001;
        let plan = ["basic", "plus", "pro"][i % 3];
        let churned = if (i * 7) % 10 < 3 { "yes" } else { "no" };
        csv.push_str(&format!("cust{i:05},{spend:.4},{plan},{churned}\n"));
    }
    std::fs::write(dir.join("churn.csv"), csv).unwrap();
}

/// `candor data <sub>` on the churn file, plus `extra` arguments.
fn on_churn<'a>(sub: &'a str, extra: &[&'a str]) -> Vec<&'a str> {
    let mut args = vec!["data", sub, "churn.csv", "-t", "churned", "-p", "yes"];
    args.extend_from_slice(extra);
    args
}

#[test]
fn a_continuous_column_is_not_an_identifier_but_a_text_one_is() {
    let tmp = tempfile::tempdir().unwrap();
    churn(tmp.path());
    let out = stdout(candor(tmp.path()).args(on_churn("inspect", &[])));
    assert!(
        out.contains("column `customer_id` has a different value in every row"),
        "{out}"
    );
    assert!(
        !out.contains("column `spend` has a different value"),
        "{out}"
    );
    // --exclude drops it before inspecting.
    let out = stdout(candor(tmp.path()).args(on_churn("inspect", &["--exclude", "customer_id"])));
    assert!(!out.contains("customer_id"), "{out}");
}

#[test]
fn add_creates_a_manifest_beside_or_above_the_data_and_excludes_columns() {
    let tmp = tempfile::tempdir().unwrap();
    churn(tmp.path());
    // No manifest yet, in a folder below the data: it is created, and the
    // path steps up to the data.
    let out = stdout(candor(tmp.path()).args(on_churn("add", &["--to", "experiments/my.toml"])));
    assert!(out.contains("added dataset `churn`"), "{out}");
    let text = std::fs::read_to_string(tmp.path().join("experiments/my.toml")).unwrap();
    assert!(text.contains("name = \"my\""), "{text}");
    assert!(text.contains("path = \"../churn.csv\""), "{text}");
    // It runs as written; the identifier gets a note naming the fix.
    let o = candor(tmp.path())
        .args(["check", "experiments/my.toml"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(o.status.success(), "{err}");
    assert!(
        err.contains("column `customer_id` has 400 distinct values in 400 rows"),
        "{err}"
    );
    assert!(err.contains("exclude = [\"customer_id\"]"), "{err}");
    // A second entry that leaves the identifier out.
    stdout(candor(tmp.path()).args(on_churn(
        "add",
        &[
            "--to",
            "experiments/my.toml",
            "--name",
            "churn_clean",
            "--exclude",
            "customer_id",
        ],
    )));
    let text = std::fs::read_to_string(tmp.path().join("experiments/my.toml")).unwrap();
    assert!(text.contains("exclude = [\"customer_id\"]"), "{text}");
    // An excluded name that is not a column is an error naming it.
    std::fs::write(
        tmp.path().join("bad.toml"),
        "name = \"b\"\n[[dataset]]\nname = \"c\"\npath = \"churn.csv\"\ntarget = \"churned\"\npositive = \"yes\"\nexclude = [\"cust_id\"]\n[[family]]\nname = \"logistic\"\n",
    )
    .unwrap();
    let o = candor(tmp.path())
        .args(["check", "bad.toml"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(
        err.contains("bad.toml:3:8: dataset `c`: `exclude` names `cust_id`"),
        "{err}"
    );
}

#[test]
fn a_group_column_is_checked_and_leaves_the_features() {
    let tmp = tempfile::tempdir().unwrap();
    churn(tmp.path());
    let manifest = |group: &str| {
        format!("name = \"g\"\n[[dataset]]\nname = \"c\"\npath = \"churn.csv\"\ntarget = \"churned\"\npositive = \"yes\"\ngroup = \"{group}\"\n[[family]]\nname = \"logistic\"\n")
    };
    std::fs::write(tmp.path().join("g.toml"), manifest("customer_id")).unwrap();
    let out = stdout(candor(tmp.path()).args(["check", "g.toml"]));
    // The group column is not a feature: spend and plan remain.
    assert!(out.contains("c: 400 rows, 2 feature columns"), "{out}");
    std::fs::write(tmp.path().join("g.toml"), manifest("customer")).unwrap();
    let o = candor(tmp.path())
        .args(["check", "g.toml"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success());
    assert!(
        err.contains("`group` names `customer`, which is not a feature column"),
        "{err}"
    );
    // Three plans are three groups, fewer than five outer folds.
    std::fs::write(tmp.path().join("g.toml"), manifest("plan")).unwrap();
    let o = candor(tmp.path())
        .args(["check", "g.toml"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("has 3 groups, fewer than the 5 outer folds"),
        "{err}"
    );
}

#[test]
fn a_time_column_runs_an_expanding_window_and_the_report_says_so() {
    let tmp = tempfile::tempdir().unwrap();
    let mut csv = String::from("signup,spend,churned\n");
    for i in 0..300 {
        // ISO dates sort as text; the file is not in time order.
        let d = (i * 97) % 300;
        let date = format!("2026-{:02}-{:02}", 1 + d / 28, 1 + d % 28);
        let churned = if (i * 7) % 10 < 3 { "yes" } else { "no" };
        csv.push_str(&format!("{date},{},{churned}\n", (i * 13) % 50));
    }
    std::fs::write(tmp.path().join("t.csv"), csv).unwrap();
    let manifest = |extra: &str| {
        format!("name = \"t\"\n{extra}[[dataset]]\nname = \"t\"\npath = \"t.csv\"\ntarget = \"churned\"\npositive = \"yes\"\ntime = \"signup\"\n[[family]]\nname = \"logistic\"\n")
    };
    std::fs::write(tmp.path().join("t.toml"), manifest("")).unwrap();
    stdout(candor(tmp.path()).args(["run", "t.toml", "-q"]));
    let notes = std::fs::read_to_string(tmp.path().join("results/t/report/metrics.md")).unwrap();
    assert!(notes.contains("`t` is time-ordered by `signup`"), "{notes}");
    let run: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(tmp.path().join("results/t/run.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(run["settings"]["datasets"][0]["time"], "signup");
    // One split only: repeats are refused, and so is grouping as well.
    std::fs::write(
        tmp.path().join("t.toml"),
        manifest("[evaluation]\nrepeats = 2\n"),
    )
    .unwrap();
    let o = candor(tmp.path())
        .args(["check", "t.toml"])
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&o.stderr).contains("set `repeats = 1`"));
    std::fs::write(
        tmp.path().join("t.toml"),
        manifest("").replace("time = ", "group = \"spend\"\ntime = "),
    )
    .unwrap();
    let o = candor(tmp.path())
        .args(["check", "t.toml"])
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&o.stderr).contains("names both `group` and `time`"));
    std::fs::write(
        tmp.path().join("t.toml"),
        manifest("").replace("time = \"signup\"", "time = \"joined\""),
    )
    .unwrap();
    let o = candor(tmp.path())
        .args(["check", "t.toml"])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("`time` names `joined`, which is not a feature column"),
        "{err}"
    );
}
