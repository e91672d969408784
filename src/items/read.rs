//! Reading raw item data (respondents in rows, items in columns) in one streaming pass.

use super::fast::Tallies;
use super::moments::{Moments, Pairwise};
use crate::error::{CellProblem, Error, Result};
use crate::sheet::{detect_delimiter, is_missing, parse_number};
use std::io::{BufRead, BufReader, Read, Seek, SeekFrom};
use std::path::Path;

/// How missing responses are handled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Missing {
    /// Only respondents who answered every item are used.
    #[default]
    Listwise,
    /// Each covariance uses the respondents who answered both items.
    Pairwise,
}

/// How to read an item file.
#[derive(Debug, Clone, Default)]
pub struct ItemReadOptions {
    /// The delimiter; detected from the header when `None`.
    pub delimiter: Option<u8>,
    /// The item columns to use, by name; every column when `None`.
    pub items: Option<Vec<String>>,
    /// Items to reverse-key (needs `scale`).
    pub reverse: Vec<String>,
    /// Lowest and highest possible response, for reverse-keying and range checks.
    pub scale: Option<(f64, f64)>,
    /// Listwise or pairwise.
    pub missing: Missing,
    /// Keep the complete rows in memory (for the bootstrap).
    pub keep_rows: bool,
}

/// Most problems listed one by one before the rest are counted.
const MAX_LISTED: usize = 50;

/// Item data after one pass.
#[derive(Debug, Clone)]
pub struct ItemData {
    /// The file as named.
    pub file: String,
    /// Item names, in the order used.
    pub names: Vec<String>,
    /// Which items were reverse-keyed.
    pub reversed: Vec<bool>,
    /// Data rows read (blank rows excluded).
    pub rows_read: u64,
    /// Respondents with every item answered.
    pub complete_rows: u64,
    /// Missing cells among the items used.
    pub missing_cells: u64,
    /// How missing responses were handled.
    pub missing: Missing,
    /// Means and covariances.
    pub moments: Moments,
    /// Complete rows, row-major, when kept.
    pub rows: Option<Vec<f64>>,
    /// Things noticed while reading (identifier-like columns, extreme values).
    pub notes: Vec<crate::Warning>,
}

impl ItemData {
    /// Respondents behind the statistics: complete rows (listwise) or the smallest pairwise n.
    pub fn n_used(&self) -> u64 {
        match self.missing {
            Missing::Listwise => self.complete_rows,
            Missing::Pairwise => self.moments.n_min(),
        }
    }
}

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

pub(super) fn missing_cell(cell: &[u8]) -> bool {
    cell.is_empty() || std::str::from_utf8(cell).map(is_missing).unwrap_or(false)
}

/// Read an item file in one pass.
pub fn read_items(path: &Path, options: &ItemReadOptions) -> Result<ItemData> {
    read_items_with(path, options, Some(super::fast::PART_BYTES))
}

/// [`read_items`], with the parallel fast path (in parts of the given size) or without it;
/// tests compare the two.
fn read_items_with(
    path: &Path,
    options: &ItemReadOptions,
    fast_parts: Option<usize>,
) -> Result<ItemData> {
    let file = path.display().to_string();
    let mut handle = std::fs::File::open(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => Error::InvalidOption(format!(
            "{file}: no such file; check the path of the item data"
        )),
        _ => Error::io(format!("reading {file}"), e),
    })?;
    let fail = |row: usize, reason: String| Error::InvalidSheet {
        file: file.clone(),
        problems: vec![CellProblem::row(row, reason)],
    };
    // Peek at the start: BOM, encoding, delimiter.
    let mut head = Vec::with_capacity(64 * 1024);
    (&mut handle)
        .take(64 * 1024)
        .read_to_end(&mut head)
        .map_err(|e| Error::io(format!("reading {file}"), e))?;
    if head.starts_with(b"\xFF\xFE") || head.starts_with(b"\xFE\xFF") {
        return Err(fail(
            1,
            "the file is UTF-16 encoded; save it as UTF-8".into(),
        ));
    }
    let bom = if head.starts_with(b"\xEF\xBB\xBF") {
        3
    } else {
        0
    };
    if head[bom..].iter().all(u8::is_ascii_whitespace) {
        return Err(fail(1, "the file is empty; item data need a header row of item names and one row per respondent".into()));
    }
    let delimiter = options
        .delimiter
        .unwrap_or_else(|| detect_delimiter(&head[bom..]));
    handle
        .seek(SeekFrom::Start(bom as u64))
        .map_err(|e| Error::io(format!("reading {file}"), e))?;
    let buffered: Box<dyn BufRead> = Box::new(BufReader::with_capacity(1 << 20, handle));
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(buffered);
    let decimal_comma = delimiter != b',';

    let mut record = csv::ByteRecord::new();
    let read_err = |e: csv::Error| {
        Error::io(
            format!("reading {file}"),
            std::io::Error::other(e.to_string()),
        )
    };
    // Header.
    if !reader.read_byte_record(&mut record).map_err(read_err)? {
        return Err(fail(1, "the file has no header row".into()));
    }
    let start = record.position().map(|p| p.line()).unwrap_or(1);
    let mut row_number = (reader.position().line().saturating_sub(start) as usize).max(1);
    let header: Vec<String> = record
        .iter()
        .map(|c| String::from_utf8_lossy(c).trim().to_string())
        .collect();
    let find = |name: &str| {
        header.iter().position(|h| h == name).or_else(|| {
            header
                .iter()
                .position(|h| h.eq_ignore_ascii_case(name.trim()))
        })
    };
    // Every named column must be named once.
    for (i, h) in header.iter().enumerate() {
        if !h.is_empty()
            && let Some(j) = header[..i].iter().position(|g| g.eq_ignore_ascii_case(h))
        {
            return Err(fail(
                1,
                format!(
                    "the column name \"{h}\" appears twice (columns {} and {}); every column \
                     needs its own name",
                    j + 1,
                    i + 1
                ),
            ));
        }
    }
    let unnamed: Vec<usize> = (0..header.len())
        .filter(|&i| header[i].is_empty())
        .collect();
    let columns: Vec<usize> = match &options.items {
        Some(names) => {
            let mut idx = Vec::new();
            let mut unknown = Vec::new();
            for n in names {
                match find(n) {
                    Some(i) if idx.contains(&i) => {
                        return Err(Error::InvalidOption(format!("--items names {n} twice")));
                    }
                    Some(i) => idx.push(i),
                    None => unknown.push(n.clone()),
                }
            }
            if !unknown.is_empty() {
                return Err(fail(
                    1,
                    format!(
                        "--items names column(s) the file does not have: {} (its columns are: {})",
                        unknown.join(", "),
                        header.join(", ")
                    ),
                ));
            }
            idx
        }
        // Without --items every named column is an item; unnamed ones must stay empty.
        None => (0..header.len()).filter(|i| !unnamed.contains(i)).collect(),
    };
    if columns.len() < 2 {
        return Err(Error::InvalidOption(format!(
            "{file}: {} item column(s) selected; reliability needs at least 2 items",
            columns.len()
        )));
    }
    let names: Vec<String> = columns.iter().map(|&i| header[i].clone()).collect();
    for (i, n) in names.iter().enumerate() {
        if n.is_empty() {
            return Err(fail(
                1,
                format!("column {} has no name in the header", columns[i] + 1),
            ));
        }
    }
    let mut reversed = vec![false; names.len()];
    for r in &options.reverse {
        let Some(pos) = names.iter().position(|n| n.eq_ignore_ascii_case(r.trim())) else {
            return Err(Error::InvalidOption(format!(
                "--reverse {r}: not among the items used ({})",
                names.join(", ")
            )));
        };
        reversed[pos] = true;
    }
    if !options.reverse.is_empty() && options.scale.is_none() {
        return Err(Error::InvalidOption(
            "--reverse needs --scale-min and --scale-max (a reversed response is min + max − x)"
                .into(),
        ));
    }

    let k = names.len();
    // Per item: answers seen, the two lowest and highest (for missing-value codes), and
    // whether it counts 1, 2, 3, … like an identifier; the listwise sums and rows.
    let mut t = Tallies::new(k, options.keep_rows);
    let mut pairwise = (options.missing == Missing::Pairwise).then(|| Pairwise::new(k));
    let mut problems: Vec<CellProblem> = Vec::new();
    let mut unlisted = 0usize;
    let mut values = vec![0.0; k];
    let mut optional: Vec<Option<f64>> = vec![None; k];
    let width = header.len();
    // Clean files under listwise deletion take the parallel fast path; anything it does
    // not handle is read below, from the row after the header, by the careful reader.
    let mut fast_done = false;
    if let (Some(part_bytes), Missing::Listwise) = (fast_parts, options.missing) {
        let mut slot_of = vec![None; width];
        for (slot, &c) in columns.iter().enumerate() {
            slot_of[c] = Some(slot);
        }
        let layout = super::fast::Layout {
            width,
            slot_of,
            unnamed: &unnamed,
            k,
            delimiter,
            decimal_comma,
            scale: options.scale,
            reversed: &reversed,
            keep_rows: options.keep_rows,
            part_bytes,
        };
        let data_start = bom as u64 + reader.position().byte();
        let mut again =
            std::fs::File::open(path).map_err(|e| Error::io(format!("reading {file}"), e))?;
        again
            .seek(SeekFrom::Start(data_start))
            .map_err(|e| Error::io(format!("reading {file}"), e))?;
        let outcome = super::fast::read_rows(again, &layout)
            .map_err(|e| Error::io(format!("reading {file}"), e))?;
        if let Ok(fast) = outcome {
            t = fast;
            fast_done = true;
        }
    }
    while !fast_done && reader.read_byte_record(&mut record).map_err(read_err)? {
        // Spreadsheet row: blank lines before the record count as rows.
        let start = record.position().map(|p| p.line()).unwrap_or(0);
        let consumed = reader.position().line().saturating_sub(start) as usize;
        let embedded: usize = record
            .iter()
            .map(|f| f.iter().filter(|&&c| c == b'\n').count())
            .sum();
        let blank = consumed.saturating_sub(1 + embedded);
        row_number += blank + 1;
        if record.iter().all(|c| c.iter().all(u8::is_ascii_whitespace)) {
            continue;
        }
        t.rows_read += 1;
        let mut push = |p: CellProblem| {
            if problems.len() < MAX_LISTED {
                problems.push(p);
            } else {
                unlisted += 1;
            }
        };
        if record.len() != width
            && !(record.len() > width && record.iter().skip(width).all(|c| c.is_empty()))
        {
            push(CellProblem::row(
                row_number,
                format!(
                    "the row has {} cells but the header has {width} columns",
                    record.len()
                ),
            ));
            continue;
        }
        for &u in &unnamed {
            if record.get(u).is_some_and(|c| !c.trim_ascii().is_empty()) {
                push(CellProblem::cell(
                    row_number,
                    format!("{} (unnamed)", u + 1),
                    "the cell holds a value but its column has no name in the header",
                ));
            }
        }
        let mut complete = true;
        let mut bad = false;
        for (slot, &col) in columns.iter().enumerate() {
            let cell = record.get(col).unwrap_or(b"");
            let trimmed = cell.trim_ascii();
            if missing_cell(trimmed) {
                complete = false;
                t.missing_cells += 1;
                optional[slot] = None;
                continue;
            }
            match parse_response(trimmed, decimal_comma) {
                Ok(mut x) => {
                    if let Some((lo, hi)) = options.scale {
                        if x < lo || x > hi {
                            push(CellProblem::cell(
                                row_number,
                                names[slot].clone(),
                                format!("{x} lies outside the response scale {lo} to {hi}"),
                            ));
                            bad = true;
                            continue;
                        }
                        if reversed[slot] {
                            x = lo + hi - x;
                        }
                    }
                    values[slot] = x;
                    optional[slot] = Some(x);
                    t.answer(slot, x);
                }
                Err(e) => {
                    push(CellProblem::cell(
                        row_number,
                        names[slot].clone(),
                        format!(
                            "{e}; a response must be a number (mark a missing one empty, NA or .)"
                        ),
                    ));
                    bad = true;
                }
            }
        }
        if bad {
            // Without --items, a text column in the first row is most likely an identifier:
            // say so once instead of listing every row.
            if options.items.is_none() && t.rows_read == 1 {
                // Identifier-like text: it starts with a letter (R001, P1, anna).
                let text: Vec<String> = columns
                    .iter()
                    .filter(|&&c| {
                        let cell = record.get(c).unwrap_or(b"").trim_ascii();
                        !missing_cell(cell)
                            && parse_response(cell, decimal_comma).is_err()
                            && cell.first().is_some_and(u8::is_ascii_alphabetic)
                    })
                    .map(|&c| header[c].clone())
                    .collect();
                let numeric: Vec<String> = names
                    .iter()
                    .filter(|n| !text.contains(n))
                    .cloned()
                    .collect();
                if text.is_empty() {
                    continue;
                }
                return Err(Error::InvalidSheet {
                    file: file.clone(),
                    problems: vec![CellProblem::row(
                        row_number,
                        format!(
                            "column(s) {} hold text, so not every column is an item; name the \
                             item columns with --items, e.g. --items {}",
                            text.join(", "),
                            numeric.join(",")
                        ),
                    )],
                });
            }
            continue;
        }
        if let Some(p) = pairwise.as_mut() {
            p.add(&optional);
        }
        if complete {
            t.listwise.add(&values);
            if let Some(r) = t.rows.as_mut() {
                r.extend_from_slice(&values);
            }
        }
    }
    if unlisted > 0 {
        problems.push(CellProblem::file(format!(
            "… and {unlisted} more problem(s) of the same kinds"
        )));
    }
    if !problems.is_empty() {
        return Err(Error::InvalidSheet { file, problems });
    }
    let Tallies {
        listwise,
        seen,
        lowest,
        highest,
        counting,
        rows_read,
        missing_cells,
        rows,
        ..
    } = t;
    if rows_read == 0 {
        return Err(fail(
            1,
            "the file has a header row but no respondents below it".into(),
        ));
    }
    if let Some(i) = seen.iter().position(|&c| c == 0) {
        return Err(Error::CannotAnalyse(format!(
            "{file}: column {} has no answers at all; leave it out with --items",
            names[i]
        )));
    }
    let mut notes = Vec::new();
    for i in 0..k {
        if counting[i] && seen[i] >= 3 {
            notes.push(crate::Warning::IdentifierColumn {
                column: names[i].clone(),
            });
        }
    }
    let moments = match &pairwise {
        Some(p) => p.finish(),
        None => listwise.finish(),
    }
    .ok_or_else(|| {
        Error::CannotAnalyse(format!(
            "{file}: fewer than 2 respondents {} ({} row(s) read, {} complete)",
            match options.missing {
                Missing::Listwise => "answered every item",
                Missing::Pairwise => "answered some pair of items",
            },
            rows_read,
            listwise.n()
        ))
    })?;
    // An answer far beyond all the others (e.g. −99 or 999 missing-value codes): its gap
    // to the next answer is more than twice the range of the rest.
    if options.scale.is_none() {
        for i in 0..k {
            let ([l0, l1], [h0, h1]) = (lowest[i], highest[i]);
            if seen[i] < 4 {
                continue;
            }
            if l1 - l0 > 2.0 * (h0 - l1) && h0 > l1 {
                notes.push(crate::Warning::ExtremeResponse {
                    column: names[i].clone(),
                    value: l0,
                });
            } else if h0 - h1 > 2.0 * (h1 - l0) && h1 > l0 {
                notes.push(crate::Warning::ExtremeResponse {
                    column: names[i].clone(),
                    value: h0,
                });
            }
        }
    }
    Ok(ItemData {
        notes,
        file,
        names,
        reversed,
        rows_read,
        complete_rows: listwise.n(),
        missing_cells,
        missing: options.missing,
        moments,
        rows,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write(name: &str, text: &str) -> std::path::PathBuf {
        let dir = std::env::temp_dir().join(format!("relyard-items-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join(name);
        std::fs::write(&p, text).unwrap();
        p
    }

    /// Both readers, with the same options: equal results, or the same error.
    fn both(path: &Path, options: &ItemReadOptions) -> std::result::Result<ItemData, String> {
        // Small parts, so that the tallies are merged across many part boundaries.
        let fast = read_items_with(path, options, Some(997));
        let careful = read_items_with(path, options, None);
        match (fast, careful) {
            (Ok(a), Ok(b)) => {
                assert_eq!(a.rows_read, b.rows_read);
                assert_eq!(a.complete_rows, b.complete_rows);
                assert_eq!(a.missing_cells, b.missing_cells);
                assert_eq!(a.notes, b.notes);
                assert_eq!(a.rows, b.rows);
                assert!((a.moments.cov.clone() - b.moments.cov.clone()).abs().max() < 1e-12);
                assert!(
                    (a.moments.mean.clone() - b.moments.mean.clone())
                        .abs()
                        .max()
                        < 1e-12
                );
                Ok(a)
            }
            (Err(a), Err(b)) => {
                assert_eq!(a.to_string(), b.to_string());
                Err(a.to_string())
            }
            (a, b) => panic!("the readers disagree: {:?} / {:?}", a.err(), b.err()),
        }
    }

    /// A file long enough to be split among threads, with the things clean files hold:
    /// blank lines, CRLF, missing cells, spaces, an empty trailing column, a counting
    /// identifier column and an answer far off the others.
    #[test]
    fn fast_and_careful_readers_agree() {
        let mut text = String::from("id,a,b,c,\r\n");
        let mut id = 0;
        for i in 1..=3000 {
            let (a, b, c) = (i % 5 + 1, (i * 7) % 5 + 1, (i * 3 + i / 7) % 5 + 1);
            if i % 97 < 4 && i % 97 >= 2 {
                text.push_str(if i % 97 == 2 { "\r\n" } else { ",,,,\r\n" });
                continue;
            }
            id += 1;
            match i % 97 {
                0 => text.push_str(&format!("{id},{a},,{c},\r\n")),
                1 => text.push_str(&format!("{id}, {a} ,NA,{c},\r\n")),
                _ => text.push_str(&format!("{id},{a},{b},{c},\r\n")),
            }
        }
        text.push_str(&format!("{},99,1,1,", id + 1));
        let p = write("agree.csv", &text);
        let d = both(&p, &ItemReadOptions::default()).unwrap();
        assert!(
            d.notes
                .iter()
                .any(|w| matches!(w, crate::Warning::IdentifierColumn { .. }))
        );
        assert!(
            d.notes
                .iter()
                .any(|w| matches!(w, crate::Warning::ExtremeResponse { .. }))
        );
        let chosen = ItemReadOptions {
            items: Some(vec!["a".into(), "b".into(), "c".into()]),
            reverse: vec!["b".into()],
            scale: Some((1.0, 99.0)),
            keep_rows: true,
            ..ItemReadOptions::default()
        };
        let d = both(&p, &chosen).unwrap();
        assert_eq!(
            d.rows.as_ref().map(|r| r.len()),
            Some(3 * d.complete_rows as usize)
        );
    }

    /// Whatever the fast path declines (quotes, text, ragged rows, values off the scale,
    /// lone carriage returns) gives the careful reader's own result or message.
    #[test]
    fn declined_files_read_as_before() {
        let cases = [
            ("quoted.csv", "a,b\n\"1\",2\n3,4\n5,1\n"),
            ("text.csv", "a,b\n1,2\n3,x\n5,1\n"),
            ("ragged.csv", "a,b\n1,2\n3\n5,1\n"),
            ("extra.csv", "a,b\n1,2\n3,4,5\n5,1\n"),
            ("lone-cr.csv", "a,b\r1,2\r3,4\r5,1\r"),
            ("unnamed.csv", "a,,b\n1,,2\n3,9,4\n5,,1\n"),
        ];
        for (name, text) in cases {
            let p = write(name, text);
            let _ = both(&p, &ItemReadOptions::default());
        }
        let p = write("scale.csv", "a,b\n1,2\n3,7\n5,1\n");
        let opts = ItemReadOptions {
            scale: Some((1.0, 5.0)),
            ..ItemReadOptions::default()
        };
        let err = both(&p, &opts).unwrap_err();
        assert!(err.contains("row 3, column b"), "{err}");
    }
}
