//! A first pass over an OpenDocument spreadsheet's content, before the reader holds a
//! worksheet as one rectangle: how large that rectangle would be (rows and columns can be
//! "repeated" any number of times, so a few bytes can ask for billions of cells), and
//! which cells hold formulas. It reads the part as a stream and keeps a few numbers per
//! table.

use quick_xml::XmlVersion;
use quick_xml::events::{BytesStart, Event};
use std::collections::HashMap;
use std::io::{BufReader, Cursor};

/// One table (worksheet) as measured.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TableScan {
    /// Cells in the rectangle from the first cell to the last row and column with
    /// content.
    pub rectangle: u64,
    /// The last row and column with content (0-based).
    pub farthest: (u32, u32),
    /// Cells holding a formula.
    pub formulas: u64,
    /// The first of them (row, column), 0-based.
    pub first_formula: Option<(u32, u32)>,
}

#[derive(Default)]
struct Table {
    name: String,
    row: u64,
    rows_repeated: u64,
    col: u64,
    row_last_col: Option<u64>,
    last_row: Option<u64>,
    last_col: Option<u64>,
    scan: TableScan,
}

fn attribute(e: &BytesStart<'_>, name: &str) -> Option<String> {
    let a = e.try_get_attribute(name).ok()??;
    a.normalized_value(XmlVersion::Implicit1_0)
        .ok()
        .map(|v| v.into_owned())
}

fn repeats(e: &BytesStart<'_>, name: &str) -> u64 {
    attribute(e, name)
        .and_then(|v| v.trim().parse::<u64>().ok())
        .unwrap_or(1)
        .max(1)
}

impl Table {
    fn cell(&mut self, e: &BytesStart<'_>, has_children: bool) {
        let n = repeats(e, "table:number-columns-repeated");
        let content = has_children || attribute(e, "office:value-type").is_some();
        if content {
            self.row_last_col = Some(self.col.saturating_add(n - 1));
        }
        if attribute(e, "table:formula").is_some() {
            self.scan.formulas = self
                .scan
                .formulas
                .saturating_add(n.saturating_mul(self.rows_repeated));
            let at = (clamp(self.row), clamp(self.col));
            if self.scan.first_formula.is_none_or(|f| at < f) {
                self.scan.first_formula = Some(at);
            }
        }
        self.col = self.col.saturating_add(n);
    }

    fn end_row(&mut self) {
        if let Some(c) = self.row_last_col.take() {
            self.last_row = Some(self.row.saturating_add(self.rows_repeated - 1));
            self.last_col = Some(self.last_col.map_or(c, |l| l.max(c)));
        }
        self.row = self.row.saturating_add(self.rows_repeated);
        self.col = 0;
        self.rows_repeated = 1;
    }

    fn finish(mut self) -> (String, TableScan) {
        if let (Some(r), Some(c)) = (self.last_row, self.last_col) {
            self.scan.rectangle = (r + 1).saturating_mul(c + 1);
            self.scan.farthest = (clamp(r), clamp(c));
        }
        (self.name, self.scan)
    }
}

fn clamp(x: u64) -> u32 {
    x.min(u32::MAX as u64) as u32
}

/// Measure every table of the spreadsheet in `bytes` (a zip container with a
/// `content.xml`); an error says why the part could not be read.
pub fn scan(bytes: &[u8]) -> Result<HashMap<String, TableScan>, String> {
    let mut zip = zip::ZipArchive::new(Cursor::new(bytes)).map_err(|e| e.to_string())?;
    let part = zip.by_name("content.xml").map_err(|e| e.to_string())?;
    let mut xml = quick_xml::Reader::from_reader(BufReader::new(part));
    let mut buf = Vec::new();
    let mut tables = HashMap::new();
    let mut table: Option<Table> = None;
    loop {
        buf.clear();
        let event = xml.read_event_into(&mut buf).map_err(|e| e.to_string())?;
        match (&event, table.as_mut()) {
            (Event::Eof, _) => break,
            (Event::Start(e), None) if e.name().as_ref() == "table:table" => {
                table = Some(Table {
                    name: attribute(e, "table:name").unwrap_or_default(),
                    rows_repeated: 1,
                    ..Table::default()
                });
            }
            (Event::End(e), Some(_)) if e.name().as_ref() == "table:table" => {
                let (name, s) = table.take().expect("inside a table").finish();
                tables.entry(name).or_insert(s);
            }
            (Event::Start(e) | Event::Empty(e), Some(t))
                if e.name().as_ref() == "table:table-row" =>
            {
                t.rows_repeated = repeats(e, "table:number-rows-repeated");
                t.col = 0;
                if matches!(event, Event::Empty(_)) {
                    t.end_row();
                }
            }
            (Event::End(e), Some(t)) if e.name().as_ref() == "table:table-row" => t.end_row(),
            (Event::Start(e) | Event::Empty(e), Some(t))
                if matches!(
                    e.name().as_ref(),
                    "table:table-cell" | "table:covered-table-cell"
                ) =>
            {
                t.cell(e, matches!(event, Event::Start(_)))
            }
            _ => {}
        }
    }
    Ok(tables)
}
