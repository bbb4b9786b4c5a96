//! Mutation fuzzing of the CSV loader and the manifest parser on the
//! stable toolchain: inputs from the bad-input corpus are mutated (bytes
//! flipped, inserted, deleted, lines duplicated, CSV and TOML syntax
//! spliced in) and each must give a value or an error, never a panic.
//! A short run is part of the suite; `cargo test --release --test
//! mutation_fuzz -- --ignored` runs 200,000 inputs (a few minutes), and
//! CANDOR_FUZZ_ITERS sets another count.

use candor::common::rng::SplitMix64;
use candor::data::csv::parse_csv;
use candor::experiment::manifest::{parse, ManifestSource};
use std::path::{Path, PathBuf};

const SPLICES: &[&[u8]] = &[
    b",",
    b"\"",
    b"\n",
    b"\r\n",
    b"\xff",
    b"\xef\xbb\xbf",
    b"NaN",
    b"inf",
    b"-1e999",
    b"",
    b"[",
    b"]]",
    b"=",
    b"[[dataset]]\n",
    b"[[family]]\n",
    b"{",
    b"0x",
    b"\t",
    b"#",
    b"'''",
];

fn seeds(file: &str) -> Vec<Vec<u8>> {
    let corpus = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/corpus");
    let mut dirs: Vec<PathBuf> = std::fs::read_dir(corpus)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    dirs.sort();
    dirs.iter()
        .filter_map(|d| std::fs::read(d.join(file)).ok())
        // The 10,000-row file is slow to mutate and adds nothing new.
        .filter(|b| b.len() < 20_000)
        .collect()
}

fn mutate(rng: &mut SplitMix64, seed: &[u8]) -> Vec<u8> {
    let mut v = seed.to_vec();
    for _ in 0..1 + rng.below(4) {
        let at = if v.is_empty() {
            0
        } else {
            rng.below(v.len() + 1)
        };
        match rng.below(5) {
            0 if at < v.len() => v[at] ^= 1 << rng.below(8),
            1 => {
                let s = SPLICES[rng.below(SPLICES.len())];
                v.splice(at..at, s.iter().copied());
            }
            2 if at < v.len() => {
                let end = (at + 1 + rng.below(16)).min(v.len());
                v.drain(at..end);
            }
            3 => {
                let lines: Vec<&[u8]> = seed.split(|&b| b == b'\n').collect();
                let line = lines[rng.below(lines.len())].to_vec();
                v.splice(at..at, line.into_iter().chain([b'\n']));
            }
            _ => v.insert(at.min(v.len()), rng.below(256) as u8),
        }
    }
    v
}

fn fuzz(iterations: usize) {
    let csvs = seeds("data.csv");
    let manifests = seeds("manifest.toml");
    let mut rng = SplitMix64::new(20261202);
    for i in 0..iterations {
        let (c, m) = (rng.below(csvs.len()), rng.below(manifests.len()));
        let csv = mutate(&mut rng, &csvs[c]);
        let toml = mutate(&mut rng, &manifests[m]);
        let result = std::panic::catch_unwind(|| {
            let _ = parse_csv(&csv, "data.csv", "y", Some("yes"));
            let _ = parse_csv(&csv, "data.csv", "a", None);
            let _ = parse(ManifestSource {
                path: PathBuf::from("m.toml"),
                text: String::from_utf8_lossy(&toml).into_owned(),
                sha256: String::new(),
            });
        });
        assert!(
            result.is_ok(),
            "input {i} panicked:\nCSV: {:?}\nTOML: {:?}",
            String::from_utf8_lossy(&csv),
            String::from_utf8_lossy(&toml)
        );
    }
}

#[test]
fn mutated_inputs_never_panic() {
    fuzz(2_000);
}

#[test]
#[ignore = "long: run with --ignored (a few minutes in release)"]
fn mutated_inputs_never_panic_long() {
    let n = std::env::var("CANDOR_FUZZ_ITERS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(200_000);
    fuzz(n);
}
