//! Held-out AUC of each family against its scikit-learn counterpart.
//!
//! Reference values: scripts/sklearn_reference.py, our port of candor's
//! protocol to scikit-learn, run on this machine on 2026-12-03 with Python
//! 3.11.7, scikit-learn 1.9.1, numpy 2.4.6 and scipy 1.17.1:
//! `sklearn_reference.py datasets/breast_cancer_wdbc.csv
//! datasets/spambase.csv --outer-folds 5 --inner-folds 5 --seed 0`, the
//! mean and sample standard deviation over the 5 outer folds of the raw
//! forecasts' ROC AUC. Fold splits differ between the tools, so the check
//! is "within noise": the two means may differ by at most three standard
//! errors of their difference, sqrt(sd_a^2 + sd_b^2) / sqrt(5).

use candor::experiment::manifest::{self, ManifestSource};
use candor::experiment::runner::{run, RunOptions};
use std::path::Path;

/// (dataset, our family, scikit-learn model, its mean AUC, its sd).
const SKLEARN: &[(&str, &str, &str, f64, f64)] = &[
    (
        "breast_cancer_wdbc",
        "logistic",
        "LogisticRegression",
        0.9955,
        0.0063,
    ),
    (
        "breast_cancer_wdbc",
        "naive_bayes",
        "GaussianNB",
        0.9875,
        0.0069,
    ),
    (
        "breast_cancer_wdbc",
        "decision_tree",
        "DecisionTreeClassifier",
        0.9434,
        0.0245,
    ),
    (
        "breast_cancer_wdbc",
        "random_forest",
        "RandomForestClassifier",
        0.9923,
        0.0078,
    ),
    (
        "breast_cancer_wdbc",
        "boosted_stumps",
        "AdaBoostClassifier",
        0.9959,
        0.0046,
    ),
    (
        "breast_cancer_wdbc",
        "knn",
        "KNeighborsClassifier",
        0.9909,
        0.0094,
    ),
    (
        "breast_cancer_wdbc",
        "linear_svm",
        "LinearSVC",
        0.9929,
        0.0066,
    ),
    (
        "breast_cancer_wdbc",
        "gradient_boosting",
        "HistGradientBoostingClassifier",
        0.9941,
        0.0063,
    ),
    ("breast_cancer_wdbc", "mlp", "MLPClassifier", 0.9953, 0.0062),
    ("spambase", "logistic", "LogisticRegression", 0.9716, 0.0043),
    ("spambase", "naive_bayes", "GaussianNB", 0.9447, 0.0055),
    (
        "spambase",
        "decision_tree",
        "DecisionTreeClassifier",
        0.9423,
        0.0045,
    ),
    (
        "spambase",
        "random_forest",
        "RandomForestClassifier",
        0.9873,
        0.0067,
    ),
    (
        "spambase",
        "boosted_stumps",
        "AdaBoostClassifier",
        0.9812,
        0.0055,
    ),
    ("spambase", "knn", "KNeighborsClassifier", 0.9592, 0.0070),
    ("spambase", "linear_svm", "LinearSVC", 0.9713, 0.0034),
    (
        "spambase",
        "gradient_boosting",
        "HistGradientBoostingClassifier",
        0.9874,
        0.0052,
    ),
    ("spambase", "mlp", "MLPClassifier", 0.9827, 0.0044),
];

#[test]
fn auc_is_within_noise_of_scikit_learn() {
    let text = r#"
name = "quality"
seed = 0
calibrators = ["none"]
metrics = ["auc"]
[evaluation]
outer_folds = 5
inner_folds = 5
bootstrap = 0
[[dataset]]
name = "breast_cancer_wdbc"
bundled = "breast_cancer_wdbc"
[[dataset]]
name = "spambase"
bundled = "spambase"
[[family]]
name = "logistic"
[[family]]
name = "naive_bayes"
[[family]]
name = "decision_tree"
[[family]]
name = "random_forest"
[[family]]
name = "boosted_stumps"
[[family]]
name = "linear_svm"
[[family]]
name = "knn"
[[family]]
name = "gradient_boosting"
[[family]]
name = "mlp"
"#;
    let exp = manifest::parse(ManifestSource {
        path: "quality.toml".into(),
        text: text.into(),
        sha256: String::new(),
    })
    .unwrap();
    let tmp = tempfile::tempdir().unwrap();
    let report = run(
        &exp,
        &RunOptions {
            out_dir: tmp.path().join("out"),
            threads: 0,
            datasets_dir: Some(Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets")),
            progress: false,
            shard: None,
        },
    )
    .unwrap();
    for &(dataset, family, model, mean, sd) in SKLEARN {
        let row = report
            .summary
            .rows
            .iter()
            .find(|r| r.dataset == dataset && r.family == family && r.method == "none")
            .unwrap();
        let ours = row.stats[0];
        let se = (ours.sd.powi(2) + sd * sd).sqrt() / 5f64.sqrt();
        assert!(
            (ours.mean - mean).abs() <= 3.0 * se,
            "{dataset}/{family}: AUC {:.4} vs scikit-learn {model} {mean:.4} (3 SE = {:.4})",
            ours.mean,
            3.0 * se
        );
    }
}
