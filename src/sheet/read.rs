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

/// How a table of cells was stored: the one owner of what that implies for reading its
/// numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SheetFormat {
    /// Delimited text with this delimiter.
    Delimited(u8),
    /// A workbook (.xlsx, .xlsm, .xlsb, .xls, .ods): typed cells, no delimiter.
    Workbook,
}

impl SheetFormat {
    /// Whether a number may be written with a decimal comma ("0,85"): only in delimited
    /// text whose delimiter is not the comma. Never in a workbook: its number cells are
    /// typed, and a text cell such as "1,250" is not read as 1.25.
    pub fn decimal_comma(self) -> bool {
        matches!(self, SheetFormat::Delimited(d) if d != b',')
    }

    /// The delimiter's name for JSON and messages: comma, semicolon, tab, or
    /// "none (workbook)".
    pub fn delimiter_name(self) -> &'static str {
        match self {
            SheetFormat::Delimited(d) => delimiter_name(d),
            SheetFormat::Workbook => "none (workbook)",
        }
    }

    /// The format in words: "comma-delimited", "workbook".
    pub fn describe(self) -> String {
        match self {
            SheetFormat::Delimited(d) => format!("{}-delimited", delimiter_name(d)),
            SheetFormat::Workbook => "workbook".into(),
        }
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

/// One data row: its spreadsheet row number and its cells, as the reader's record.
#[derive(Debug, Clone, Copy)]
pub struct RawRow<'a> {
    /// Row number as a spreadsheet shows it (the header is row 1).
    pub row: usize,
    record: &'a csv::ByteRecord,
}

impl<'a> RawRow<'a> {
    /// A row from any source of records (a delimited file, a workbook).
    pub(crate) fn new(row: usize, record: &'a csv::ByteRecord) -> Self {
        RawRow { row, record }
    }

    /// Number of cells.
    pub fn n_cells(&self) -> usize {
        self.record.len()
    }

    /// Cell `i` as text; `Err(())` when it is not valid UTF-8, `Ok("")` beyond the row's end.
    pub fn cell(&self, i: usize) -> std::result::Result<&str, ()> {
        self.record
            .get(i)
            .map_or(Ok(""), |b| std::str::from_utf8(b).map_err(|_| ()))
    }
}

/// Where a coding sheet's rows come from: a delimited text file or a workbook.
pub(crate) trait RowSource {
    /// The header cells, trimmed.
    fn header(&self) -> &[String];
    /// The header's spreadsheet row (1 unless empty rows stand above it).
    fn header_row(&self) -> usize;
    /// How the rows are stored.
    fn format(&self) -> SheetFormat;
    /// The next non-blank data row, or `None` at the end.
    fn next_row(&mut self) -> Result<Option<RawRow<'_>>>;
    /// Non-blank data rows read so far.
    fn rows_read(&self) -> usize;
    /// Entirely empty rows between data rows.
    fn empty_rows(&self) -> Vec<usize>;
}

impl RowSource for TableReader<'_> {
    fn header(&self) -> &[String] {
        &self.header
    }
    fn header_row(&self) -> usize {
        self.header_row
    }
    fn format(&self) -> SheetFormat {
        SheetFormat::Delimited(self.delimiter)
    }
    fn next_row(&mut self) -> Result<Option<RawRow<'_>>> {
        TableReader::next_row(self)
    }
    fn rows_read(&self) -> usize {
        TableReader::rows_read(self)
    }
    fn empty_rows(&self) -> Vec<usize> {
        TableReader::empty_rows(self)
    }
}

/// A delimited file read one row at a time (memory does not grow with the number of
/// rows): the header first, then each non-blank data row with its spreadsheet row number.
pub struct TableReader<'a> {
    file: String,
    body: &'a [u8],
    reader: csv::Reader<&'a [u8]>,
    record: csv::ByteRecord,
    row_number: usize,
    empty_rows: Vec<usize>,
    last_data: usize,
    rows_read: usize,
    /// Header cells, trimmed.
    pub header: Vec<String>,
    /// The header's spreadsheet row.
    pub header_row: usize,
    /// The delimiter used.
    pub delimiter: u8,
    /// Whether the text ends inside a quoted cell (the last record then swallowed every
    /// later line).
    unclosed_quote: bool,
    /// Records the reader returned, and the records a count of the text's own finds:
    /// checked to be equal at the end, so that no row is lost between them.
    records: usize,
    expected_records: usize,
}

/// The message for a quote that is never closed.
pub const UNCLOSED_QUOTE: &str = "a quote opens a cell in this row and is never \
closed, so every later line was read into that one cell; close the quote (or remove it) and \
read the file again";

impl<'a> TableReader<'a> {
    /// Open `bytes` (the contents of `file`) and read its header row.
    pub fn open(file: &str, bytes: &'a [u8], delimiter: Option<u8>) -> Result<Self> {
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
                "the file is empty; a coding sheet needs a header row and at least one data row"
                    .into(),
            ));
        }
        let delimiter = delimiter.unwrap_or_else(|| detect_delimiter(body));
        // One pass of the text's own reading: line lengths, an unclosed quote, and the
        // records the reader must return.
        let mut state = super::quotes::QuoteState::new(delimiter);
        state.feed(body);
        if let Some(line) = state.too_long() {
            return Err(Error::InvalidSheet {
                file: file.to_string(),
                problems: vec![CellProblem::row(line, super::quotes::line_too_long(None))],
            });
        }
        let reader = csv::ReaderBuilder::new()
            .delimiter(delimiter)
            .has_headers(false)
            .flexible(true)
            .from_reader(body);
        let mut t = TableReader {
            file: file.to_string(),
            body,
            reader,
            record: csv::ByteRecord::new(),
            row_number: 0,
            empty_rows: Vec::new(),
            last_data: 0,
            rows_read: 0,
            header: Vec::new(),
            header_row: 1,
            delimiter,
            unclosed_quote: state.unclosed().is_some(),
            records: 0,
            expected_records: state.records(),
        };
        if !t.advance()? {
            return Err(fail("the file has no header row".into()));
        }
        let mut names = Vec::with_capacity(t.record.len());
        for (i, c) in t.record.iter().enumerate() {
            match std::str::from_utf8(c) {
                Ok(s) => names.push(s.trim().to_string()),
                Err(_) => {
                    return Err(Error::InvalidSheet {
                        file: file.to_string(),
                        problems: vec![CellProblem::row(
                            t.row_number,
                            format!(
                                "the header's column {} is not valid UTF-8 text; save the sheet \
                                 as UTF-8",
                                i + 1
                            ),
                        )],
                    });
                }
            }
        }
        // Blank lines above the header are numbered as the spreadsheet does, not reported.
        t.empty_rows.clear();
        t.header = names;
        t.header_row = t.row_number;
        Ok(t)
    }

    /// Read the next record into the buffer, counting the blank lines before it.
    fn advance(&mut self) -> Result<bool> {
        let more = self
            .reader
            .read_byte_record(&mut self.record)
            .map_err(|e| Error::InvalidSheet {
                file: self.file.clone(),
                problems: vec![CellProblem::row(
                    self.row_number + 1,
                    format!("the file could not be read as delimited text: {e}"),
                )],
            })?;
        if !more {
            if self.unclosed_quote {
                return Err(Error::InvalidSheet {
                    file: self.file.clone(),
                    problems: vec![CellProblem::row(self.row_number.max(1), UNCLOSED_QUOTE)],
                });
            }
            if self.records != self.expected_records {
                return Err(Error::InvalidSheet {
                    file: self.file.clone(),
                    problems: vec![CellProblem::file(records_differ(
                        self.records,
                        self.expected_records,
                    ))],
                });
            }
            return Ok(false);
        }
        self.records += 1;
        // Blank lines are skipped by the reader but shown as rows by a spreadsheet.
        let start = self
            .record
            .position()
            .map(|p| p.byte() as usize)
            .unwrap_or(0);
        let skipped_blank = blank_lines_before(self.body, start);
        for b in 0..skipped_blank {
            self.empty_rows.push(self.row_number + b + 1);
        }
        self.row_number += skipped_blank + 1;
        Ok(true)
    }

    /// The next non-blank data row, or `None` at the end of the file.
    pub fn next_row(&mut self) -> Result<Option<RawRow<'_>>> {
        loop {
            if !self.advance()? {
                return Ok(None);
            }
            let blank = self
                .record
                .iter()
                .all(|c| std::str::from_utf8(c).is_ok_and(|s| s.trim().is_empty()));
            if blank {
                self.empty_rows.push(self.row_number);
                continue;
            }
            self.last_data = self.row_number;
            self.rows_read += 1;
            return Ok(Some(RawRow {
                row: self.row_number,
                record: &self.record,
            }));
        }
    }

    /// Non-blank data rows read so far.
    pub fn rows_read(&self) -> usize {
        self.rows_read
    }

    /// Entirely empty rows between data rows (trailing empty rows, normal at the end of
    /// an export, are not reported).
    pub fn empty_rows(&self) -> Vec<usize> {
        let last = self.last_data;
        self.empty_rows
            .iter()
            .copied()
            .filter(|&r| r < last)
            .collect()
    }
}

/// Why a file was refused when the reader's records and the text's own count differ.
pub fn records_differ(read: usize, counted: usize) -> String {
    format!(
        "the reader found {read} rows where the file's lines hold {counted}, so rows could be \
         lost; save the sheet again as CSV from the spreadsheet program"
    )
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

/// True for a workbook: by its first bytes (a zip container or an old binary workbook),
/// whatever its name, so that a text file named .xlsx is read as text and a workbook
/// named .csv as a workbook.
pub fn is_workbook(bytes: &[u8]) -> bool {
    bytes.starts_with(b"PK\x03\x04") || bytes.starts_with(b"\xD0\xCF\x11\xE0")
}

/// The whole of a file, up to [`MAX_FILE_BYTES`](crate::limits::MAX_FILE_BYTES), read in
/// blocks: a larger file, or text with a line longer than
/// [`MAX_LINE_BYTES`](crate::limits::MAX_LINE_BYTES) (a device that never ends gives
/// one), is an error of kind `InvalidData` that says so, as soon as it is seen.
pub fn read_whole(path: &std::path::Path) -> std::io::Result<Vec<u8>> {
    use std::io::Read;
    let max = crate::limits::MAX_FILE_BYTES;
    let invalid = |m: String| std::io::Error::new(std::io::ErrorKind::InvalidData, m);
    let mut file = std::fs::File::open(path)?;
    let mut bytes = Vec::new();
    let mut lines = super::quotes::QuoteState::new(b',');
    loop {
        let start = bytes.len();
        let got = (&mut file).take(1 << 20).read_to_end(&mut bytes)?;
        if got == 0 {
            return Ok(bytes);
        }
        if bytes.len() as u64 > max {
            return Err(invalid(format!(
                "the file is larger than {} MB, far more than a table of this kind needs (or \
                 it never ends, as a device can)",
                max >> 20
            )));
        }
        if !is_workbook(&bytes) {
            lines.feed(&bytes[start..]);
            if let Some(line) = lines.too_long() {
                return Err(invalid(super::quotes::line_too_long(Some(line))));
            }
        }
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

    /// Data row numbers and inner empty rows of a whole file.
    fn rows_of(bytes: &[u8]) -> (Vec<usize>, Vec<usize>) {
        let mut t = TableReader::open("t.csv", bytes, None).unwrap();
        let mut rows = Vec::new();
        while let Some(r) = t.next_row().unwrap() {
            rows.push(r.row);
        }
        (rows, t.empty_rows())
    }

    #[test]
    fn numbers_rows_like_a_spreadsheet() {
        let (rows, empty) = rows_of(b"a,b\n1,2\n\n3,4\n,\n5,\"x\ny\"\n6,7\n\n");
        assert_eq!(rows, vec![2, 4, 6, 7]);
        assert_eq!(empty, vec![3, 5]);
        let crlf = b"a,b\r\n1,2\r\n\r\n3,4\r\n,\r\n5,\"x\r\ny\"\r\n6,7\r\n";
        assert_eq!(rows_of(crlf).0, vec![2, 4, 6, 7]);
        assert_eq!(rows_of(b"\n\na,b\n1,2\n").0, vec![4]);
    }

    #[test]
    fn strips_bom_and_flags_bad_utf8() {
        let mut t = TableReader::open("t.csv", b"\xEF\xBB\xBFcoef,n\n0.8,\xFF\n", None).unwrap();
        assert_eq!(t.header, vec!["coef", "n"]);
        assert!(t.next_row().unwrap().unwrap().cell(1).is_err());
        assert!(TableReader::open("t.csv", b"", None).is_err());
        assert!(TableReader::open("t.csv", b"\xFF\xFEa", None).is_err());
    }
}
