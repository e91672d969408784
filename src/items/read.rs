//! Reading raw item data (respondents in rows, items in columns) in one streaming pass,
//! from delimited text (a file or a pipe) or a workbook.

use super::cells::{Tallies, cell_hash, is_missing_code, missing_cell, parse_response};
use super::moments::{Moments, Pairwise};
use crate::error::{CellProblem, Error, Result};
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::sheet::{
    SheetFormat, TrackQuotes, WorkbookRows, detect_delimiter, is_workbook, same_name,
};
use std::collections::HashMap;
use std::io::{BufRead, BufReader, Cursor, Read, Seek, SeekFrom};
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
#[derive(Debug, Clone, PartialEq)]
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
    /// Responses that mean "missing" (such as −99 or 999).
    pub missing_codes: Vec<f64>,
    /// Keep the complete rows in memory (for the bootstrap).
    pub keep_rows: bool,
    /// The worksheet of a workbook (the first visible one when `None`).
    pub worksheet: Option<String>,
    /// How much a workbook may hold.
    pub workbook: crate::sheet::WorkbookLimits,
    /// The setting that chose the columns, for messages (the item columns, or a
    /// regression's variables).
    pub columns_setting: Setting,
}

impl Default for ItemReadOptions {
    fn default() -> Self {
        ItemReadOptions {
            delimiter: None,
            items: None,
            reverse: Vec::new(),
            scale: None,
            missing: Missing::Listwise,
            missing_codes: Vec::new(),
            keep_rows: false,
            worksheet: None,
            workbook: Default::default(),
            columns_setting: Setting::ItemColumns,
        }
    }
}

/// Most problems listed one by one before the rest are counted.
const MAX_LISTED: usize = 50;

/// Item data after one pass.
#[derive(Debug, Clone)]
pub struct ItemData {
    /// The file as named.
    pub file: String,
    /// How the file stores its cells.
    pub format: SheetFormat,
    /// The worksheet read, for a workbook.
    pub worksheet: Option<String>,
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
    /// Columns left out as identifiers (text, one value per respondent).
    pub identifiers: Vec<String>,
    /// Responses read as missing besides empty cells and NA (`--missing-code`).
    pub missing_codes: Vec<f64>,
    /// Things noticed while reading (identifier-like columns, extreme values).
    pub notes: Vec<crate::Warning>,
    /// Value labels of an SPSS file's variables (empty for other files).
    pub value_labels: Vec<(String, Vec<(f64, String)>)>,
    /// For an SPSS file, the cells holding a declared user-missing code (read as missing);
    /// `None` for other files.
    pub user_missing_cells: Option<u64>,
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

/// Read an item file in one pass.
pub fn read_items(path: &Path, options: &ItemReadOptions) -> Result<ItemData> {
    read_items_with(path, None, options, Some(super::fast::PART_BYTES))
}

/// Read item data already in memory (an upload), named `path` in messages; nothing is
/// opened.
pub fn read_items_from_bytes(
    path: &Path,
    bytes: &[u8],
    options: &ItemReadOptions,
) -> Result<ItemData> {
    read_items_with(path, Some(bytes), options, None)
}

/// The problems of one file, collected.
struct Problems {
    file: String,
    listed: Vec<CellProblem>,
    unlisted: usize,
}

impl Problems {
    fn push(&mut self, p: CellProblem) {
        if self.listed.len() < MAX_LISTED {
            self.listed.push(p);
        } else {
            self.unlisted += 1;
        }
    }

    fn one(file: &str, row: usize, reason: impl Into<crate::Message>) -> Error {
        Error::InvalidSheet {
            file: file.to_string(),
            problems: vec![CellProblem::row(row, reason)],
        }
    }
}

/// Where the rows come from.
enum Source<'a> {
    /// Delimited text: the csv reader, and where the data rows start in the file (for
    /// the fast path, which reopens regular files).
    Text {
        reader: Box<csv::Reader<TrackQuotes<Box<dyn BufRead + 'a>>>>,
        delimiter: u8,
        data_start: Option<u64>,
        row_number: usize,
    },
    /// A workbook's rows, already numbered.
    Workbook {
        rows: std::vec::IntoIter<(usize, csv::ByteRecord)>,
    },
}

impl Source<'_> {
    /// The next data record and its spreadsheet row (blank text lines are counted as rows).
    fn next(&mut self, record: &mut csv::ByteRecord, file: &str) -> Result<Option<usize>> {
        match self {
            Source::Text {
                reader, row_number, ..
            } => {
                let more = reader
                    .read_byte_record(record)
                    .map_err(|e| text_failure(file, reader.get_ref().state(), e))?;
                if !more {
                    if reader.get_ref().state().unclosed().is_some() {
                        return Err(Problems::one(
                            file,
                            (*row_number).max(1),
                            crate::sheet::UNCLOSED_QUOTE,
                        ));
                    }
                    let read = reader.position().record() as usize;
                    let counted = reader.get_ref().state().records();
                    if read != counted {
                        return Err(Error::InvalidSheet {
                            file: file.to_string(),
                            problems: vec![CellProblem::file(crate::sheet::records_differ(
                                read, counted,
                            ))],
                        });
                    }
                    return Ok(None);
                }
                // Spreadsheet row: blank lines before the record count as rows.
                let start = record.position().map(|p| p.line()).unwrap_or(0);
                let consumed = reader.position().line().saturating_sub(start) as usize;
                let embedded: usize = record
                    .iter()
                    .map(|f| f.iter().filter(|&&c| c == b'\n').count())
                    .sum();
                *row_number += consumed.saturating_sub(1 + embedded) + 1;
                Ok(Some(*row_number))
            }
            Source::Workbook { rows } => Ok(rows.next().map(|(row, r)| {
                *record = r;
                row
            })),
        }
    }
}

/// A failure of the text reader: a line over the length limit is the file's fault (with
/// its line); anything else is the system's.
fn text_failure(file: &str, state: &crate::sheet::QuoteState, e: csv::Error) -> Error {
    match state.too_long() {
        Some(line) => Problems::one(file, line, crate::sheet::line_too_long(None)),
        None => Error::io(format!("reading {file}"), std::io::Error::other(e)),
    }
}

/// The file opened: its header, and the source of its rows.
struct Opened<'a> {
    format: SheetFormat,
    worksheet: Option<String>,
    /// What the reader passed over or could not check (a workbook's hidden worksheets,
    /// its formulas).
    notes: Vec<crate::Warning>,
    header: Vec<String>,
    source: Source<'a>,
}

/// Where an item file's bytes come from, and whether it is a regular file (which the fast
/// path may open again).
type Handle<'a> = (Box<dyn Read + 'a>, bool);

fn open<'a>(path: &Path, bytes: Option<&'a [u8]>, options: &ItemReadOptions) -> Result<Opened<'a>> {
    let file = path.display().to_string();
    let (mut handle, regular): Handle<'_> = match bytes {
        Some(b) => (Box::new(b), false),
        None => {
            let f = std::fs::File::open(path).map_err(|e| match e.kind() {
                std::io::ErrorKind::NotFound => Error::setting(
                    Setting::ItemFile,
                    format!("{file}: no such file; check the path of the item data"),
                ),
                _ => Error::io(format!("reading {file}"), e),
            })?;
            let regular = f.metadata().map(|m| m.is_file()).unwrap_or(false);
            (Box::new(f), regular)
        }
    };
    // Peek at the start: BOM, encoding, workbook or text, delimiter. Nothing is sought
    // back, so a pipe reads as well as a file.
    let mut head = Vec::with_capacity(64 * 1024);
    (&mut handle)
        .take(64 * 1024)
        .read_to_end(&mut head)
        .map_err(|e| Error::io(format!("reading {file}"), e))?;
    if is_workbook(&head) {
        return open_workbook(&file, head, handle, options);
    }
    let bom = check_text_start(&file, &head, options)?;
    let delimiter = options
        .delimiter
        .unwrap_or_else(|| detect_delimiter(&head[bom..]));
    open_text(&file, head, (handle, regular), bom, delimiter)
}

/// Check the start of a text file (not UTF-16, not empty, no worksheet asked for) and
/// return the length of its byte-order mark.
fn check_text_start(file: &str, head: &[u8], options: &ItemReadOptions) -> Result<usize> {
    if head.starts_with(b"\xFF\xFE") || head.starts_with(b"\xFE\xFF") {
        return Err(Problems::one(
            file,
            1,
            "the file is UTF-16 encoded; save it as UTF-8",
        ));
    }
    let bom = if head.starts_with(b"\xEF\xBB\xBF") {
        3
    } else {
        0
    };
    if head[bom..].iter().all(u8::is_ascii_whitespace) {
        return Err(Problems::one(
            file,
            1,
            "the file is empty; item data need a header row of item names and one row per \
             respondent",
        ));
    }
    if options.worksheet.is_some() {
        return Err(Error::setting(
            Setting::Worksheet,
            msg![
                Setting::Worksheet,
                format!(" applies to workbooks (.xlsx, .xls, .ods); {file} is a text file")
            ],
        ));
    }
    Ok(bom)
}

/// Open delimited text from its peeked start and the rest of the handle: the header
/// read, the reader at the first data row.
fn open_text<'a>(
    file: &str,
    head: Vec<u8>,
    (handle, regular): Handle<'a>,
    bom: usize,
    delimiter: u8,
) -> Result<Opened<'a>> {
    let body: Box<dyn BufRead + 'a> = Box::new(BufReader::with_capacity(
        1 << 20,
        Cursor::new(head).chain(handle),
    ));
    let mut body = body;
    // Skip the BOM.
    let mut skip = [0u8; 3];
    body.read_exact(&mut skip[..bom])
        .map_err(|e| Error::io(format!("reading {file}"), e))?;
    let mut reader = Box::new(
        csv::ReaderBuilder::new()
            .delimiter(delimiter)
            .has_headers(false)
            .flexible(true)
            .from_reader(TrackQuotes::new(body, delimiter)),
    );
    let mut record = csv::ByteRecord::new();
    let more = reader
        .read_byte_record(&mut record)
        .map_err(|e| text_failure(file, reader.get_ref().state(), e))?;
    if !more {
        return Err(Problems::one(file, 1, "the file has no header row"));
    }
    let start = record.position().map(|p| p.line()).unwrap_or(1);
    let row_number = (reader.position().line().saturating_sub(start) as usize).max(1);
    let data_start = regular.then(|| bom as u64 + reader.position().byte());
    let header = record
        .iter()
        .map(|c| String::from_utf8_lossy(c).trim().to_string())
        .collect();
    Ok(Opened {
        format: SheetFormat::Delimited(delimiter),
        worksheet: None,
        notes: Vec::new(),
        header,
        source: Source::Text {
            reader,
            delimiter,
            data_start,
            row_number,
        },
    })
}

fn open_workbook<'a>(
    file: &str,
    mut head: Vec<u8>,
    mut rest: Box<dyn Read + 'a>,
    options: &ItemReadOptions,
) -> Result<Opened<'a>> {
    if options.delimiter.is_some() {
        return Err(Error::setting(
            Setting::Delimiter,
            msg![
                Setting::Delimiter,
                format!(" applies to text files; {file} is a workbook")
            ],
        ));
    }
    let max = crate::limits::MAX_FILE_BYTES;
    (&mut rest)
        .take(max + 1 - head.len() as u64)
        .read_to_end(&mut head)
        .map_err(|e| Error::io(format!("reading {file}"), e))?;
    if head.len() as u64 > max {
        return Err(Problems::one(
            file,
            1,
            format!(
                "the workbook is larger than {} MB; export the sheet as CSV",
                max >> 20
            ),
        ));
    }
    let book = WorkbookRows::read(file, head, options.worksheet.as_deref(), options.workbook)?;
    let worksheet = Some(book.worksheet.clone());
    let notes = book.notes.clone();
    let (header, _, rows) = book.into_table();
    Ok(Opened {
        format: SheetFormat::Workbook,
        worksheet,
        notes,
        header,
        source: Source::Workbook {
            rows: rows.into_iter(),
        },
    })
}

/// Which columns are items, and how each is treated.
struct Columns {
    /// File columns of the items, in the order used.
    items: Vec<usize>,
    names: Vec<String>,
    reversed: Vec<bool>,
    /// Columns without a name (must stay empty).
    unnamed: Vec<usize>,
    /// Text columns left out of the items as identifier candidates.
    id_columns: Vec<usize>,
}

fn choose_columns(
    file: &str,
    header: &[String],
    first_row: Option<&csv::ByteRecord>,
    decimal_comma: bool,
    options: &ItemReadOptions,
) -> Result<Columns> {
    let setting = options.columns_setting;
    check_unique_names(file, header)?;
    let unnamed: Vec<usize> = (0..header.len())
        .filter(|&i| header[i].is_empty())
        .collect();
    let mut id_columns = Vec::new();
    let items: Vec<usize> = match &options.items {
        Some(names) => chosen_items(file, header, names, setting)?,
        // Without chosen items every named column is an item, except text columns (in the
        // first row), which are identifier candidates; unnamed columns must stay empty.
        None => (0..header.len())
            .filter(|&i| !header[i].is_empty())
            .filter(|&i| {
                let cell = first_row.and_then(|r| r.get(i)).unwrap_or(b"").trim_ascii();
                let text = !missing_cell(cell)
                    && parse_response(cell, decimal_comma).is_err()
                    && cell.first().is_some_and(u8::is_ascii_alphabetic);
                if text {
                    id_columns.push(i);
                }
                !text
            })
            .collect(),
    };
    if items.len() < 2 {
        // A table of occasions or raters says so in its own words.
        let (one, many, needs) = match setting {
            Setting::IccColumns => (
                "column",
                "columns",
                "an intraclass correlation needs at least two columns (occasions or raters)",
            ),
            _ => (
                "item column",
                "item columns",
                "reliability needs at least 2 items",
            ),
        };
        return Err(Error::setting(
            setting,
            format!(
                "{file}: {} selected; {needs}",
                crate::format::count(items.len() as u64, one, many)
            ),
        ));
    }
    let names: Vec<String> = items.iter().map(|&i| header[i].clone()).collect();
    if let Some(i) = names.iter().position(String::is_empty) {
        return Err(Problems::one(
            file,
            1,
            format!("column {} has no name in the header", items[i] + 1),
        ));
    }
    let reversed = reversed_items(&names, options)?;
    Ok(Columns {
        items,
        names,
        reversed,
        unnamed,
        id_columns,
    })
}

/// Fail when a column name appears twice in the header (in time linear in the columns:
/// each name is looked up by the key [`same_name`] compares by), or when the header has
/// more columns than [`MAX_COLUMNS`](crate::limits::MAX_COLUMNS).
fn check_unique_names(file: &str, header: &[String]) -> Result<()> {
    let max = crate::limits::MAX_COLUMNS;
    if header.len() > max {
        return Err(Problems::one(
            file,
            1,
            format!(
                "the header has {} columns, more than the {} an item file may have (a bound on \
                 memory and time, see docs/limits.md); keep the item columns in a file of \
                 their own",
                crate::format::thousands(header.len() as u64),
                crate::format::thousands(max as u64)
            ),
        ));
    }
    let mut first: HashMap<String, usize> = HashMap::with_capacity(header.len());
    for (i, h) in header.iter().enumerate() {
        if h.is_empty() {
            continue;
        }
        if let Some(&j) = first.get(&name_key(h)) {
            return Err(Problems::one(
                file,
                1,
                format!(
                    "the column name \"{}\" appears twice (columns {} and {}); every column \
                     needs its own name",
                    crate::format::quoted(h, 200),
                    j + 1,
                    i + 1
                ),
            ));
        }
        first.insert(name_key(h), i);
    }
    Ok(())
}

/// The key two names are the same by (see [`same_name`]): trimmed, in lower case.
fn name_key(name: &str) -> String {
    name.trim().to_lowercase()
}

/// The file columns of the items the user named, each named once and present.
fn chosen_items(
    file: &str,
    header: &[String],
    names: &[String],
    setting: Setting,
) -> Result<Vec<usize>> {
    // Names are unique by their key (checked before), so one lookup finds a column.
    let by_key: HashMap<String, usize> = header
        .iter()
        .enumerate()
        .filter(|(_, h)| !h.is_empty())
        .map(|(i, h)| (name_key(h), i))
        .collect();
    let mut idx = Vec::new();
    let mut taken = std::collections::HashSet::new();
    let mut unknown = Vec::new();
    for n in names {
        match by_key.get(&name_key(n)).copied() {
            Some(i) if !taken.insert(i) => {
                return Err(Error::setting(
                    setting,
                    msg![setting, format!(" names {n} twice")],
                ));
            }
            Some(i) => idx.push(i),
            None => unknown.push(n.clone()),
        }
    }
    if !unknown.is_empty() {
        return Err(Problems::one(
            file,
            1,
            msg![
                setting,
                format!(
                    " names {} the file does not have: {} (its columns are: {})",
                    if unknown.len() == 1 {
                        "a column"
                    } else {
                        "columns"
                    },
                    unknown.join(", "),
                    crate::format::quoted(&header.join(", "), 200)
                )
            ],
        ));
    }
    Ok(idx)
}

/// Which of the items are reverse-keyed (each must be an item, and the response scale
/// must be given).
fn reversed_items(names: &[String], options: &ItemReadOptions) -> Result<Vec<bool>> {
    let mut reversed = vec![false; names.len()];
    for r in &options.reverse {
        let Some(pos) = names.iter().position(|n| same_name(n, r)) else {
            return Err(Error::setting(
                Setting::ReverseKeyed,
                msg![
                    given(Setting::ReverseKeyed, r.clone()),
                    format!(": not among the items used ({})", names.join(", "))
                ],
            ));
        };
        reversed[pos] = true;
    }
    if !options.reverse.is_empty() && options.scale.is_none() {
        return Err(Error::setting(
            Setting::ReverseKeyed,
            msg![
                Setting::ReverseKeyed,
                " needs ",
                Setting::ResponseMin,
                " and ",
                Setting::ResponseMax,
                " (a reversed response is min + max − x)"
            ],
        ));
    }
    Ok(reversed)
}

/// [`read_items`], with the parallel fast path (in parts of the given size) or without it;
/// tests compare the two.
/// An SPSS file's data as text, when `path` (or `bytes`) is one; `None` for any other file.
#[cfg(feature = "spss")]
fn spss_text(path: &Path, file: &str, bytes: Option<&[u8]>) -> Result<Option<super::sav::SavText>> {
    use std::io::Read;
    let io = |e: std::io::Error| Error::Io {
        context: format!("reading {file}"),
        source: e,
    };
    if let Some(b) = bytes {
        return if super::sav::is_sav(b) {
            super::sav::sav_to_text(file, b).map(Some)
        } else {
            Ok(None)
        };
    }
    let Ok(mut f) = std::fs::File::open(path) else {
        return Ok(None); // the text reader reports it
    };
    let mut magic = [0u8; 4];
    if f.read_exact(&mut magic).is_err() || !super::sav::is_sav(&magic) {
        return Ok(None);
    }
    let size = f.metadata().map_err(io)?.len();
    if size > crate::limits::MAX_FILE_BYTES {
        return Err(Error::cannot(format!(
            "{file} is larger than {} MB, the most read",
            crate::limits::MAX_FILE_BYTES >> 20
        )));
    }
    let all = std::fs::read(path).map_err(io)?;
    super::sav::sav_to_text(file, &all).map(Some)
}

fn read_items_with(
    path: &Path,
    bytes: Option<&[u8]>,
    options: &ItemReadOptions,
    fast_parts: Option<usize>,
) -> Result<ItemData> {
    let file = path.display().to_string();
    #[cfg(feature = "spss")]
    if let Some(sav) = spss_text(path, &file, bytes)? {
        let mut data = read_items_with(path, Some(&sav.text), options, None)?;
        data.value_labels = sav.value_labels;
        data.user_missing_cells = Some(sav.user_missing_cells);
        return Ok(data);
    }
    let Opened {
        format,
        worksheet,
        notes,
        header,
        mut source,
    } = open(path, bytes, options)?;
    let with_notes = |mut data: ItemData| {
        data.notes.splice(0..0, notes.iter().cloned());
        data
    };
    let decimal_comma = format.decimal_comma();
    // The first data row (to tell identifier columns) is read here and handed on.
    let mut first = csv::ByteRecord::new();
    let first_row = source.next(&mut first, &file)?;
    let cols = choose_columns(
        &file,
        &header,
        first_row.map(|_| &first),
        decimal_comma,
        options,
    )?;
    let k = cols.names.len();
    let width = header.len();
    // Clean text files under listwise deletion take the parallel fast path; anything it
    // does not handle is read below, from the first data row, by the careful reader.
    if let (
        Some(part_bytes),
        Missing::Listwise,
        Source::Text {
            delimiter,
            data_start: Some(start),
            ..
        },
    ) = (fast_parts, options.missing, &source)
    {
        let layout = super::fast::Layout {
            width,
            slot_of: slots(&cols, width),
            unnamed: &cols.unnamed,
            k,
            delimiter: *delimiter,
            decimal_comma,
            scale: options.scale,
            reversed: &cols.reversed,
            missing_codes: &options.missing_codes,
            id_columns: &cols.id_columns,
            keep_rows: options.keep_rows,
            part_bytes,
        };
        if let Some(t) = read_fast(path, &file, *start, &layout)? {
            return finish(file, format, worksheet, cols, &header, t, None, options)
                .map(with_notes);
        }
    }
    let careful = Careful {
        cols: &cols,
        options,
        width,
        decimal_comma,
        pairwise: (options.missing == Missing::Pairwise).then(|| Pairwise::new(k)),
        values: vec![0.0; k],
        optional: vec![None; k],
    };
    let (t, pairwise) = careful.read_all(&file, &mut source, first, first_row)?;
    finish(file, format, worksheet, cols, &header, t, pairwise, options).map(with_notes)
}

/// For each column of the file, its item slot (None: not an item).
fn slots(cols: &Columns, width: usize) -> Vec<Option<usize>> {
    let mut slot_of = vec![None; width];
    for (slot, &c) in cols.items.iter().enumerate() {
        slot_of[c] = Some(slot);
    }
    slot_of
}

/// The tallies from the fast path, reading the file again from the first data row at
/// byte `start`; `None` when the fast path declines the file.
fn read_fast(
    path: &Path,
    file: &str,
    start: u64,
    layout: &super::fast::Layout<'_>,
) -> Result<Option<Tallies>> {
    let mut again =
        std::fs::File::open(path).map_err(|e| Error::io(format!("reading {file}"), e))?;
    again
        .seek(SeekFrom::Start(start))
        .map_err(|e| Error::io(format!("reading {file}"), e))?;
    let outcome = super::fast::read_rows(again, layout)
        .map_err(|e| Error::io(format!("reading {file}"), e))?;
    Ok(outcome.ok())
}

/// The careful reader: one record at a time, every problem located.
struct Careful<'a> {
    cols: &'a Columns,
    options: &'a ItemReadOptions,
    width: usize,
    decimal_comma: bool,
    pairwise: Option<Pairwise>,
    values: Vec<f64>,
    optional: Vec<Option<f64>>,
}

/// One item's cell in a row, as the careful reader reads it.
enum Response {
    /// Empty, a missing mark, or a missing-value code.
    Missing,
    /// Not a number, or off the response scale (the problem is reported).
    Bad,
    /// The response, reverse-keyed where asked.
    Value(f64),
}

impl Careful<'_> {
    /// Read every row from the first data row on: the tallies and the pairwise sums, or
    /// all the problems found.
    fn read_all(
        mut self,
        file: &str,
        source: &mut Source,
        first: csv::ByteRecord,
        first_row: Option<usize>,
    ) -> Result<(Tallies, Option<Pairwise>)> {
        let k = self.cols.names.len();
        let mut t = Tallies::new(k, self.options.keep_rows, self.cols.id_columns.len());
        let mut problems = Problems {
            file: file.to_string(),
            listed: Vec::new(),
            unlisted: 0,
        };
        let mut record = first;
        let mut row = first_row;
        while let Some(r) = row {
            self.row(r, &record, &mut t, &mut problems);
            row = source.next(&mut record, file)?;
        }
        if problems.unlisted > 0 {
            let more = problems.unlisted;
            problems.listed.push(CellProblem::file(format!(
                "… and {} of the same kinds",
                crate::format::count(more as u64, "more problem", "more problems")
            )));
        }
        if !problems.listed.is_empty() {
            return Err(Error::InvalidSheet {
                file: problems.file,
                problems: problems.listed,
            });
        }
        Ok((t, self.pairwise.take()))
    }

    fn row(
        &mut self,
        row: usize,
        record: &csv::ByteRecord,
        t: &mut Tallies,
        problems: &mut Problems,
    ) {
        if record.iter().all(|c| c.iter().all(u8::is_ascii_whitespace)) {
            return;
        }
        t.rows_read += 1;
        if !self.check_shape(row, record, problems) {
            return;
        }
        for (j, &c) in self.cols.id_columns.iter().enumerate() {
            t.ids[j].push(cell_hash(record.get(c).unwrap_or(b"").trim_ascii()));
        }
        let mut complete = true;
        let mut bad = false;
        for (slot, &col) in self.cols.items.iter().enumerate() {
            match self.response(row, slot, record.get(col), problems) {
                Response::Bad => bad = true,
                Response::Missing => {
                    complete = false;
                    t.missing_cells += 1;
                    self.optional[slot] = None;
                }
                Response::Value(x) => {
                    self.values[slot] = x;
                    self.optional[slot] = Some(x);
                    t.answer(slot, x);
                }
            }
        }
        if bad {
            return;
        }
        if let Some(p) = self.pairwise.as_mut() {
            p.add(&self.optional);
        }
        if complete {
            t.listwise.add(&self.values);
            if let Some(r) = t.rows.as_mut() {
                r.extend_from_slice(&self.values);
            }
        }
    }

    /// Report a row of the wrong width (false: the row is left out) and values in
    /// unnamed columns.
    fn check_shape(&self, row: usize, record: &csv::ByteRecord, problems: &mut Problems) -> bool {
        let width = self.width;
        if record.len() != width
            && !(record.len() > width && record.iter().skip(width).all(|c| c.is_empty()))
        {
            problems.push(CellProblem::row(
                row,
                format!(
                    "the row has {} cells but the header has {width} columns",
                    record.len()
                ),
            ));
            return false;
        }
        for &u in &self.cols.unnamed {
            if record.get(u).is_some_and(|c| !c.trim_ascii().is_empty()) {
                problems.push(CellProblem::cell(
                    row,
                    format!("{} (unnamed)", u + 1),
                    "the cell holds a value but its column has no name in the header",
                ));
            }
        }
        true
    }

    /// Read the cell of item `slot`, reporting a value that is not a number or lies off
    /// the response scale.
    fn response(
        &self,
        row: usize,
        slot: usize,
        cell: Option<&[u8]>,
        problems: &mut Problems,
    ) -> Response {
        let trimmed = cell.unwrap_or(b"").trim_ascii();
        if missing_cell(trimmed) {
            return Response::Missing;
        }
        let mut x = match parse_response(trimmed, self.decimal_comma) {
            Ok(x) if is_missing_code(x, &self.options.missing_codes) => return Response::Missing,
            Ok(x) => x,
            Err(e) => {
                problems.push(CellProblem::cell(
                    row,
                    self.cols.names[slot].clone(),
                    format!("{e}; a response must be a number (mark a missing one empty, NA or .)"),
                ));
                return Response::Bad;
            }
        };
        if let Some((lo, hi)) = self.options.scale {
            if x < lo || x > hi {
                problems.push(CellProblem::cell(
                    row,
                    self.cols.names[slot].clone(),
                    format!("{x} lies outside the response scale {lo} to {hi}"),
                ));
                return Response::Bad;
            }
            if self.cols.reversed[slot] {
                x = lo + hi - x;
            }
        }
        Response::Value(x)
    }
}

/// The item data from the tallies of one pass: identifier columns judged, notes made.
#[allow(clippy::too_many_arguments)]
fn finish(
    file: String,
    format: SheetFormat,
    worksheet: Option<String>,
    cols: Columns,
    header: &[String],
    t: Tallies,
    pairwise: Option<Pairwise>,
    options: &ItemReadOptions,
) -> Result<ItemData> {
    if t.rows_read == 0 {
        return Err(Problems::one(
            &file,
            1,
            "the file has a header row but no respondents below it",
        ));
    }
    let (identifiers, mut notes) = identifiers(&file, header, &cols, &t, options)?;
    let names = &cols.names;
    if let Some(i) = t.seen.iter().position(|&c| c == 0) {
        return Err(Error::cannot(msg![
            format!(
                "{file}: column {} has no answers at all; leave it out with ",
                names[i]
            ),
            options.columns_setting
        ]));
    }
    for (i, name) in names.iter().enumerate() {
        if t.counts_like_ids(i) {
            notes.push(crate::Warning::IdentifierColumn {
                column: name.clone(),
                first: t.first[i].unwrap_or(1.0),
                last: t.last[i].unwrap_or(1.0),
            });
        }
    }
    let moments = match &pairwise {
        Some(p) => p.finish(),
        None => t.listwise.finish(),
    }
    .ok_or_else(|| {
        Error::cannot(format!(
            "{file}: fewer than 2 respondents {} ({} read, {} complete)",
            match options.missing {
                Missing::Listwise => "answered every item",
                Missing::Pairwise => "answered some pair of items",
            },
            crate::format::count(t.rows_read, "row", "rows"),
            t.listwise.n()
        ))
    })?;
    if options.scale.is_none() {
        extreme_responses(names, &t, &mut notes);
    }
    let Columns {
        names, reversed, ..
    } = cols;
    Ok(ItemData {
        notes,
        file,
        format,
        worksheet,
        names,
        reversed,
        rows_read: t.rows_read,
        complete_rows: t.listwise.n(),
        missing_cells: t.missing_cells,
        missing: options.missing,
        moments,
        rows: t.rows,
        identifiers,
        missing_codes: options.missing_codes.clone(),
        value_labels: Vec::new(),
        user_missing_cells: None,
    })
}

/// The text columns left out as identifiers, with a note for each; a text column is an
/// identifier when every respondent has a different value in it, and an error otherwise.
fn identifiers(
    file: &str,
    header: &[String],
    cols: &Columns,
    t: &Tallies,
    options: &ItemReadOptions,
) -> Result<(Vec<String>, Vec<crate::Warning>)> {
    let mut notes = Vec::new();
    let mut identifiers = Vec::new();
    for (j, &c) in cols.id_columns.iter().enumerate() {
        let mut h = t.ids[j].clone();
        h.sort_unstable();
        let unique = h.len() as u64 == t.rows_read && h.windows(2).all(|w| w[0] != w[1]);
        if !unique {
            let suggested: Vec<&str> = cols
                .names
                .iter()
                .enumerate()
                .filter(|(i, _)| !t.counts_like_ids(*i))
                .map(|(_, n)| n.as_str())
                .collect();
            return Err(Problems::one(
                file,
                2,
                msg![
                    format!(
                        "column {} holds text, so it is not an item, and its values repeat, so \
                         it is not a respondent identifier either; name the item columns with ",
                        header[c]
                    ),
                    given(options.columns_setting, suggested.join(","))
                ],
            ));
        }
        identifiers.push(header[c].clone());
        notes.push(crate::Warning::IdentifierLeftOut {
            column: header[c].clone(),
        });
    }
    Ok((identifiers, notes))
}

/// Note an answer far beyond all the others (e.g. −99 or 999 missing-value codes): its
/// gap to the next answer is more than twice the range of the rest.
fn extreme_responses(names: &[String], t: &Tallies, notes: &mut Vec<crate::Warning>) {
    for (i, name) in names.iter().enumerate() {
        let ([l0, l1], [h0, h1]) = (t.lowest[i], t.highest[i]);
        if t.seen[i] < 4 {
            continue;
        }
        if l1 - l0 > 2.0 * (h0 - l1) && h0 > l1 {
            notes.push(crate::Warning::ExtremeResponse {
                column: name.clone(),
                value: l0,
            });
        } else if h0 - h1 > 2.0 * (h1 - l0) && h1 > l0 {
            notes.push(crate::Warning::ExtremeResponse {
                column: name.clone(),
                value: h0,
            });
        }
    }
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
        let fast = read_items_with(path, None, options, Some(997));
        let careful = read_items_with(path, None, options, None);
        match (fast, careful) {
            (Ok(a), Ok(b)) => {
                assert_eq!(a.rows_read, b.rows_read);
                assert_eq!(a.complete_rows, b.complete_rows);
                assert_eq!(a.missing_cells, b.missing_cells);
                assert_eq!(a.notes, b.notes);
                assert_eq!(a.rows, b.rows);
                assert_eq!(a.identifiers, b.identifiers);
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
        // A declared missing-value code counts as missing in both readers.
        let coded = ItemReadOptions {
            missing_codes: vec![99.0],
            ..ItemReadOptions::default()
        };
        let d = both(&p, &coded).unwrap();
        assert!(
            !d.notes
                .iter()
                .any(|w| matches!(w, crate::Warning::ExtremeResponse { .. }))
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

    /// A text column with a different value for every respondent is left out as an
    /// identifier (both readers); one whose values repeat is an error whose hint leaves
    /// the counting column out (issue 10).
    #[test]
    fn identifier_columns_are_left_out() {
        let p = write(
            "ids.csv",
            "code,n,a,b,c\nR01,1,1,2,3\nR02,2,2,2,3\nR03,3,3,4,4\nR04,4,4,4,5\nR05,5,5,4,4\n",
        );
        let d = both(&p, &ItemReadOptions::default()).unwrap();
        assert_eq!(d.identifiers, ["code"]);
        assert_eq!(d.names, ["n", "a", "b", "c"]);
        assert!(d.notes.iter().any(
            |w| matches!(w, crate::Warning::IdentifierLeftOut { column } if column == "code")
        ));
        let p = write(
            "groups.csv",
            "group,n,a,b,c\nA,1,3,2,3\nB,2,2,2,3\nA,3,3,4,4\nB,4,4,4,5\nA,5,4,3,2\n",
        );
        let err = both(&p, &ItemReadOptions::default()).unwrap_err();
        assert!(err.contains("column group holds text"), "{err}");
        assert!(err.contains("\"a,b,c\""), "{err}");
    }
}
