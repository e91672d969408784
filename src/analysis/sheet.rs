//! The coding sheet, read once: bytes (from the file or already in memory), checksum,
//! rows, subset, and the studies on the analysis scale.

use super::settings::SheetSettings;
use crate::benchmark::{BenchmarkOptions, Prepared, prepare_from};
use crate::error::Result;
use crate::sheet::{coding_sheet_from_bytes, read_sheet_bytes};
use sha2::{Digest, Sha256};

/// The SHA-256 of some bytes, in hex.
pub(crate) fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// Read, check and prepare the sheet; also its checksum.
pub(crate) fn read_and_prepare(
    s: &SheetSettings,
    options: &BenchmarkOptions,
) -> Result<(Prepared, String)> {
    let bytes = match &s.bytes {
        Some(b) => b.as_ref().clone(),
        None => read_sheet_bytes(&s.path)?,
    };
    let sha = sha256_hex(&bytes);
    let mut sheet = coding_sheet_from_bytes(&s.path, bytes, &s.read)?;
    let mut summary = sheet.summary();
    summary.rows_outside_subset = sheet.keep_subset(&s.subset)?;
    summary.subset = s.subset.clone();
    Ok((prepare_from(sheet, summary, options)?, sha))
}
