//! Loading a large in-house CSV: 1,000,000 rows x 50 columns (48 numeric,
//! one 12-level categorical, a binary target), written to a temporary file,
//! then read with `candor::data::csv::read_csv`, plain and gzip-compressed.
//! Prints the wall time and the process's peak resident memory against the
//! size of the numeric matrix (8 bytes per cell). Run with
//! `cargo bench --bench load [ROWS]`; the README quotes the figures.

mod support;

use candor::common::rng::SplitMix64;
use candor::data::csv::{read_csv, CsvFormat};
use std::io::{BufWriter, Write};
use std::time::Instant;
use support::peak_rss_mb;

fn main() {
    let rows: usize = std::env::args()
        .skip(1)
        .find(|a| !a.starts_with('-'))
        .and_then(|a| a.parse().ok())
        .unwrap_or(1_000_000);
    let dir = tempfile::tempdir().expect("temporary folder");
    let path = dir.path().join("large.csv");
    let start = Instant::now();
    {
        let mut w = BufWriter::new(std::fs::File::create(&path).expect("create"));
        let mut header: Vec<String> = (0..48).map(|j| format!("x{j}")).collect();
        header.push("segment".into());
        header.push("y".into());
        writeln!(w, "{}", header.join(",")).unwrap();
        let mut rng = SplitMix64::new(1);
        let mut line = String::new();
        for _ in 0..rows {
            line.clear();
            for _ in 0..48 {
                line.push_str(&format!("{:.4},", rng.unit() * 100.0 - 50.0));
            }
            line.push_str(&format!("s{},{}\n", rng.below(12), rng.below(2)));
            w.write_all(line.as_bytes()).unwrap();
        }
    }
    let size = std::fs::metadata(&path).unwrap().len() as f64 / 1e6;
    println!(
        "wrote {rows} rows x 50 columns ({size:.0} MB) in {:.1} s",
        start.elapsed().as_secs_f64()
    );
    let before = peak_rss_mb();
    let start = Instant::now();
    let table = read_csv(&path, "y", Some("1"), &CsvFormat::default()).expect("load");
    let secs = start.elapsed().as_secs_f64();
    let matrix = rows as f64 * 49.0 * 8.0 / 1e6;
    println!(
        "plain CSV: {:.2} s, {} rows, {} feature columns; peak resident memory {:.0} MB (before loading {:.0} MB); numeric matrix {:.0} MB",
        secs,
        table.rows(),
        table.columns.len(),
        peak_rss_mb(),
        before,
        matrix
    );
    drop(table);
    let gz = dir.path().join("large.csv.gz");
    {
        let mut enc = flate2::write::GzEncoder::new(
            BufWriter::new(std::fs::File::create(&gz).unwrap()),
            flate2::Compression::fast(),
        );
        std::io::copy(&mut std::fs::File::open(&path).unwrap(), &mut enc).unwrap();
        enc.finish().unwrap();
    }
    let start = Instant::now();
    let table = read_csv(&gz, "y", Some("1"), &CsvFormat::default()).expect("load gz");
    println!(
        "gzip CSV ({:.0} MB): {:.2} s, {} rows",
        std::fs::metadata(&gz).unwrap().len() as f64 / 1e6,
        start.elapsed().as_secs_f64(),
        table.rows()
    );
}
