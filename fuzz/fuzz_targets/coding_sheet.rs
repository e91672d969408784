//! Any bytes as a coding sheet: reading, checking, transforming and pooling must end in
//! a result or an error, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use relyard::benchmark::{BenchmarkOptions, build};
use relyard::sheet::parse_coding_sheet;

fuzz_target!(|data: &[u8]| {
    let Ok(sheet) = parse_coding_sheet("fuzz.csv", data, &Default::default()) else {
        return;
    };
    let options = BenchmarkOptions {
        skip_invalid: true,
        ..BenchmarkOptions::default()
    };
    let _ = build(sheet, &options);
});
