//! Reading a delimited text file into a table of cells with spreadsheet row numbers:
//! BOM handling, delimiter detection, UTF-8 checks, blank rows.

use crate::error::{CellProblem, Error, Result};

/// UTF-8 byte-order mark.
const UTF8_BOM: &[u8] = b"\xEF\xBB\xBF";

/// The delimiters a sheet may use.
pub const DELIMITERS: [u8; 3] = [b',', b';', b'\t'];

/// Name a delimiter for messages.
pub fn delimiter_name(d: u8) -> &'static str {
    match d {
        b',' => "comma",
        b';' => "semicolon",
        b'\t' => "tab",
        _ => "other",
    }
}

/// Parse a `--delimiter` value: `,` `;` `tab` (or the words comma, semicolon).
pub fn parse_delimiter(s: &str) -> std::result::Result<u8, String> {
    match s {
        "," | "comma" => Ok(b','),
        ";" | "semicolon" => Ok(b';'),
        "\t" | "tab" | "\\t" => Ok(b'\t'),
        _ => Err(format!(
            "unknown delimiter \"{s}\" (use comma, semicolon or tab)"
        )),
    }
}

/// One data row: its spreadsheet row number and its cells (a cell that is not valid
/// UTF-8 is kept as an error).
#[derive(Debug, Clone)]
pub struct RawRow {
    /// Row number as a spreadsheet shows it (the header is row 1).
    pub row: usize,
    /// Cells, in column order.
    pub cells: Vec<std::result::Result<String, ()>>,
}

/// A file read as a header and rows of text cells.
#[derive(Debug, Clone)]
pub struct RawTable {
    /// Header cells, trimmed.
    pub header: Vec<String>,
    /// Data rows, blank rows removed.
    pub rows: Vec<RawRow>,
    /// Spreadsheet rows that were entirely empty.
    pub empty_rows: Vec<usize>,
    /// The delimiter used.
    pub delimiter: u8,
}

/// Read `bytes` (the contents of `file`) as a delimited table.
pub fn read_table(file: &str, bytes: &[u8], delimiter: Option<u8>) -> Result<RawTable> {
    let fail = |reason: String| Error::InvalidSheet {
        file: file.to_string(),
        problems: vec![CellProblem::row(1, reason)],
    };
    if bytes.starts_with(b"\xFF\xFE") || bytes.starts_with(b"\xFE\xFF") {
        return Err(fail(
            "the file is UTF-16 encoded; save it as UTF-8 (\"CSV UTF-8\" in a spreadsheet's \
             save dialog)"
                .into(),
        ));
    }
    let body = bytes.strip_prefix(UTF8_BOM).unwrap_or(bytes);
    if body.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(fail(
            "the file is empty; a coding sheet needs a header row and at least one data row".into(),
        ));
    }
    let delimiter = delimiter.unwrap_or_else(|| detect_delimiter(body));
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(body);

    let mut header: Option<Vec<String>> = None;
    let mut rows = Vec::new();
    let mut empty_rows = Vec::new();
    let mut row_number = 0usize;
    let mut record = csv::ByteRecord::new();
    loop {
        let more = reader
            .read_byte_record(&mut record)
            .map_err(|e| Error::InvalidSheet {
                file: file.to_string(),
                problems: vec![CellProblem::row(
                    row_number + 1,
                    format!("the file could not be read as delimited text: {e}"),
                )],
            })?;
        if !more {
            break;
        }
        // Blank lines are skipped by the reader but shown as rows by a spreadsheet.
        let start = record.position().map(|p| p.byte() as usize).unwrap_or(0);
        let skipped_blank = blank_lines_before(body, start);
        for b in 0..skipped_blank {
            if header.is_some() {
                empty_rows.push(row_number + b + 1);
            }
        }
        row_number += skipped_blank + 1;

        let cells: Vec<std::result::Result<String, ()>> = record
            .iter()
            .map(|f| std::str::from_utf8(f).map(str::to_string).map_err(|_| ()))
            .collect();
        match header {
            None => {
                let mut names = Vec::with_capacity(cells.len());
                for (i, c) in cells.iter().enumerate() {
                    match c {
                        Ok(s) => names.push(s.trim().to_string()),
                        Err(()) => {
                            return Err(Error::InvalidSheet {
                                file: file.to_string(),
                                problems: vec![CellProblem::row(
                                    row_number,
                                    format!(
                                        "the header's column {} is not valid UTF-8 text; save \
                                         the sheet as UTF-8",
                                        i + 1
                                    ),
                                )],
                            });
                        }
                    }
                }
                if row_number != 1 {
                    // Blank lines above the header: number rows as the spreadsheet does.
                    empty_rows.clear();
                }
                header = Some(names);
            }
            Some(_) => {
                let blank = cells
                    .iter()
                    .all(|c| c.as_ref().map(|s| s.trim().is_empty()).unwrap_or(false));
                if blank {
                    empty_rows.push(row_number);
                } else {
                    rows.push(RawRow {
                        row: row_number,
                        cells,
                    });
                }
            }
        }
    }
    let header = header.ok_or_else(|| fail("the file has no header row".into()))?;
    // Trailing empty rows are normal at the end of an export; only report inner ones.
    let last_data = rows.last().map(|r| r.row).unwrap_or(0);
    empty_rows.retain(|&r| r < last_data);
    Ok(RawTable {
        header,
        rows,
        empty_rows,
        delimiter,
    })
}

/// Count the empty lines between the end of the previous record and the record whose
/// reader position is `start` (the position may sit on the `\n` of the previous record's
/// CRLF terminator).
fn blank_lines_before(body: &[u8], start: usize) -> usize {
    let mut i = start;
    if i > 0 && body.get(i) == Some(&b'\n') && body[i - 1] == b'\r' {
        i += 1;
    }
    let mut breaks = 0;
    while i < body.len() {
        match body[i] {
            b'\n' => breaks += 1,
            b'\r' if body.get(i + 1) != Some(&b'\n') => breaks += 1,
            b'\r' => {}
            _ => break,
        }
        i += 1;
    }
    breaks
}

/// Pick the delimiter that occurs most often, outside quotes, on the header line.
pub fn detect_delimiter(body: &[u8]) -> u8 {
    let mut counts = [0usize; 3];
    let mut in_quotes = false;
    for &b in body {
        match b {
            b'"' => in_quotes = !in_quotes,
            b'\n' | b'\r' if !in_quotes => break,
            _ if !in_quotes => {
                if let Some(i) = DELIMITERS.iter().position(|&d| d == b) {
                    counts[i] += 1;
                }
            }
            _ => {}
        }
    }
    // Ties go to tab, then semicolon (a comma may be a decimal mark in such files).
    let mut best = 2;
    for i in [1, 0] {
        if counts[i] > counts[best] {
            best = i;
        }
    }
    if counts[best] == 0 {
        b','
    } else {
        DELIMITERS[best]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn detects_delimiters() {
        assert_eq!(detect_delimiter(b"a,b,c\n1;2"), b',');
        assert_eq!(detect_delimiter(b"a;b;c\n1,2;3"), b';');
        assert_eq!(detect_delimiter(b"a\tb\tc\n"), b'\t');
        assert_eq!(detect_delimiter(b"\"a;x\",b,c\n"), b',');
        assert_eq!(detect_delimiter(b"abc\n"), b',');
    }

    #[test]
    fn numbers_rows_like_a_spreadsheet() {
        let t = read_table("t.csv", b"a,b\n1,2\n\n3,4\n,\n5,\"x\ny\"\n6,7\n", None).unwrap();
        let rows: Vec<usize> = t.rows.iter().map(|r| r.row).collect();
        assert_eq!(rows, vec![2, 4, 6, 7]);
        assert_eq!(t.empty_rows, vec![3, 5]);
        let crlf = b"a,b\r\n1,2\r\n\r\n3,4\r\n,\r\n5,\"x\r\ny\"\r\n6,7\r\n";
        let t = read_table("t.csv", crlf, None).unwrap();
        let rows: Vec<usize> = t.rows.iter().map(|r| r.row).collect();
        assert_eq!(rows, vec![2, 4, 6, 7]);
        let t = read_table("t.csv", b"\n\na,b\n1,2\n", None).unwrap();
        assert_eq!(t.rows[0].row, 4);
    }

    #[test]
    fn strips_bom_and_flags_bad_utf8() {
        let t = read_table("t.csv", b"\xEF\xBB\xBFcoef,n\n0.8,\xFF\n", None).unwrap();
        assert_eq!(t.header, vec!["coef", "n"]);
        assert!(t.rows[0].cells[1].is_err());
        assert!(read_table("t.csv", b"", None).is_err());
        assert!(read_table("t.csv", b"\xFF\xFEa", None).is_err());
    }
}
