//! How a run's time and memory grow with the rows: writes an in-house-like
//! CSV of ROWS rows x 50 columns (46 numeric with 2% missing values, three
//! categorical with 4, 12 and 40 levels, a binary target that depends on
//! eight of the columns), then runs 5 outer x 5 inner folds of the named
//! families with all seven calibration methods and every metric through the
//! library, as `candor run` does, on all cores. Prints wall time and the
//! process's peak resident memory (the CSV is written streaming, so the
//! peak is the run's).
//!
//! `cargo bench --bench scale -- ROWS FAMILY...`, e.g.
//! `cargo bench --bench scale -- 1000000 logistic gradient_boosting`.
//! The README's scaling table comes from it.

mod support;

use candor::common::rng::SplitMix64;
use candor::experiment::manifest;
use candor::experiment::runner::{run, RunOptions};
use std::io::{BufWriter, Write};
use std::time::Instant;
use support::peak_rss_mb;

fn write_data(path: &std::path::Path, rows: usize) {
    let mut w = BufWriter::new(std::fs::File::create(path).expect("create"));
    let mut header: Vec<String> = (0..46).map(|j| format!("x{j}")).collect();
    header.extend(["channel", "region", "product", "churned"].map(String::from));
    writeln!(w, "{}", header.join(",")).expect("write");
    let mut rng = SplitMix64::new(20261204);
    let mut line = String::new();
    let mut x = [0.0; 46];
    for _ in 0..rows {
        line.clear();
        for v in x.iter_mut() {
            *v = rng.normal();
        }
        let (channel, region, product) = (rng.below(4), rng.below(12), rng.below(40));
        let z = 0.8 * x[0] - 0.6 * x[1] + 0.5 * x[2] * x[3] + 0.4 * x[4].abs() - 0.3 * x[5]
            + 0.25 * (channel as f64 - 1.5)
            + if region < 3 { 0.5 } else { -0.1 }
            + 0.02 * product as f64
            - 1.0;
        let y = rng.unit() < 1.0 / (1.0 + (-z).exp());
        for v in &x {
            if rng.unit() < 0.02 {
                line.push(',');
            } else {
                line.push_str(&format!("{v:.4},"));
            }
        }
        line.push_str(&format!(
            "c{channel},r{region},p{product},{}\n",
            if y { "yes" } else { "no" }
        ));
        w.write_all(line.as_bytes()).expect("write");
    }
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    let rows: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(100_000);
    let families: Vec<&str> = if args.len() > 1 {
        args[1..].iter().map(String::as_str).collect()
    } else {
        vec!["logistic", "gradient_boosting"]
    };
    let dir = tempfile::tempdir().expect("temporary folder");
    let data = dir.path().join("customers.csv");
    let start = Instant::now();
    write_data(&data, rows);
    println!(
        "wrote {rows} rows x 50 columns ({:.0} MB) in {:.1} s",
        std::fs::metadata(&data).expect("written").len() as f64 / 1e6,
        start.elapsed().as_secs_f64()
    );
    let mut text = String::from(
        "name = \"scale\"\n[[dataset]]\nname = \"customers\"\npath = \"customers.csv\"\ntarget = \"churned\"\npositive = \"yes\"\n",
    );
    for f in &families {
        text.push_str(&format!("[[family]]\nname = \"{f}\"\nkind = \"{f}\"\n"));
    }
    let path = dir.path().join("scale.toml");
    std::fs::write(&path, text).expect("manifest");
    let exp = manifest::load(&path).expect("a valid manifest");
    let before = peak_rss_mb();
    let start = Instant::now();
    let report = run(
        &exp,
        &RunOptions {
            out_dir: dir.path().join("results"),
            threads: 0,
            datasets_dir: None,
            progress: true,
            shard: None,
        },
    )
    .expect("the run");
    println!(
        "{rows} rows, {}: {} cells in {:.1} s on {} threads; peak resident memory {:.0} MB (before the run {:.0} MB); {} failures",
        families.join(" + "),
        report.computed,
        start.elapsed().as_secs_f64(),
        rayon::current_num_threads(),
        peak_rss_mb(),
        before,
        report.failures.len()
    );
}
