//! Coding sheets kept in a workbook (.xlsx, .xlsm, .xlsb, .xls, .ods): one worksheet read
//! into the same rows a delimited file gives, numbered as the spreadsheet numbers them, so
//! that every message names the row and column the user sees.

use super::read::{RawRow, RowSource, SheetFormat};
use crate::error::{CellProblem, Error, Result};
use crate::setting::msg;
use crate::setting::{Setting, given};
use calamine::{Data, Reader};

/// True for a workbook: by its first bytes (a zip container or an old binary workbook),
/// whatever its name, so that a text file named .xlsx is read as text and a workbook
/// named .csv as a workbook.
pub fn is_workbook(bytes: &[u8]) -> bool {
    bytes.starts_with(b"PK\x03\x04") || bytes.starts_with(b"\xD0\xCF\x11\xE0")
}

/// The rows of one worksheet.
pub struct WorkbookRows {
    /// The worksheet read.
    pub worksheet: String,
    header: Vec<String>,
    header_row: usize,
    rows: Vec<(usize, csv::ByteRecord)>,
    next: usize,
    empty_rows: Vec<usize>,
}

/// A cell as text: numbers in plain decimal notation, dates marked as dates (so that a date
/// in a numeric column is reported, not read as its serial number), errors as shown.
fn cell_text(cell: &Data) -> String {
    match cell {
        Data::Empty => String::new(),
        Data::String(s) => s.clone(),
        Data::Float(x) => format!("{x}"),
        Data::Int(i) => format!("{i}"),
        Data::Bool(b) => if *b { "TRUE" } else { "FALSE" }.to_string(),
        Data::DateTime(d) => format!("{d} (a date)"),
        Data::DateTimeIso(s) | Data::DurationIso(s) => format!("{s} (a date)"),
        Data::Error(e) => format!("{e}"),
    }
}

impl WorkbookRows {
    /// Read `worksheet` (the first when `None`) of the workbook in `bytes`.
    pub fn read(file: &str, bytes: Vec<u8>, worksheet: Option<&str>) -> Result<Self> {
        let fail = |reason: String| Error::InvalidSheet {
            file: file.to_string(),
            problems: vec![CellProblem::file(reason)],
        };
        let mut book =
            calamine::open_workbook_auto_from_rs(std::io::Cursor::new(bytes)).map_err(|e| {
                fail(format!(
                    "the file could not be read as a workbook ({e}); save it again from the \
                     spreadsheet program, or export the sheet as CSV"
                ))
            })?;
        let names = book.sheet_names();
        let name = match worksheet {
            Some(w) => names
                .iter()
                .find(|n| n.as_str() == w)
                .or_else(|| names.iter().find(|n| n.eq_ignore_ascii_case(w.trim())))
                .cloned()
                .ok_or_else(|| {
                    Error::setting(
                        Setting::Worksheet,
                        msg![
                            given(Setting::Worksheet, w),
                            format!(
                                ": {file} has no such worksheet (its worksheets are: {})",
                                names.join(", ")
                            )
                        ],
                    )
                })?,
            None => names
                .first()
                .cloned()
                .ok_or_else(|| fail("the workbook has no worksheets".into()))?,
        };
        let range = book
            .worksheet_range(&name)
            .map_err(|e| fail(format!("worksheet {name} could not be read: {e}")))?;
        let Some((first_row, _)) = range.start() else {
            return Err(fail(format!(
                "worksheet {name} is empty; a coding sheet needs a header row and at least one \
                 data row"
            )));
        };
        let mut header = None;
        let mut header_row = 1;
        let mut rows = Vec::new();
        let mut empty_rows = Vec::new();
        for (i, cells) in range.rows().enumerate() {
            // Spreadsheet numbering: the range starts at its first non-empty row.
            let row = first_row as usize + i + 1;
            let texts: Vec<String> = cells.iter().map(cell_text).collect();
            if header.is_none() {
                header = Some(
                    texts
                        .iter()
                        .map(|t| t.trim().to_string())
                        .collect::<Vec<_>>(),
                );
                header_row = row;
                continue;
            }
            if texts.iter().all(|t| t.trim().is_empty()) {
                empty_rows.push(row);
                continue;
            }
            rows.push((row, csv::ByteRecord::from(texts)));
        }
        let header = header.unwrap_or_default();
        let last = rows.last().map_or(0, |(r, _)| *r);
        empty_rows.retain(|&r| r < last);
        Ok(WorkbookRows {
            worksheet: name,
            header,
            header_row,
            rows,
            next: 0,
            empty_rows,
        })
    }

    /// Number of non-blank data rows.
    pub fn data_rows(&self) -> usize {
        self.rows.len()
    }

    /// The header's cells and spreadsheet row, and the non-blank data rows with theirs.
    pub fn into_table(self) -> (Vec<String>, usize, Vec<(usize, csv::ByteRecord)>) {
        (self.header, self.header_row, self.rows)
    }
}

impl RowSource for WorkbookRows {
    fn header(&self) -> &[String] {
        &self.header
    }
    fn header_row(&self) -> usize {
        self.header_row
    }
    fn format(&self) -> SheetFormat {
        SheetFormat::Workbook
    }
    fn next_row(&mut self) -> Result<Option<RawRow<'_>>> {
        let Some((row, record)) = self.rows.get(self.next) else {
            return Ok(None);
        };
        self.next += 1;
        Ok(Some(RawRow::new(*row, record)))
    }
    fn rows_read(&self) -> usize {
        self.next
    }
    fn empty_rows(&self) -> Vec<usize> {
        self.empty_rows.clone()
    }
}
