//! Model families against reference implementations.

use candor::learner;
use candor::params::{ParamValue, Params};
use ndarray::Array2;
use serde_json::Value;

#[test]
fn binary_logistic_matches_scikit_learn() {
    // tests/fixtures/logistic.json: scikit-learn's LogisticRegression with
    // C = 1 / l2 solved to tol 1e-12 (generator and versions recorded in the
    // file). Our Newton solver must give the same log-odds for every row.
    let path = format!(
        "{}/tests/fixtures/logistic.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let v: Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let rows: Vec<Vec<f64>> = serde_json::from_value(v["x"].clone()).unwrap();
    let y: Vec<usize> = serde_json::from_value(v["y"].clone()).unwrap();
    let x = Array2::from_shape_fn((rows.len(), rows[0].len()), |(i, j)| rows[i][j]);
    let family = learner::find("logistic").unwrap();
    for case in v["cases"].as_array().unwrap() {
        let l2 = case["l2"].as_f64().unwrap();
        let mut params = Params::defaults(family.params);
        params.0.insert("l2".into(), ParamValue::Float(l2));
        let model = (family.build)(&params).fit(x.view(), &y, 2, 0).unwrap();
        let scores = model.predict(x.view());
        let coef: Vec<f64> = serde_json::from_value(case["coef"].clone()).unwrap();
        let intercept = case["intercept"].as_f64().unwrap();
        for (i, row) in rows.iter().enumerate() {
            let want: f64 = intercept + row.iter().zip(&coef).map(|(a, b)| a * b).sum::<f64>();
            let got = scores.native.as_ref().unwrap()[[i, 0]];
            assert!(
                (got - want).abs() < 1e-6 * (1.0 + want.abs()),
                "l2 {l2}, row {i}: {got} vs {want}"
            );
        }
    }
}
