//! The coding sheet: one row per coded study, read from CSV and checked cell by cell.
//!
//! Reading happens in two steps. [`read_coding_sheet`] parses every row into a
//! [`StudyRecord`] or a list of [`CellProblem`]s (it fails at once only for problems
//! with the file as a whole: empty, no header, a missing or duplicated column). The
//! transform's own requirements are checked later, by [`crate::benchmark`], so that all
//! problems of a file are reported together.

mod cells;
mod ods_scan;
mod quotes;
mod read;
mod schema;
pub mod template;
mod workbook;

pub use workbook::{WorkbookLimits, WorkbookRows, cell_name, panic_is_contained};

pub use cells::{is_missing, parse_number};
pub use quotes::{QuoteState, TrackQuotes, line_too_long};
pub use read::{
    DELIMITERS, SheetFormat, UNCLOSED_QUOTE, delimiter_name, detect_delimiter, is_workbook,
    parse_delimiter, read_whole, records_differ,
};
pub use schema::{CoefType, ColumnMap, MAX_ITEMS, MAX_LABEL_CHARS, MAX_N, Role, SdMetric};

use crate::error::{CellProblem, Error, Result};
use crate::setting::msg;
use crate::setting::{Setting, given};
use std::collections::BTreeMap;
use std::path::Path;

/// How to read a coding sheet.
#[derive(Debug, Clone, Default)]
pub struct SheetOptions {
    /// The delimiter; detected from the header row when `None`.
    pub delimiter: Option<u8>,
    /// The sheet's own names for the standard columns.
    pub columns: ColumnMap,
    /// The worksheet to read from a workbook (the first visible one when `None`).
    pub worksheet: Option<String>,
    /// How much a workbook may hold.
    pub workbook: WorkbookLimits,
}

/// One coded study as read from the sheet (values checked for type and range, not yet
/// against a transform's requirements).
#[derive(Debug, Clone, PartialEq)]
pub struct StudyRecord {
    /// Spreadsheet row number (header = 1).
    pub row: usize,
    /// The study label, or `row N` when the sheet gives none.
    pub label: String,
    /// True when the label came from the sheet.
    pub label_given: bool,
    /// The sample the row's coefficient comes from, when the sheet says.
    pub sample: Option<String>,
    /// The cluster the row's sample belongs to, when the sheet says.
    pub cluster: Option<String>,
    /// Reported coefficient (or effect).
    pub coef: f64,
    /// Kind of coefficient.
    pub coef_type: CoefType,
    /// Sample size.
    pub n: Option<u64>,
    /// Number of items.
    pub items: Option<u32>,
    /// Score standard deviation.
    pub sd: Option<f64>,
    /// Metric of `sd`.
    pub sd_metric: Option<SdMetric>,
    /// Lowest possible item response.
    pub scale_min: Option<f64>,
    /// Highest possible item response.
    pub scale_max: Option<f64>,
    /// Sampling variance of an already-transformed effect.
    pub var: Option<f64>,
    /// Values of the other columns (possible moderators), aligned with
    /// [`CodingSheet::extra_columns`]; `None` for a missing cell.
    pub extra: Vec<Option<String>>,
}

/// The cells that could be read from a row with problems.
#[derive(Debug, Clone, PartialEq)]
pub struct PartialRecord {
    /// Spreadsheet row.
    pub row: usize,
    /// The coefficient, if it parsed.
    pub coef: Option<f64>,
    /// The coefficient type, if it parsed.
    pub coef_type: Option<CoefType>,
    /// The sample size, if it parsed.
    pub n: Option<u64>,
    /// The number of items, if it parsed.
    pub items: Option<u32>,
    /// The sampling variance, if it parsed.
    pub var: Option<f64>,
    /// The other columns' values, as in [`StudyRecord::extra`].
    pub extra: Vec<Option<String>>,
    /// Columns whose problems are already reported.
    pub failed: Vec<Role>,
}

/// A coding sheet after reading: the rows that parsed, and the problems of the rest.
#[derive(Debug, Clone)]
pub struct CodingSheet {
    /// The file as the user named it.
    pub file: String,
    /// How the file stores its cells.
    pub format: SheetFormat,
    /// The worksheet read, for a workbook.
    pub worksheet: Option<String>,
    /// Every worksheet of a workbook, in its order (empty for text).
    pub worksheets: Vec<String>,
    /// Header name of each standard column present.
    pub columns: BTreeMap<Role, String>,
    /// Names of the other columns, in sheet order.
    pub extra_columns: Vec<String>,
    /// Rows that parsed.
    pub records: Vec<StudyRecord>,
    /// Problems of rows that did not parse (a row may have several).
    pub problems: Vec<CellProblem>,
    /// What could be read of the rows that did not parse, so that the transform's checks
    /// can report their other problems too.
    pub partial: Vec<PartialRecord>,
    /// Number of non-empty data rows in the file.
    pub rows_read: usize,
    /// Entirely empty rows between data rows.
    pub empty_rows: Vec<usize>,
    /// What the reader passed over or could not check (a workbook's hidden worksheets,
    /// its formulas).
    pub reading_notes: Vec<crate::Warning>,
}

/// A column of the sheet as a name can refer to it: a standard column or another one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ColumnRef {
    /// A standard column.
    Standard(Role),
    /// Another column, by its position among the sheet's other columns.
    Other(usize),
}

/// Whether two names (of columns, levels or values) are the same as the reader means
/// them: equal once surrounding spaces are dropped and case is ignored. The one rule for
/// every such match.
pub fn same_name(a: &str, b: &str) -> bool {
    let (a, b) = (a.trim(), b.trim());
    a == b || a.to_lowercase() == b.to_lowercase()
}

/// Find a column by name among the standard columns (by their standard name or the
/// sheet's own header for them) and the other columns.
pub fn find_column(
    columns: &BTreeMap<Role, String>,
    extra: &[String],
    name: &str,
) -> Option<ColumnRef> {
    if let Some(i) = extra.iter().position(|c| same_name(c, name)) {
        return Some(ColumnRef::Other(i));
    }
    columns
        .iter()
        .find(|(role, header)| same_name(role.name(), name) || same_name(header, name))
        .map(|(role, _)| ColumnRef::Standard(*role))
}

impl StudyRecord {
    /// The record's value in a column, as text (`None` when the cell is empty).
    pub fn value(&self, column: ColumnRef) -> Option<String> {
        let num = |x: Option<f64>| x.map(|v| v.to_string());
        match column {
            ColumnRef::Other(i) => self.extra.get(i).cloned().flatten(),
            ColumnRef::Standard(role) => match role {
                Role::Study => self.label_given.then(|| self.label.clone()),
                Role::Sample => self.sample.clone(),
                Role::Cluster => self.cluster.clone(),
                Role::Coef => Some(self.coef.to_string()),
                Role::N => self.n.map(|n| n.to_string()),
                Role::Items => self.items.map(|k| k.to_string()),
                Role::CoefType => Some(self.coef_type.name().to_string()),
                Role::Sd => num(self.sd),
                Role::SdMetric => self.sd_metric.map(|m| m.name().to_string()),
                Role::ScaleMin => num(self.scale_min),
                Role::ScaleMax => num(self.scale_max),
                Role::Var => num(self.var),
            },
        }
    }
}

/// One condition of a subset: the rows whose value in `column` is `value` (compared as
/// [`same_name`] compares).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SubsetRule {
    /// The column (standard or other).
    pub column: String,
    /// The value kept.
    pub value: String,
}

/// What a coding sheet was and how much of it was used: every output states it.
#[derive(Debug, Clone, PartialEq)]
pub struct SheetSummary {
    /// The file as the user named it.
    pub file: String,
    /// How it stores its cells.
    pub format: SheetFormat,
    /// The worksheet read, for a workbook.
    pub worksheet: Option<String>,
    /// Every worksheet of a workbook, in its order (empty for text).
    pub worksheets: Vec<String>,
    /// Non-empty data rows in the file (or worksheet).
    pub rows_read: usize,
    /// The subset analysed (empty: every row).
    pub subset: Vec<SubsetRule>,
    /// Rows left aside because they are outside the subset.
    pub rows_outside_subset: usize,
}

impl SheetSummary {
    /// The subset in words ("population = nurses and year = 2020"), when there is one.
    pub fn subset_words(&self) -> Option<String> {
        if self.subset.is_empty() {
            return None;
        }
        let rules: Vec<String> = self
            .subset
            .iter()
            .map(|r| format!("{} = {}", r.column, r.value))
            .collect();
        Some(rules.join(" and "))
    }
}

impl CodingSheet {
    /// What the sheet was and how much of it is used (before any subset).
    pub fn summary(&self) -> SheetSummary {
        SheetSummary {
            file: self.file.clone(),
            format: self.format,
            worksheet: self.worksheet.clone(),
            worksheets: self.worksheets.clone(),
            rows_read: self.rows_read,
            subset: Vec::new(),
            rows_outside_subset: 0,
        }
    }

    /// Keep only the rows that meet every rule (rows that did not parse are kept when
    /// they cannot be judged, so that their problems are still reported). Returns how
    /// many rows were set aside; a rule naming no column of the sheet is an error.
    pub fn keep_subset(&mut self, rules: &[SubsetRule]) -> Result<usize> {
        if rules.is_empty() {
            return Ok(0);
        }
        let mut refs = Vec::with_capacity(rules.len());
        for r in rules {
            let c =
                find_column(&self.columns, &self.extra_columns, &r.column).ok_or_else(|| {
                    let mut names: Vec<String> =
                        self.columns.keys().map(|r| r.name().to_string()).collect();
                    names.extend(self.extra_columns.iter().cloned());
                    Error::setting(
                        Setting::Subset,
                        msg![
                            given(Setting::Subset, format!("{}={}", r.column, r.value)),
                            format!(
                                ": the sheet has no column {} (its columns: {})",
                                r.column,
                                names.join(", ")
                            )
                        ],
                    )
                })?;
            refs.push((c, r.value.as_str()));
        }
        let before = self.records.len() + self.partial.len();
        self.refuse_empty_subset(rules, &refs)?;
        self.records.retain(|rec| {
            refs.iter()
                .all(|(c, v)| rec.value(*c).is_some_and(|x| subset_match(&x, v)))
        });
        // A row that did not parse is set aside only when a rule can be judged on what
        // was read of it and fails; its problems go with it.
        let mut aside = std::collections::HashSet::new();
        self.partial.retain(|part| {
            let fails = refs.iter().any(|(c, v)| {
                let value = match c {
                    ColumnRef::Other(i) => part.extra.get(*i).cloned(),
                    ColumnRef::Standard(Role::CoefType) => {
                        part.coef_type.map(|t| Some(t.name().to_string()))
                    }
                    ColumnRef::Standard(_) => None,
                };
                value.is_some_and(|x| !x.is_some_and(|x| subset_match(&x, v)))
            });
            if fails {
                aside.insert(part.row);
            }
            !fails
        });
        self.problems
            .retain(|p| p.row.is_none_or(|r| !aside.contains(&r)));
        Ok(before - self.records.len() - self.partial.len())
    }

    /// A subset that no row falls in is an error: name the rule no row matches, with the
    /// values its column holds.
    fn refuse_empty_subset(&self, rules: &[SubsetRule], refs: &[(ColumnRef, &str)]) -> Result<()> {
        let all_match = |rec: &StudyRecord| {
            refs.iter()
                .all(|(c, v)| rec.value(*c).is_some_and(|x| subset_match(&x, v)))
        };
        if self.records.iter().any(all_match) || !self.partial.is_empty() {
            return Ok(());
        }
        let rule_text = |r: &SubsetRule| format!("{}={}", r.column, r.value);
        for (r, (c, v)) in rules.iter().zip(refs) {
            if self
                .records
                .iter()
                .any(|rec| rec.value(*c).is_some_and(|x| subset_match(&x, v)))
            {
                continue;
            }
            let mut values: Vec<String> = Vec::new();
            for rec in &self.records {
                if let Some(x) = rec.value(*c)
                    && !values.iter().any(|v| same_name(v, &x))
                {
                    values.push(x);
                }
            }
            let shown: Vec<String> = values
                .iter()
                .take(12)
                .map(|v| crate::format::quoted(v, 60))
                .collect();
            let more = values.len().saturating_sub(12);
            return Err(Error::setting(
                Setting::Subset,
                msg![
                    given(Setting::Subset, rule_text(r)),
                    format!(
                        ": no row has {} = {} (its values: {}{})",
                        r.column,
                        r.value,
                        shown.join(", "),
                        if more > 0 {
                            format!(" and {more} more")
                        } else {
                            String::new()
                        }
                    )
                ],
            ));
        }
        Err(Error::setting(
            Setting::Subset,
            msg![
                "no row matches every ",
                Setting::Subset,
                " rule together (",
                rules.iter().map(rule_text).collect::<Vec<_>>().join(", "),
                ")"
            ],
        ))
    }

    /// True when the sheet has the standard column.
    pub fn has(&self, role: Role) -> bool {
        self.columns.contains_key(&role)
    }

    /// How a standard column is named in messages: its header, with the standard name
    /// added when the sheet calls it something else.
    pub fn column_label(&self, role: Role) -> String {
        column_label(&self.columns, role)
    }
}

/// A cell matches a subset value when they are the same text (capitals and surrounding
/// spaces aside) or the same number (10 and 10.0).
fn subset_match(cell: &str, value: &str) -> bool {
    same_name(cell, value)
        || matches!(
            (cell.trim().parse::<f64>(), value.trim().parse::<f64>()),
            (Ok(a), Ok(b)) if a == b
        )
}

fn column_label(columns: &BTreeMap<Role, String>, role: Role) -> String {
    match columns.get(&role) {
        Some(h) if h != role.name() => format!("{h} (used as {role})"),
        Some(h) => h.clone(),
        None => role.name().to_string(),
    }
}

/// Read and check a coding sheet from a file.
pub fn read_coding_sheet(path: &Path, options: &SheetOptions) -> Result<CodingSheet> {
    coding_sheet_from_bytes(path, read_sheet_bytes(path)?, options)
}

/// The bytes of a coding sheet file, with the usual messages for a wrong path.
pub fn read_sheet_bytes(path: &Path) -> Result<Vec<u8>> {
    let file = path.display().to_string();
    read::read_whole(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => Error::setting(
            Setting::SheetFile,
            format!("{file}: no such file; check the path of the coding sheet"),
        ),
        _ if path.is_dir() => Error::setting(
            Setting::SheetFile,
            format!("{file} is a folder; give the path of the coding sheet itself"),
        ),
        std::io::ErrorKind::InvalidData => Error::InvalidSheet {
            file: file.clone(),
            problems: vec![CellProblem::file(e.to_string())],
        },
        _ => Error::io(format!("reading {file}"), e),
    })
}

/// Check a coding sheet already read into memory (a text file or a workbook, told apart
/// by content and name); `path` names it in messages.
pub fn coding_sheet_from_bytes(
    path: &Path,
    bytes: Vec<u8>,
    options: &SheetOptions,
) -> Result<CodingSheet> {
    let file = path.display().to_string();
    if read::is_workbook(&bytes) {
        if options.delimiter.is_some() {
            return Err(Error::setting(
                Setting::Delimiter,
                msg![
                    Setting::Delimiter,
                    format!(" applies to text files; {file} is a workbook")
                ],
            ));
        }
        let mut rows = workbook::WorkbookRows::read(
            &file,
            bytes,
            options.worksheet.as_deref(),
            options.workbook,
        )?;
        let expected = rows.data_rows();
        let mut sheet = parse_rows(&file, &mut rows, options, expected)?;
        sheet.worksheet = Some(rows.worksheet.clone());
        sheet.worksheets = rows.worksheets.clone();
        sheet.reading_notes = rows.notes.clone();
        return Ok(sheet);
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
    parse_coding_sheet(&file, &bytes, options)
}

/// Read and check a coding sheet from its bytes; `file` names it in messages.
pub fn parse_coding_sheet(file: &str, bytes: &[u8], options: &SheetOptions) -> Result<CodingSheet> {
    let mut table = read::TableReader::open(file, bytes, options.delimiter)?;
    let lines = bytes.iter().filter(|&&b| b == b'\n').count();
    parse_rows(file, &mut table, options, lines + 1)
}

/// Check every row of a sheet, from whichever source.
fn parse_rows(
    file: &str,
    table: &mut dyn read::RowSource,
    options: &SheetOptions,
    expected_rows: usize,
) -> Result<CodingSheet> {
    let layout = Layout::resolve(file, table.header(), table.header_row(), &options.columns)?;
    let format = table.format();
    let decimal_comma = format.decimal_comma();
    let mut records = Vec::with_capacity(expected_rows);
    let mut problems = Vec::new();
    let mut partial = Vec::new();
    while let Some(raw) = table.next_row()? {
        match layout.parse_row(&raw, decimal_comma) {
            Ok(r) => records.push(r),
            Err((mut p, part)) => {
                problems.append(&mut p);
                partial.extend(part.map(|p| *p));
            }
        }
    }

    if table.rows_read() == 0 {
        return Err(Error::InvalidSheet {
            file: file.to_string(),
            problems: vec![CellProblem::row(
                1,
                "the sheet has a header row but no data rows below it",
            )],
        });
    }
    Ok(CodingSheet {
        file: file.to_string(),
        format,
        worksheet: None,
        worksheets: Vec::new(),
        columns: layout.names(),
        extra_columns: layout.extra.iter().map(|(_, n)| n.clone()).collect(),
        records,
        problems,
        partial,
        rows_read: table.rows_read(),
        empty_rows: table.empty_rows(),
        reading_notes: Vec::new(),
    })
}

/// Where each column sits in the file.
struct Layout {
    width: usize,
    /// The column of each role, by its place in [`Role::ALL`] (looked up for every cell).
    column_of: [Option<usize>; Role::ALL.len()],
    /// The header name of each standard column (for messages).
    names: BTreeMap<Role, String>,
    extra: Vec<(usize, String)>,
    /// Unnamed columns (empty header cell), which must stay empty.
    unnamed: Vec<usize>,
}

impl Layout {
    fn resolve(
        file: &str,
        header: &[String],
        header_row: usize,
        map: &ColumnMap,
    ) -> Result<Layout> {
        let mut problems = duplicate_names(header, header_row);
        let roles = find_roles(header, header_row, map, &mut problems);
        if !roles.contains_key(&Role::Coef) && map.get(Role::Coef).is_none() {
            problems.push(CellProblem::row(
                header_row,
                msg![
                    format!(
                        "the sheet has no coef column (its columns are: {}); name the column of \
                         reported coefficients coef, or map it with ",
                        list_header(header)
                    ),
                    given(Setting::ColumnMap, "coef=NAME")
                ],
            ));
        }
        if !problems.is_empty() {
            return Err(Error::InvalidSheet {
                file: file.to_string(),
                problems,
            });
        }
        let used: Vec<usize> = roles.values().map(|(i, _)| *i).collect();
        let mut extra = Vec::new();
        let mut unnamed = Vec::new();
        for (i, h) in header.iter().enumerate() {
            if used.contains(&i) {
                continue;
            }
            if h.is_empty() {
                unnamed.push(i);
            } else {
                extra.push((i, h.clone()));
            }
        }
        let names = roles.iter().map(|(r, (_, n))| (*r, n.clone())).collect();
        let column_of = Role::ALL.map(|r| roles.get(&r).map(|(i, _)| *i));
        Ok(Layout {
            width: header.len(),
            names,
            column_of,
            extra,
            unnamed,
        })
    }

    fn names(&self) -> BTreeMap<Role, String> {
        self.names.clone()
    }

    fn parse_row(
        &self,
        raw: &read::RawRow<'_>,
        decimal_comma: bool,
    ) -> std::result::Result<StudyRecord, (Vec<CellProblem>, Option<Box<PartialRecord>>)> {
        let row = raw.row;
        if let Some(problem) = self.shape_problem(raw) {
            return Err((vec![problem], None));
        }
        let mut check = RowCheck {
            row,
            names: &self.names,
            decimal_comma,
            problems: Vec::new(),
            failed: Vec::new(),
        };
        let cells = self.read_cells(raw, &mut check);
        self.check_unnamed(raw, &mut check);

        let coef_unreadable = check.failed.contains(&Role::Coef);
        let label = match cells.study {
            Some(s) => check.label(Role::Study, s),
            None => format!("row {row}"),
        };
        let sample = cells.sample.map(|s| check.label(Role::Sample, s));
        let cluster = cells.cluster.map(|s| check.label(Role::Cluster, s));
        let coef = check.coef(cells.coef, coef_unreadable);
        let n = check.whole(Role::N, cells.n, MAX_N, "sample size");
        let items = check
            .whole(
                Role::Items,
                cells.items,
                MAX_ITEMS as u64,
                "number of items",
            )
            .map(|k| k as u32);
        let coef_type = check.coef_type(cells.coef_type);
        let sd = check.positive(Role::Sd, cells.sd);
        let var = check.positive(Role::Var, cells.var);
        let sd_metric = check.sd_metric(cells.sd_metric);
        let (scale_min, scale_max) = check.scale(cells.scale_min, cells.scale_max);

        if !check.problems.is_empty() {
            let partial = PartialRecord {
                row,
                coef,
                coef_type,
                n,
                items,
                var,
                extra: cells.extra,
                failed: check.failed,
            };
            return Err((check.problems, Some(Box::new(partial))));
        }
        Ok(StudyRecord {
            row,
            label,
            label_given: cells.study.is_some(),
            sample,
            cluster,
            coef: coef.expect("checked above"),
            coef_type: coef_type.expect("checked above"),
            n,
            items,
            sd,
            sd_metric,
            scale_min,
            scale_max,
            var,
            extra: cells.extra,
        })
    }

    /// The problem with a row's number of cells, if any: ragged rows are an error unless
    /// the surplus cells are empty.
    fn shape_problem(&self, raw: &read::RawRow<'_>) -> Option<CellProblem> {
        let n_cells = raw.n_cells();
        if n_cells < self.width {
            return Some(CellProblem::row(
                raw.row,
                format!(
                    "the row has {} but the header has {}; check for a missing or surplus \
                     delimiter",
                    crate::format::count(n_cells as u64, "cell", "cells"),
                    crate::format::count(self.width as u64, "column", "columns")
                ),
            ));
        }
        if n_cells > self.width {
            let surplus_filled = (self.width..n_cells)
                .any(|i| raw.cell(i).map(|s| !s.trim().is_empty()).unwrap_or(true));
            if surplus_filled {
                return Some(CellProblem::row(
                    raw.row,
                    format!(
                        "the row has {n_cells} cells but the header has only {} columns; a value \
                         has no column name (check for an unquoted delimiter inside a cell)",
                        self.width
                    ),
                ));
            }
        }
        None
    }

    /// The text of a row's standard cells and other columns, noting unreadable ones.
    fn read_cells<'r>(&self, raw: &'r read::RawRow<'_>, check: &mut RowCheck<'_>) -> RowCells<'r> {
        let mut cell_of = |role: Role| -> Option<&'r str> {
            let i = self.column_of[role as usize]?;
            let Some(s) = check.text(raw, i, &|| column_label(&self.names, role)) else {
                check.failed.push(role);
                return None;
            };
            if is_missing(s) { None } else { Some(s) }
        };
        let study = cell_of(Role::Study);
        let sample = cell_of(Role::Sample);
        let cluster = cell_of(Role::Cluster);
        let coef = cell_of(Role::Coef);
        let n = cell_of(Role::N);
        let items = cell_of(Role::Items);
        let coef_type = cell_of(Role::CoefType);
        let sd = cell_of(Role::Sd);
        let sd_metric = cell_of(Role::SdMetric);
        let scale_min = cell_of(Role::ScaleMin);
        let scale_max = cell_of(Role::ScaleMax);
        let var = cell_of(Role::Var);
        let mut extra = Vec::with_capacity(self.extra.len());
        for (i, name) in &self.extra {
            let v = check
                .text(raw, *i, &|| name.clone())
                .filter(|s| !is_missing(s))
                .map(|s| s.trim().to_string());
            extra.push(v);
        }
        RowCells {
            study,
            sample,
            cluster,
            coef,
            n,
            items,
            coef_type,
            sd,
            sd_metric,
            scale_min,
            scale_max,
            var,
            extra,
        }
    }

    /// Report the values in columns without a name (unreadable cells first, as they are
    /// met, then the values).
    fn check_unnamed(&self, raw: &read::RawRow<'_>, check: &mut RowCheck<'_>) {
        let mut orphans = Vec::new();
        for &i in &self.unnamed {
            if let Some(s) = check.text(raw, i, &|| format!("{} (unnamed)", i + 1))
                && !s.trim().is_empty()
            {
                orphans.push(CellProblem::cell(
                    check.row,
                    format!("{} (unnamed)", i + 1),
                    format!(
                        "the cell holds {} but its column has no name in the header; name \
                         the column so the value is not lost",
                        cells::quote(s)
                    ),
                ));
            }
        }
        check.problems.append(&mut orphans);
    }
}

/// The problems of duplicated column names (case-insensitive) in the header.
fn duplicate_names(header: &[String], header_row: usize) -> Vec<CellProblem> {
    let mut problems = Vec::new();
    let mut seen: BTreeMap<String, usize> = BTreeMap::new();
    for (i, h) in header.iter().enumerate() {
        if h.is_empty() {
            continue;
        }
        if let Some(first) = seen.insert(h.to_lowercase(), i) {
            problems.push(CellProblem::row(
                header_row,
                format!(
                    "the column name \"{h}\" appears twice (columns {} and {}); every column \
                     needs its own name",
                    first + 1,
                    i + 1
                ),
            ));
        }
    }
    problems
}

/// The column with this name: the exact name first, else the name in any case.
fn find_header(header: &[String], name: &str) -> Option<usize> {
    header.iter().position(|h| h == name).or_else(|| {
        header
            .iter()
            .position(|h| h.eq_ignore_ascii_case(name.trim()))
    })
}

/// Where each standard column sits, by the mapping or by its standard name; a mapping to
/// a column the sheet lacks is added to `problems`.
fn find_roles(
    header: &[String],
    header_row: usize,
    map: &ColumnMap,
    problems: &mut Vec<CellProblem>,
) -> BTreeMap<Role, (usize, String)> {
    let find = |name: &str| find_header(header, name);
    let mut roles = BTreeMap::new();
    for role in Role::ALL {
        match map.get(role) {
            Some(name) => match find(name) {
                Some(i) => {
                    roles.insert(role, (i, header[i].clone()));
                }
                None => problems.push(CellProblem::row(
                    header_row,
                    msg![
                        given(Setting::ColumnMap, format!("{role}={name}")),
                        format!(
                            " names a column the sheet does not have (its columns are: {})",
                            list_header(header)
                        )
                    ],
                )),
            },
            None => {
                if let Some(i) = find(role.name()) {
                    // A column already claimed by a mapping keeps that role.
                    if !roles.values().any(|(j, _)| *j == i)
                        && !Role::ALL
                            .iter()
                            .any(|r| map.get(*r).and_then(find) == Some(i))
                    {
                        roles.insert(role, (i, header[i].clone()));
                    }
                }
            }
        }
    }
    roles
}

/// The text of one row's standard cells (`None` when missing or unreadable) and the
/// values of its other columns.
struct RowCells<'r> {
    study: Option<&'r str>,
    sample: Option<&'r str>,
    cluster: Option<&'r str>,
    coef: Option<&'r str>,
    n: Option<&'r str>,
    items: Option<&'r str>,
    coef_type: Option<&'r str>,
    sd: Option<&'r str>,
    sd_metric: Option<&'r str>,
    scale_min: Option<&'r str>,
    scale_max: Option<&'r str>,
    var: Option<&'r str>,
    extra: Vec<Option<String>>,
}

/// The problems found in one row so far, and the standard columns they concern.
struct RowCheck<'a> {
    row: usize,
    names: &'a BTreeMap<Role, String>,
    decimal_comma: bool,
    problems: Vec<CellProblem>,
    failed: Vec<Role>,
}

impl RowCheck<'_> {
    /// Cell `i` as text, or `None` with a problem when it is not valid UTF-8 (the
    /// column's name is only worked out when there is a problem to report).
    fn text<'r>(
        &mut self,
        raw: &'r read::RawRow<'_>,
        i: usize,
        column: &dyn Fn() -> String,
    ) -> Option<&'r str> {
        match raw.cell(i) {
            Ok(s) => Some(s),
            Err(()) => {
                self.problems.push(CellProblem::cell(
                    self.row,
                    column(),
                    "the cell is not valid UTF-8 text; save the sheet as UTF-8",
                ));
                None
            }
        }
    }

    fn label_too_long(&mut self, role: Role, chars: usize) {
        self.push(
            role,
            format!(
                "the label is {chars} characters long (at most {MAX_LABEL_CHARS} are allowed); \
                 shorten it"
            ),
        );
    }

    /// Note a problem with a standard column's value.
    fn push(&mut self, role: Role, reason: String) {
        self.failed.push(role);
        self.problems.push(CellProblem::cell(
            self.row,
            column_label(self.names, role),
            reason,
        ));
    }

    /// The study label with its spaces tidied, checked for length and control characters.
    /// A label (of a study, sample or cluster), its runs of white space made one space.
    fn label(&mut self, role: Role, s: &str) -> String {
        let trimmed = s.trim();
        // Printable ASCII with single spaces, as nearly every label is, is kept as it is and
        // has as many characters as bytes.
        let simple = trimmed.bytes().all(|c| (b' '..=b'~').contains(&c)) && !trimmed.contains("  ");
        if simple {
            if trimmed.len() > MAX_LABEL_CHARS {
                self.label_too_long(role, trimmed.len());
            }
            return trimmed.to_string();
        }
        // Line breaks and runs of spaces (Alt+Enter in a spreadsheet) become one space.
        let plain = !trimmed
            .as_bytes()
            .windows(2)
            .any(|w| w[0].is_ascii_whitespace() && w[1].is_ascii_whitespace())
            && !trimmed.contains(|c: char| c.is_whitespace() && c != ' ');
        let t = if plain {
            trimmed.to_string()
        } else {
            s.split_whitespace().collect::<Vec<_>>().join(" ")
        };
        let chars = t.chars().count();
        if chars > MAX_LABEL_CHARS {
            self.label_too_long(role, chars);
        }
        if t.chars().any(|c| c.is_control()) {
            self.push(
                role,
                "the label holds a control character (such as a line break); remove it".into(),
            );
        }
        t
    }

    /// The coefficient, which must be given (an unreadable cell is already reported).
    fn coef(&mut self, s: Option<&str>, unreadable: bool) -> Option<f64> {
        match s {
            None if unreadable => None,
            None => {
                self.push(Role::Coef, "the coefficient is missing".into());
                None
            }
            Some(s) => self.number(Role::Coef, Some(s)),
        }
    }

    /// A whole number from 1 to `max`, when the cell is given.
    fn whole(&mut self, role: Role, s: Option<&str>, max: u64, what: &str) -> Option<u64> {
        s.and_then(|s| {
            cells::parse_whole(s, self.decimal_comma, 1, max, what)
                .map_err(|e| self.push(role, e))
                .ok()
        })
    }

    /// The coefficient type (alpha when the cell is empty).
    fn coef_type(&mut self, s: Option<&str>) -> Option<CoefType> {
        let Some(s) = s else {
            return Some(CoefType::Alpha);
        };
        let t = CoefType::parse_cell(s);
        if t.is_none() {
            let names: Vec<&str> = CoefType::ALL.iter().map(|t| t.name()).collect();
            self.push(
                Role::CoefType,
                format!(
                    "{} is not a known coefficient type (use one of: {}; empty means alpha)",
                    cells::quote(s),
                    names.join(", ")
                ),
            );
        }
        t
    }

    /// A number above 0, when the cell is given.
    fn positive(&mut self, role: Role, s: Option<&str>) -> Option<f64> {
        s.and_then(|s| match cells::parse_number(s, self.decimal_comma) {
            Ok(x) if x > 0.0 => Some(x),
            Ok(x) => {
                self.push(
                    role,
                    format!("{} must be above 0", crate::transform::fmt_value(x)),
                );
                None
            }
            Err(e) => {
                self.push(role, e);
                None
            }
        })
    }

    /// The metric of the SD (sum or mean), when the cell is given.
    fn sd_metric(&mut self, s: Option<&str>) -> Option<SdMetric> {
        s.and_then(|s| {
            let m = SdMetric::parse_cell(s);
            if m.is_none() {
                self.push(
                    Role::SdMetric,
                    format!("{} is not an SD metric (use sum or mean)", cells::quote(s)),
                );
            }
            m
        })
    }

    /// Any number, when the cell is given.
    fn number(&mut self, role: Role, s: Option<&str>) -> Option<f64> {
        s.and_then(|s| {
            cells::parse_number(s, self.decimal_comma)
                .map_err(|e| self.push(role, e))
                .ok()
        })
    }

    /// The lowest and highest item responses, the highest above the lowest.
    fn scale(&mut self, min: Option<&str>, max: Option<&str>) -> (Option<f64>, Option<f64>) {
        let scale_min = self.number(Role::ScaleMin, min);
        let scale_max = self.number(Role::ScaleMax, max);
        if let (Some(lo), Some(hi)) = (scale_min, scale_max)
            && lo >= hi
        {
            self.push(
                Role::ScaleMax,
                format!("the scale maximum ({hi}) must be above the minimum ({lo})"),
            );
        }
        (scale_min, scale_max)
    }
}

fn list_header(header: &[String]) -> String {
    let shown: Vec<String> = header
        .iter()
        .enumerate()
        .map(|(i, h)| {
            if h.is_empty() {
                format!("(unnamed column {})", i + 1)
            } else {
                h.clone()
            }
        })
        .collect();
    shown.join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> Result<CodingSheet> {
        parse_coding_sheet("t.csv", text.as_bytes(), &SheetOptions::default())
    }

    #[test]
    fn reads_a_small_sheet() {
        let s = parse("study,coef,n,items,maturity\nA,0.8,100,6,new\nB,0.85,120,6,\n").unwrap();
        assert_eq!(s.records.len(), 2);
        assert_eq!(s.records[0].row, 2);
        assert_eq!(s.records[1].coef, 0.85);
        assert_eq!(s.extra_columns, vec!["maturity"]);
        assert_eq!(s.records[1].extra, vec![None]);
        assert!(s.problems.is_empty());
    }

    #[test]
    fn collects_every_problem_with_row_and_column() {
        let s = parse("study,coef,n,items\nA,abc,100,6\nB,0.8,2.5,x\n").unwrap();
        let msgs: Vec<String> = s.problems.iter().map(|p| p.to_string()).collect();
        assert_eq!(msgs.len(), 3, "{msgs:?}");
        assert!(msgs[0].starts_with("row 2, column coef:"), "{msgs:?}");
        assert!(msgs[1].starts_with("row 3, column n:"), "{msgs:?}");
        assert!(msgs[2].starts_with("row 3, column items:"), "{msgs:?}");
    }

    #[test]
    fn mapped_columns_are_named_in_messages() {
        let mut opts = SheetOptions::default();
        opts.columns.insert_spec("coef=reported_alpha").unwrap();
        let s = parse_coding_sheet("t.csv", b"reported_alpha,n\nx,10\n", &opts).unwrap();
        assert_eq!(
            s.problems[0].to_string(),
            "row 2, column reported_alpha (used as coef): \"x\" is not a number"
        );
    }

    #[test]
    fn file_level_problems_fail_at_once() {
        assert!(parse("study,n\nA,10\n").is_err());
        assert!(parse("coef,n,coef\n0.8,10,0.7\n").is_err());
        assert!(parse("coef,n\n").is_err());
    }

    #[test]
    fn semicolon_sheet_with_decimal_comma() {
        let s = parse("study;coef;n;items\nA;0,81;100;6\n").unwrap();
        assert_eq!(s.format, SheetFormat::Delimited(b';'));
        assert_eq!(s.records[0].coef, 0.81);
    }
}
