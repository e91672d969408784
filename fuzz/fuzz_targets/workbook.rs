//! Any bytes as a workbook (a zip container or an old binary workbook, whatever the
//! bytes start with): reading one worksheet must end in its rows or an error, never a
//! panic, an abort or an allocation sized by a cell's address. The bounds are lowered so
//! that a run stays fast; what passes is checked and pooled as a coding sheet would be.
#![no_main]

use libfuzzer_sys::fuzz_target;
use relyard::benchmark::{BenchmarkOptions, build};
use relyard::sheet::{SheetOptions, WorkbookLimits, WorkbookRows, coding_sheet_from_bytes};

fuzz_target!(|data: &[u8]| {
    let limits = WorkbookLimits {
        unpacked_bytes: 8 << 20,
        cells: 100_000,
    };
    let _ = WorkbookRows::read("fuzz.xlsx", data.to_vec(), None, limits);
    let options = SheetOptions {
        workbook: limits,
        ..SheetOptions::default()
    };
    let Ok(sheet) = coding_sheet_from_bytes(std::path::Path::new("fuzz.xlsx"), data.to_vec(), &options)
    else {
        return;
    };
    let _ = build(
        sheet,
        &BenchmarkOptions {
            skip_invalid: true,
            ..BenchmarkOptions::default()
        },
    );
});
