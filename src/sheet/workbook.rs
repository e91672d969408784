//! Coding sheets kept in a workbook (.xlsx, .xlsm, .xlsb, .xls, .ods): one worksheet read
//! into the same rows a delimited file gives, numbered as the spreadsheet numbers them, so
//! that every message names the row and column the user sees.
//!
//! Nothing is allocated by a cell's address: the cells with content are gathered one by
//! one (never a rectangle from the first to the last), within a bound on how far the
//! file expands when unpacked and on how many cells hold content. A cell beyond the
//! format's last row or column, two records for one cell, and a value beyond the header's
//! last column are errors that name the cell; a hidden first worksheet is passed over
//! for the first visible one, and formula cells are counted — both said in a warning.

use super::read::{RawRow, RowSource, SheetFormat};
use crate::error::{CellProblem, Error, Result};
use crate::format::thousands;
use crate::limits::{DEFAULT_WORKBOOK_BYTES, DEFAULT_WORKBOOK_CELLS, SHEET_COLUMNS, SHEET_ROWS};
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::warning::Warning;
use calamine::{Data, Reader, SheetType, SheetVisible, Sheets};
use std::io::{Cursor, Read};

/// How much a workbook may hold: bounds on its unpacked size and on its cells with
/// content (defaults in [`crate::limits`]; a face may raise them).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct WorkbookLimits {
    /// Bytes the file's parts may expand to when unpacked.
    pub unpacked_bytes: u64,
    /// Cells with content in the worksheet read.
    pub cells: u64,
}

impl Default for WorkbookLimits {
    fn default() -> Self {
        WorkbookLimits {
            unpacked_bytes: DEFAULT_WORKBOOK_BYTES,
            cells: DEFAULT_WORKBOOK_CELLS,
        }
    }
}

thread_local! {
    static CONTAINING: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// True while this thread reads a workbook inside a guard that turns a panic of the
/// workbook reader into an error: a face's panic hook may stay silent then (the error
/// that follows says what happened).
pub fn panic_is_contained() -> bool {
    CONTAINING.with(|c| c.get())
}

/// The rows of one worksheet.
pub struct WorkbookRows {
    /// The worksheet read.
    pub worksheet: String,
    /// Every worksheet of the workbook, in its order (to offer a choice).
    pub worksheets: Vec<String>,
    /// What the reader passed over or could not check (hidden worksheets, formulas).
    pub notes: Vec<Warning>,
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

/// A column's letters as a spreadsheet shows them ("A", "Z", "AA", …), from its 0-based
/// index.
fn column_letters(col: u32) -> String {
    let mut letters = Vec::new();
    let mut c = col as u64 + 1;
    while c > 0 {
        letters.push(b'A' + ((c - 1) % 26) as u8);
        c = (c - 1) / 26;
    }
    letters.reverse();
    String::from_utf8_lossy(&letters).into_owned()
}

/// A cell's name as a spreadsheet shows it ("B7"), from its 0-based row and column.
pub fn cell_name(row: u32, col: u32) -> String {
    format!("{}{}", column_letters(col), row as u64 + 1)
}

/// The cells with content of one worksheet, as read.
#[derive(Default)]
struct Gathered {
    /// (row, column, text), 0-based, in the order read.
    cells: Vec<(u32, u32, String)>,
    /// Cells holding a formula, and the first of them.
    formulas: u64,
    first_formula: Option<(u32, u32)>,
}

impl Gathered {
    fn formula(&mut self, at: (u32, u32)) {
        self.formulas += 1;
        if self.first_formula.is_none_or(|f| at < f) {
            self.first_formula = Some(at);
        }
    }
}

/// A reader of one workbook, with the file's name for messages.
struct Book<'a> {
    file: &'a str,
    limits: WorkbookLimits,
}

impl Book<'_> {
    fn fail(&self, reason: String) -> Error {
        Error::InvalidSheet {
            file: self.file.to_string(),
            problems: vec![CellProblem::file(reason)],
        }
    }

    /// Every part of a zip container unpacked (to nowhere) within the bound, before any
    /// reader holds one: the sizes a file declares can lie, so the bytes are counted.
    /// True when the container is an OpenDocument file (it has a `content.xml`).
    fn check_unpacked_size(&self, bytes: &[u8]) -> Result<bool> {
        let Ok(mut zip) = zip::ZipArchive::new(Cursor::new(bytes)) else {
            return Ok(false); // not a readable container: the workbook reader says why
        };
        let open_document = zip.index_for_name("content.xml").is_some();
        let max = self.limits.unpacked_bytes;
        let mut total = 0u64;
        for i in 0..zip.len() {
            let Ok(mut part) = zip.by_index(i) else {
                continue;
            };
            let name = part.name().map(|n| n.to_string()).unwrap_or_default();
            let left = max.saturating_sub(total);
            let got =
                std::io::copy(&mut (&mut part).take(left + 1), &mut std::io::sink()).unwrap_or(0);
            total += got;
            if total > max {
                return Err(Error::setting(
                    Setting::WorkbookBytes,
                    msg![
                        format!(
                            "{}: the workbook unpacks to more than {} MB (its part {name} alone \
                             to at least {} MB), beyond the bound for a workbook; if it is a \
                             genuine table, raise the bound with ",
                            self.file,
                            max >> 20,
                            got >> 20
                        ),
                        Setting::WorkbookBytes,
                        ", or export the worksheet as CSV"
                    ],
                ));
            }
        }
        Ok(open_document)
    }

    /// The worksheet to read: the one asked for, else the first visible worksheet, with
    /// the hidden ones passed over before it.
    fn choose(
        &self,
        book: &Sheets<Cursor<Vec<u8>>>,
        asked: Option<&str>,
    ) -> Result<(String, Vec<String>)> {
        let sheets = book.sheets_metadata();
        let names: Vec<&str> = sheets.iter().map(|s| s.name.as_str()).collect();
        if let Some(w) = asked {
            let found = names
                .iter()
                .find(|n| **n == w)
                .or_else(|| names.iter().find(|n| n.eq_ignore_ascii_case(w.trim())));
            return match found {
                Some(n) => Ok((n.to_string(), Vec::new())),
                None => Err(Error::setting(
                    Setting::Worksheet,
                    msg![
                        given(Setting::Worksheet, w),
                        format!(
                            ": {} has no such worksheet (its worksheets are: {})",
                            self.file,
                            names.join(", ")
                        )
                    ],
                )),
            };
        }
        let worksheets: Vec<&calamine::Sheet> = sheets
            .iter()
            .filter(|s| s.typ == SheetType::WorkSheet)
            .collect();
        let Some(first) = worksheets.first() else {
            return Err(self.fail("the workbook has no worksheets".into()));
        };
        let visible = worksheets
            .iter()
            .position(|s| s.visible == SheetVisible::Visible);
        match visible {
            Some(i) => Ok((
                worksheets[i].name.clone(),
                worksheets[..i].iter().map(|s| s.name.clone()).collect(),
            )),
            // Every worksheet hidden: read the first, as the spreadsheet would show it once
            // unhidden.
            None => Ok((first.name.clone(), Vec::new())),
        }
    }

    /// Take one cell with content, checking the format's bounds and the count.
    fn take(&self, g: &mut Gathered, name: &str, at: (u32, u32), text: String) -> Result<()> {
        if at.0 >= SHEET_ROWS || at.1 >= SHEET_COLUMNS {
            return Err(self.fail(format!(
                "worksheet {name} has a cell at row {} column {} (cell {}), beyond the last row \
                 ({}) or column ({}, XFD) a worksheet can have; the file is damaged or was not \
                 written by a spreadsheet program — save it again from one",
                thousands(at.0 as u64 + 1),
                thousands(at.1 as u64 + 1),
                cell_name(at.0, at.1),
                thousands(SHEET_ROWS as u64),
                thousands(SHEET_COLUMNS as u64)
            )));
        }
        if g.cells.len() as u64 >= self.limits.cells {
            return Err(Error::setting(
                Setting::WorkbookCells,
                msg![
                    format!(
                        "{}: worksheet {name} holds more than {} cells with content, beyond the \
                         bound for a workbook; if it is a genuine table, raise the bound with ",
                        self.file,
                        thousands(self.limits.cells)
                    ),
                    Setting::WorkbookCells,
                    ", or export the worksheet as CSV"
                ],
            ));
        }
        g.cells.push((at.0, at.1, text));
        Ok(())
    }

    fn gather(
        &self,
        book: &mut Sheets<Cursor<Vec<u8>>>,
        scanned: Option<std::collections::HashMap<String, super::ods_scan::TableScan>>,
        name: &str,
    ) -> Result<Gathered> {
        let unreadable = |e: &dyn std::fmt::Display| {
            self.fail(format!("worksheet {name} could not be read: {e}"))
        };
        let mut g = Gathered::default();
        match book {
            Sheets::Xlsx(x) => {
                let mut cells = x.worksheet_cells_reader(name).map_err(|e| unreadable(&e))?;
                while let Some(c) = cells
                    .next_cell_with_formula_metadata()
                    .map_err(|e| unreadable(&e))?
                {
                    if c.formula.is_some() {
                        g.formula(c.pos);
                    }
                    let text = cell_text(&Data::from(c.value));
                    if !text.trim().is_empty() {
                        self.take(&mut g, name, c.pos, text)?;
                    }
                }
            }
            Sheets::Xlsb(x) => {
                {
                    let mut cells = x.worksheet_cells_reader(name).map_err(|e| unreadable(&e))?;
                    // The reader stops without a word at a row beyond the format's last:
                    // the sheet's declared extent says whether it has one.
                    let end = cells.dimensions().end;
                    if end.0 >= SHEET_ROWS || end.1 >= SHEET_COLUMNS {
                        return Err(self.fail(format!(
                            "worksheet {name} declares cells up to {}, beyond the last row or \
                             column a worksheet can have, which the reader of this format would \
                             pass over; save the workbook again as .xlsx",
                            cell_name(end.0, end.1)
                        )));
                    }
                    while let Some(c) = cells.next_cell().map_err(|e| unreadable(&e))? {
                        let at = c.get_position();
                        let text = cell_text(&Data::from(c.get_value().clone()));
                        if !text.trim().is_empty() {
                            self.take(&mut g, name, at, text)?;
                        }
                    }
                }
                let mut formulas = x.worksheet_cells_reader(name).map_err(|e| unreadable(&e))?;
                while let Some(f) = formulas.next_formula().map_err(|e| unreadable(&e))? {
                    if !f.get_value().is_empty() {
                        g.formula(f.get_position());
                    }
                }
            }
            Sheets::Ods(_) => {
                // Measured before the file was opened (every table within the bound).
                let scan = scanned
                    .and_then(|mut tables| tables.remove(name))
                    .unwrap_or_default();
                g.formulas = scan.formulas;
                g.first_formula = scan.first_formula;
                self.read_range(book, name, &mut g)?;
            }
            Sheets::Xls(_) => {
                // The old binary format bounds a worksheet at 65,536 rows by 256 columns.
                self.read_range(book, name, &mut g)?;
            }
        }
        Ok(g)
    }

    fn read_range(
        &self,
        book: &mut Sheets<Cursor<Vec<u8>>>,
        name: &str,
        g: &mut Gathered,
    ) -> Result<()> {
        let range = book
            .worksheet_range(name)
            .map_err(|e| self.fail(format!("worksheet {name} could not be read: {e}")))?;
        let (r0, c0) = range.start().unwrap_or((0, 0));
        for (r, c, cell) in range.used_cells() {
            let text = cell_text(cell);
            if !text.trim().is_empty() {
                self.take(g, name, (r0 + r as u32, c0 + c as u32), text)?;
            }
        }
        Ok(())
    }

    fn far_cells(&self, name: &str, rectangle: u64, farthest: (u32, u32)) -> Error {
        Error::setting(
            Setting::WorkbookCells,
            msg![
                format!(
                    "{}: worksheet {name} spans {} cells up to cell {} (a cell far from the rest \
                     of the table, or a row repeated to the sheet's end), beyond the bound for \
                     a workbook; delete what lies beyond the table in the spreadsheet program, \
                     raise the bound with ",
                    self.file,
                    thousands(rectangle),
                    cell_name(farthest.0, farthest.1)
                ),
                Setting::WorkbookCells,
                ", or export the worksheet as CSV"
            ],
        )
    }
}

impl WorkbookRows {
    /// Read `worksheet` (the first visible one when `None`) of the workbook in `bytes`.
    pub fn read(
        file: &str,
        bytes: Vec<u8>,
        worksheet: Option<&str>,
        limits: WorkbookLimits,
    ) -> Result<Self> {
        let book = Book { file, limits };
        let open_document = bytes.starts_with(b"PK\x03\x04") && book.check_unpacked_size(&bytes)?;
        // A reader that fails on a damaged file by panicking must not take the process
        // with it: the file is refused with a reason instead.
        let was = CONTAINING.with(|c| c.replace(true));
        let read = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            Self::read_checked(&book, bytes, worksheet, open_document)
        }));
        CONTAINING.with(|c| c.set(was));
        read.unwrap_or_else(|_| {
            Err(book.fail(
                "the workbook's contents could not be read (the file is damaged or was not \
                 written by a spreadsheet program); save it again from the spreadsheet \
                 program, or export the sheet as CSV"
                    .into(),
            ))
        })
    }

    fn read_checked(
        b: &Book<'_>,
        bytes: Vec<u8>,
        worksheet: Option<&str>,
        open_document: bool,
    ) -> Result<Self> {
        // An OpenDocument file is measured before its reader opens it (which holds its
        // worksheets in full).
        let scanned = if open_document {
            let tables = super::ods_scan::scan(&bytes)
                .map_err(|e| b.fail(format!("the file could not be read as a workbook ({e})")))?;
            // The reader holds every table as it opens the file: each must fit.
            if let Some((name, t)) = tables
                .iter()
                .filter(|(_, t)| t.rectangle > b.limits.cells)
                .max_by_key(|(_, t)| t.rectangle)
            {
                return Err(b.far_cells(name, t.rectangle, t.farthest));
            }
            Some(tables)
        } else {
            None
        };
        let mut book = calamine::open_workbook_auto_from_rs(Cursor::new(bytes)).map_err(|e| {
            b.fail(format!(
                "the file could not be read as a workbook ({e}); save it again from the \
                 spreadsheet program, or export the sheet as CSV"
            ))
        })?;
        let (name, passed_over) = b.choose(&book, worksheet)?;
        let mut g = b.gather(&mut book, scanned, &name)?;
        let mut notes = Vec::new();
        if !passed_over.is_empty() {
            notes.push(Warning::HiddenWorksheetsPassedOver {
                read: name.clone(),
                hidden: passed_over,
            });
        }
        if let Some((r, c)) = g.first_formula {
            notes.push(Warning::FormulaCells {
                worksheet: name.clone(),
                count: g.formulas,
                first: cell_name(r, c),
            });
        }
        let mut rows = Self::from_cells(b, &name, &mut g.cells)?;
        rows.notes = notes;
        rows.worksheets = book
            .sheets_metadata()
            .iter()
            .filter(|s| s.typ == SheetType::WorkSheet)
            .map(|s| s.name.clone())
            .collect();
        Ok(rows)
    }

    /// The rows from the cells with content: the first row with content is the header;
    /// columns are counted from the leftmost column with content.
    fn from_cells(b: &Book<'_>, name: &str, cells: &mut [(u32, u32, String)]) -> Result<Self> {
        cells.sort_by_key(|&(r, c, _)| (r, c));
        if let Some(w) = cells
            .windows(2)
            .find(|w| (w[0].0, w[0].1) == (w[1].0, w[1].1))
        {
            return Err(b.fail(format!(
                "worksheet {name} holds two records for cell {} ({} and {}), so one \
                 would be lost; the file is damaged or was not written by a spreadsheet program \
                 — save it again from one",
                cell_name(w[0].0, w[0].1),
                super::cells::quote(&w[0].2),
                super::cells::quote(&w[1].2)
            )));
        }
        let Some(&(first_row, _, _)) = cells.first() else {
            return Err(b.fail(format!(
                "worksheet {name} is empty; a coding sheet needs a header row and at least one \
                 data row"
            )));
        };
        let first_col = cells.iter().map(|c| c.1).min().unwrap_or(0);
        let header_width = cells
            .iter()
            .take_while(|c| c.0 == first_row)
            .map(|c| c.1 - first_col + 1)
            .max()
            .unwrap_or(0);
        if let Some(beyond) = cells.iter().find(|c| c.1 - first_col >= header_width) {
            return Err(Error::InvalidSheet {
                file: b.file.to_string(),
                problems: vec![CellProblem::row(
                    beyond.0 as usize + 1,
                    format!(
                        "cell {} holds {} beyond the header's last column ({}); a value needs \
                         a column name (delete it, or name its column in the header row)",
                        cell_name(beyond.0, beyond.1),
                        super::cells::quote(&beyond.2),
                        column_letters(first_col + header_width - 1)
                    ),
                )],
            });
        }
        // Every data row is as wide as the header (as a delimited file's rows are), so the
        // rectangle of data rows by header columns must fit the cell bound too.
        let data_rows = cells.chunk_by(|a, b| a.0 == b.0).count().saturating_sub(1) as u64;
        if data_rows.saturating_mul(header_width as u64) > b.limits.cells {
            let last = cells.iter().map(|c| c.0).max().unwrap_or(first_row);
            return Err(b.far_cells(
                name,
                data_rows.saturating_mul(header_width as u64),
                (last, first_col + header_width - 1),
            ));
        }
        let mut header = Vec::new();
        let mut rows = Vec::new();
        let mut empty_rows = Vec::new();
        let mut previous = first_row;
        for line in cells.chunk_by_mut(|a, b| a.0 == b.0) {
            let row = line[0].0;
            let mut texts = vec![String::new(); header_width as usize];
            for (_, c, text) in line {
                texts[(*c - first_col) as usize] = std::mem::take(text);
            }
            if row == first_row {
                header = texts.iter().map(|t| t.trim().to_string()).collect();
                continue;
            }
            empty_rows.extend((previous + 1..row).map(|r| r as usize + 1));
            previous = row;
            rows.push((row as usize + 1, csv::ByteRecord::from(texts)));
        }
        Ok(WorkbookRows {
            worksheet: name.to_string(),
            worksheets: Vec::new(),
            notes: Vec::new(),
            header,
            header_row: first_row as usize + 1,
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Cell names as spreadsheet programs show them (the format's first and last columns
    /// are A and XFD; Z, AA and AZ are where the letters roll over).
    #[test]
    fn cells_are_named_as_a_spreadsheet_names_them() {
        assert_eq!(cell_name(0, 0), "A1");
        assert_eq!(cell_name(6, 1), "B7");
        assert_eq!(cell_name(0, 25), "Z1");
        assert_eq!(cell_name(0, 26), "AA1");
        assert_eq!(cell_name(0, 51), "AZ1");
        assert_eq!(cell_name(1_048_575, 16_383), "XFD1048576");
    }
}
