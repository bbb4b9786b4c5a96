//! Any text given to the manifest parser produces an experiment or an
//! error, never a panic. Run: RUSTC_BOOTSTRAP=1 cargo fuzz run manifest_parser -s none
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = candor::experiment::manifest::parse(candor::experiment::manifest::ManifestSource {
        path: std::path::PathBuf::from("fuzz.toml"),
        text: String::from_utf8_lossy(data).into_owned(),
        sha256: String::new(),
    });
});
