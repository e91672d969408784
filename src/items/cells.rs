//! What both item readers share: how a response cell is read, when it is missing, and
//! the tallies one pass gathers.

use super::moments::Listwise;
use crate::sheet::{is_missing, parse_number};

/// Parse a response: a fast path for small whole numbers, else the general parser.
#[inline]
pub(super) fn parse_response(cell: &[u8], decimal_comma: bool) -> std::result::Result<f64, String> {
    if !cell.is_empty() && cell.len() <= 3 && cell.iter().all(u8::is_ascii_digit) {
        let mut v = 0u32;
        for &c in cell {
            v = v * 10 + u32::from(c - b'0');
        }
        return Ok(f64::from(v));
    }
    let text =
        std::str::from_utf8(cell).map_err(|_| "the cell is not valid UTF-8 text".to_string())?;
    parse_number(text, decimal_comma)
}

/// An empty cell or a missing-value mark (NA, ., …).
pub(super) fn missing_cell(cell: &[u8]) -> bool {
    cell.is_empty() || std::str::from_utf8(cell).map(is_missing).unwrap_or(false)
}

/// A response that is one of the declared missing-value codes (such as −99).
#[inline]
pub(super) fn is_missing_code(x: f64, codes: &[f64]) -> bool {
    codes.contains(&x)
}

/// A 64-bit hash of a cell's text (FNV-1a), for telling whether an identifier column holds
/// a different value in every row without keeping the values.
#[inline]
pub(super) fn cell_hash(cell: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for &b in cell {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0100_0000_01b3);
    }
    h
}

/// What one pass gathered, by either reader.
#[derive(Debug, Clone)]
pub(super) struct Tallies {
    pub listwise: Listwise,
    pub seen: Vec<u64>,
    pub lowest: Vec<[f64; 2]>,
    pub highest: Vec<[f64; 2]>,
    /// Whether each item counts 1, 2, 3, … down the rows, with its first and last value.
    pub counting: Vec<bool>,
    pub first: Vec<Option<f64>>,
    pub last: Vec<Option<f64>>,
    pub rows_read: u64,
    pub missing_cells: u64,
    pub rows: Option<Vec<f64>>,
    /// Hashes of the cells of the identifier columns left out of the items, per column.
    pub ids: Vec<Vec<u64>>,
}

impl Tallies {
    /// Empty tallies for k items.
    pub(super) fn new(k: usize, keep_rows: bool, id_columns: usize) -> Self {
        Tallies {
            listwise: Listwise::new(k),
            seen: vec![0; k],
            lowest: vec![[f64::INFINITY; 2]; k],
            highest: vec![[f64::NEG_INFINITY; 2]; k],
            counting: vec![true; k],
            first: vec![None; k],
            last: vec![None; k],
            rows_read: 0,
            missing_cells: 0,
            rows: keep_rows.then(Vec::new),
            ids: vec![Vec::new(); id_columns],
        }
    }

    /// Whether item `i` counts 0 or 1, then up by one each row, over at least five rows:
    /// a respondent number rather than answers.
    pub(super) fn counts_like_ids(&self, i: usize) -> bool {
        self.counting[i]
            && self.seen[i] >= 5
            && matches!(self.first[i], Some(f) if f == 0.0 || f == 1.0)
    }

    /// Note an answer of item `slot` (rows in file order).
    #[inline]
    pub(super) fn answer(&mut self, slot: usize, x: f64) {
        self.seen[slot] += 1;
        let lo = &mut self.lowest[slot];
        if x < lo[0] {
            lo[1] = lo[0];
            lo[0] = x;
        } else if x < lo[1] {
            lo[1] = x;
        }
        let hi = &mut self.highest[slot];
        if x > hi[0] {
            hi[1] = hi[0];
            hi[0] = x;
        } else if x > hi[1] {
            hi[1] = x;
        }
        match self.last[slot] {
            Some(p) if x != p + 1.0 => self.counting[slot] = false,
            None => self.first[slot] = Some(x),
            _ => {}
        }
        self.last[slot] = Some(x);
    }

    /// Append the tallies of the rows that follow these in the file.
    pub(super) fn append(&mut self, next: Tallies) {
        self.listwise.merge(&next.listwise);
        for i in 0..self.seen.len() {
            self.seen[i] += next.seen[i];
            let mut lows = [self.lowest[i], next.lowest[i]].concat();
            lows.sort_by(|a, b| a.total_cmp(b));
            self.lowest[i] = [lows[0], lows[1]];
            let mut highs = [self.highest[i], next.highest[i]].concat();
            highs.sort_by(|a, b| b.total_cmp(a));
            self.highest[i] = [highs[0], highs[1]];
            let joined = match (self.last[i], next.first[i]) {
                (Some(l), Some(f)) => f == l + 1.0,
                _ => true,
            };
            self.counting[i] = self.counting[i] && next.counting[i] && joined;
            if self.first[i].is_none() {
                self.first[i] = next.first[i];
            }
            if next.last[i].is_some() {
                self.last[i] = next.last[i];
            }
        }
        self.rows_read += next.rows_read;
        self.missing_cells += next.missing_cells;
        if let (Some(r), Some(n)) = (self.rows.as_mut(), next.rows) {
            r.extend(n);
        }
        for (a, b) in self.ids.iter_mut().zip(next.ids) {
            a.extend(b);
        }
    }
}
