//! Any bytes given to the CSV loader produce a table or an error, never a
//! panic. Run: RUSTC_BOOTSTRAP=1 cargo fuzz run csv_loader -s none
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = candor::data::csv::parse_csv(data, "fuzz.csv", "y", Some("yes"));
    let _ = candor::data::csv::parse_csv(data, "fuzz.csv", "a", None);
});
