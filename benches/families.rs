//! Fit and predict time of every family on bundled datasets of about 1k, 5k
//! and 20k rows (german_credit, spambase, magic_gamma): fit on 80% of
//! the rows, predict the other 20%, best of 3. Run with
//! `cargo bench --bench families [FAMILY...]`; the README quotes the figures, and
//! scripts/bench-sklearn.sh compares whole grids with scikit-learn.

use candor::common::params::Params;
use candor::data::catalog::Catalog;
use candor::data::preprocess::Preprocessor;
use candor::data::source::{DataSource, DatasetSpec};
use candor::learner::own_families;
use std::path::Path;
use std::time::Instant;

fn main() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets");
    let catalog = Catalog::open(&dir).expect("bundled catalog");
    println!(
        "{:16} {:>28} {:>28} {:>28}",
        "family", "german_credit (1000)", "spambase (4601)", "magic_gamma (19020)"
    );
    let tables: Vec<_> = ["german_credit", "spambase", "magic_gamma"]
        .iter()
        .map(|id| {
            let spec = DatasetSpec {
                name: id.to_string(),
                source: DataSource::Bundled(id.to_string()),
                target: None,
                positive: None,
                format: Default::default(),
                origin: String::new(),
                segment_of: None,
                exclude: Vec::new(),
                group: None,
                time: None,
                levels: Default::default(),
            };
            candor::data::source::load(&spec, Some(&catalog), &dir).expect("bundled dataset")
        })
        .collect();
    // Cargo passes its own `--bench` flag; other words pick families.
    let wanted: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    for family in own_families().filter(|f| wanted.is_empty() || wanted.iter().any(|w| w == f.kind))
    {
        let learner = family.learner(&Params::defaults(family.params)).unwrap();
        let mut line = format!("{:16}", family.kind);
        for table in &tables {
            let n = table.rows();
            let train: Vec<usize> = (0..n).filter(|i| i % 5 != 0).collect();
            let test: Vec<usize> = (0..n).filter(|i| i % 5 == 0).collect();
            let prep = Preprocessor::fit(table, &train, learner.wants_standardised());
            let x = prep.transform(table, &train);
            let t = prep.transform(table, &test);
            let y: Vec<usize> = train.iter().map(|&r| table.labels[r]).collect();
            let (mut fit, mut predict) = (f64::INFINITY, f64::INFINITY);
            for _ in 0..3 {
                let start = Instant::now();
                let model = learner
                    .fit(x.view(), &y, table.n_classes(), 7)
                    .expect("fit");
                fit = fit.min(start.elapsed().as_secs_f64());
                let start = Instant::now();
                std::hint::black_box(model.predict(t.view()));
                predict = predict.min(start.elapsed().as_secs_f64());
            }
            line.push_str(&format!("   fit {fit:7.3} s, predict {predict:6.3} s"));
        }
        println!("{line}");
    }
}
