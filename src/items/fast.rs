//! The fast path for clean item files: blocks of lines parsed in parallel, complete rows
//! accumulated by matrix products, partial results merged in file order.
//!
//! It takes files whose rows are plain delimited numbers (no quoted cells, lines ended
//! by `\n` or `\r\n`) under listwise deletion. At the first thing it does not handle —
//! a quote, a cell that is not a number or a missing mark, a row of the wrong width, a
//! value off the response scale — it stops and the careful reader in `read.rs` reads the
//! file instead, so that every message (with its row and column) comes from one place.
//! Memory stays bounded: one block of the file at a time.

use super::cells::{Tallies, cell_hash, is_missing_code, missing_cell, parse_response};
use rayon::prelude::*;
use std::io::Read;

/// Bytes read per block.
const BLOCK_BYTES: usize = 8 << 20;
/// Bytes per part of a block: parts are parsed in parallel and merged in file order.
/// Their size is fixed (not set by the number of threads), so the sums, and every
/// result, are the same on any machine.
pub(super) const PART_BYTES: usize = 1 << 20;
/// Complete rows gathered before one matrix-product update.
const BATCH_ROWS: usize = 512;

/// What the fast path needs to know about the columns.
pub(super) struct Layout<'a> {
    /// Number of columns in the header.
    pub width: usize,
    /// For each column of the file, its item slot (None: not an item).
    pub slot_of: Vec<Option<usize>>,
    /// Columns without a name (must stay empty).
    pub unnamed: &'a [usize],
    /// Number of items.
    pub k: usize,
    /// Delimiter.
    pub delimiter: u8,
    /// Decimal comma allowed.
    pub decimal_comma: bool,
    /// Response scale (range check and reverse keying).
    pub scale: Option<(f64, f64)>,
    /// Reverse-keyed items.
    pub reversed: &'a [bool],
    /// Responses that mean "missing" (such as −99).
    pub missing_codes: &'a [f64],
    /// Columns taken as identifiers (left out of the items; their cells are hashed).
    pub id_columns: &'a [usize],
    /// Keep the complete rows.
    pub keep_rows: bool,
    /// Bytes per part ([`PART_BYTES`]; smaller in tests, to cross part boundaries).
    pub part_bytes: usize,
}

/// Why the fast path stopped: the careful reader takes over.
pub(super) struct Declined;

/// Read the data rows of `reader` (positioned at the first byte after the header row).
/// `Ok(Err(Declined))` when the file needs the careful reader.
pub(super) fn read_rows(
    mut reader: impl Read,
    layout: &Layout<'_>,
) -> std::io::Result<Result<Tallies, Declined>> {
    let mut total = Tallies::new(layout.k, layout.keep_rows, layout.id_columns.len());
    let mut buf: Vec<u8> = Vec::new();
    let mut at_end = false;
    while !at_end {
        // Fill the block (the buffer grows only as far as the file goes), then keep back
        // the incomplete last line for the next one.
        let want = BLOCK_BYTES.saturating_sub(buf.len()).max(64 << 10);
        let got = (&mut reader).take(want as u64).read_to_end(&mut buf)?;
        at_end = got < want;
        let cut = if at_end {
            buf.len()
        } else {
            match buf.iter().rposition(|&b| b == b'\n') {
                Some(i) => i + 1,
                // One line longer than a block: not a plain item file.
                None => return Ok(Err(Declined)),
            }
        };
        let block = &buf[..cut];
        if block.contains(&b'"') {
            return Ok(Err(Declined));
        }
        let parts = split_lines(block, block.len().div_ceil(layout.part_bytes.max(1)).max(1));
        let results: Vec<Result<Tallies, Declined>> = parts
            .par_iter()
            .map(|part| read_part(part, layout))
            .collect();
        for r in results {
            match r {
                Ok(t) => total.append(t),
                Err(d) => return Ok(Err(d)),
            }
        }
        buf.drain(..cut);
    }
    Ok(Ok(total))
}

/// Split `block` into about `parts` pieces at line ends.
fn split_lines(block: &[u8], parts: usize) -> Vec<&[u8]> {
    let mut out = Vec::with_capacity(parts);
    let mut rest = block;
    for i in (1..parts).rev() {
        let target = rest.len() / (i + 1);
        match rest[target..].iter().position(|&b| b == b'\n') {
            Some(j) => {
                let (a, b) = rest.split_at(target + j + 1);
                out.push(a);
                rest = b;
            }
            None => break,
        }
    }
    out.push(rest);
    out
}

/// Parse one piece of whole lines.
fn read_part(part: &[u8], layout: &Layout<'_>) -> Result<Tallies, Declined> {
    let k = layout.k;
    let mut t = Tallies::new(k, layout.keep_rows, layout.id_columns.len());
    let mut batch: Vec<f64> = Vec::with_capacity(BATCH_ROWS * k);
    let mut scratch = Vec::new();
    let mut values = vec![0.0; k];
    let flush = |t: &mut Tallies, batch: &mut Vec<f64>, scratch: &mut Vec<f64>| {
        if let Some(r) = t.rows.as_mut() {
            r.extend_from_slice(batch);
        }
        t.listwise.add_block(batch, scratch);
        batch.clear();
    };
    for line in part.split(|&b| b == b'\n') {
        let line = line.strip_suffix(b"\r").unwrap_or(line);
        if line.contains(&b'\r') {
            // A lone carriage return ends a row for the careful reader.
            return Err(Declined);
        }
        // Blank: nothing but spaces and delimiters (as the careful reader judges it).
        if line
            .iter()
            .all(|&b| b.is_ascii_whitespace() || b == layout.delimiter)
        {
            continue;
        }
        t.rows_read += 1;
        let complete = read_line(line, layout, &mut t, &mut values)?;
        if complete {
            batch.extend_from_slice(&values);
            if batch.len() == BATCH_ROWS * k {
                flush(&mut t, &mut batch, &mut scratch);
            }
        }
    }
    flush(&mut t, &mut batch, &mut scratch);
    Ok(t)
}

/// Parse one row's cells into `values` (item slots), tallying answers, missing cells and
/// identifier hashes; true when every item is answered.
#[inline]
fn read_line(
    line: &[u8],
    layout: &Layout<'_>,
    t: &mut Tallies,
    values: &mut [f64],
) -> Result<bool, Declined> {
    let mut complete = true;
    let mut cells = 0usize;
    for (col, cell) in line.split(|&b| b == layout.delimiter).enumerate() {
        cells += 1;
        let slot = match layout.slot_of.get(col) {
            Some(Some(s)) => *s,
            Some(None) => {
                if layout.unnamed.contains(&col) && !cell.trim_ascii().is_empty() {
                    return Err(Declined);
                }
                if let Some(j) = layout.id_columns.iter().position(|&c| c == col) {
                    t.ids[j].push(cell_hash(cell.trim_ascii()));
                }
                continue;
            }
            // Beyond the header: allowed only when empty.
            None => {
                if cell.is_empty() {
                    continue;
                }
                return Err(Declined);
            }
        };
        let x = match cell {
            [d @ b'0'..=b'9'] => f64::from(d - b'0'),
            _ => {
                let trimmed = cell.trim_ascii();
                if missing_cell(trimmed) {
                    complete = false;
                    t.missing_cells += 1;
                    continue;
                }
                parse_response(trimmed, layout.decimal_comma).map_err(|_| Declined)?
            }
        };
        if is_missing_code(x, layout.missing_codes) {
            complete = false;
            t.missing_cells += 1;
            continue;
        }
        let x = match layout.scale {
            Some((lo, hi)) if x < lo || x > hi => return Err(Declined),
            Some((lo, hi)) if layout.reversed[slot] => lo + hi - x,
            _ => x,
        };
        values[slot] = x;
        t.answer(slot, x);
    }
    if cells < layout.width {
        return Err(Declined);
    }
    Ok(complete)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splits_at_line_ends() {
        let block = b"a\nbb\nccc\ndddd\n";
        for parts in 1..6 {
            let p = split_lines(block, parts);
            assert_eq!(p.concat(), block.to_vec());
            assert!(
                p.iter().all(|x| x.is_empty() || x.ends_with(b"\n")),
                "{p:?}"
            );
        }
    }
}
