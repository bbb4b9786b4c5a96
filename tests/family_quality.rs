//! Held-out AUC of each family against its scikit-learn counterpart.
//!
//! Reference values: the scikit-learn reference grid in shared/peer
//! (peer_grid.py, efficient style, `--outer 5 --inner 5 --bins 15 --seed 0
//! --models logreg,nbayes,tree,forest,adaboost,svm,knn,gboost,mlp`) run on this machine on
//! 2026-12-02 with Python 3.11.7, scikit-learn 1.9.1, numpy 2.4.6 and scipy
//! 1.17.1: the mean and standard deviation over the 5 outer folds of the raw
//! forecasts' ROC AUC. Fold splits differ between the tools, so the check is
//! "within noise": the two means may differ by at most three standard errors
//! of their difference, sqrt(sd_a^2 + sd_b^2) / sqrt(5).

use candor::experiment::manifest::{self, ManifestSource};
use candor::experiment::runner::{run, RunOptions};
use std::path::Path;

/// (dataset, our family, peer model, peer mean AUC, peer sd).
const PEER: &[(&str, &str, &str, f64, f64)] = &[
    ("breast_cancer_wdbc", "logistic", "logreg", 0.9955, 0.0056),
    (
        "breast_cancer_wdbc",
        "naive_bayes",
        "nbayes",
        0.9875,
        0.0061,
    ),
    (
        "breast_cancer_wdbc",
        "decision_tree",
        "tree",
        0.9434,
        0.0219,
    ),
    (
        "breast_cancer_wdbc",
        "random_forest",
        "forest",
        0.9923,
        0.0070,
    ),
    (
        "breast_cancer_wdbc",
        "boosted_stumps",
        "adaboost",
        0.9959,
        0.0042,
    ),
    ("spambase", "logistic", "logreg", 0.9716, 0.0039),
    ("spambase", "naive_bayes", "nbayes", 0.9447, 0.0049),
    ("spambase", "decision_tree", "tree", 0.9423, 0.0040),
    ("spambase", "random_forest", "forest", 0.9873, 0.0060),
    ("spambase", "boosted_stumps", "adaboost", 0.9812, 0.0049),
    ("spambase", "linear_svm", "svm", 0.9713, 0.0031),
    ("spambase", "knn", "knn", 0.9592, 0.0063),
    ("spambase", "gradient_boosting", "gboost", 0.9894, 0.0038),
    ("spambase", "mlp", "mlp", 0.9818, 0.0040),
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
        },
    )
    .unwrap();
    for &(dataset, family, peer, mean, sd) in PEER {
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
            "{dataset}/{family}: AUC {:.4} vs scikit-learn {peer} {mean:.4} (3 SE = {:.4})",
            ours.mean,
            3.0 * se
        );
    }
}
