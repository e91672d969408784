//! A study's summary statistics for the regression correction: a covariance or
//! correlation matrix with optional SDs, read from a small CSV.

use crate::error::{CellProblem, Error, Result};
use crate::setting::Setting;
use crate::sheet::parse_number;
use nalgebra::DMatrix;
use std::path::Path;

/// A summary: variable names and their covariance matrix.
#[derive(Debug, Clone)]
pub struct Summary {
    /// Variable names, in matrix order.
    pub names: Vec<String>,
    /// Covariance matrix (a correlation matrix with SDs becomes a covariance matrix).
    pub cov: DMatrix<f64>,
    /// True when the file held correlations without SDs (results are then standardized).
    pub standardized_only: bool,
}

/// Read a summary: a header `variable,<name>,…[,sd]` and one row per variable. A matrix
/// with ones on its diagonal is a correlation matrix; an `sd` column turns it into a
/// covariance matrix. Either triangle may be left empty (or marked missing): each empty
/// cell is filled from its mirror across the diagonal.
pub fn read_summary(path: &Path) -> Result<Summary> {
    let file = path.display().to_string();
    let bytes = crate::sheet::read_whole(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => {
            Error::setting(Setting::Summary, format!("{file}: no such file"))
        }
        std::io::ErrorKind::InvalidData => Error::InvalidSheet {
            file: file.clone(),
            problems: vec![CellProblem::file(e.to_string())],
        },
        _ => Error::io(format!("reading {file}"), e),
    })?;
    summary_from_bytes(&file, &bytes)
}

/// A summary file already in memory (an upload), named `file` in messages.
pub fn summary_from_bytes(file: &str, bytes: &[u8]) -> Result<Summary> {
    let file = file.to_string();
    let body = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let delimiter = crate::sheet::detect_delimiter(body);
    let decimal_comma = crate::sheet::SheetFormat::Delimited(delimiter).decimal_comma();
    // The text's own reading: a line over the limit (a file is checked as it is read, an
    // upload here), an unclosed quote, the records the reader must return.
    let mut state = crate::sheet::QuoteState::new(delimiter);
    state.feed(body);
    if let Some(line) = state.too_long() {
        return Err(invalid(
            &file,
            vec![CellProblem::row(line, crate::sheet::line_too_long(None))],
        ));
    }
    if let Some(line) = state.unclosed() {
        return Err(invalid(
            &file,
            vec![CellProblem::row(line, crate::sheet::UNCLOSED_QUOTE)],
        ));
    }
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .flexible(true)
        .from_reader(body);
    let header = Header::read(&file, &mut reader)?;
    let p = header.names.len();
    let mut cells = Cells {
        values: vec![None; p * p],
        sd: vec![None; p],
        row_of: vec![None; p],
    };
    let mut problems = cells.read_rows(&file, &mut reader, &header, decimal_comma)?;
    if !problems.is_empty() {
        return Err(invalid(&file, problems));
    }
    let read = reader.position().record() as usize;
    if read != state.records() {
        return Err(invalid(
            &file,
            vec![CellProblem::file(crate::sheet::records_differ(
                read,
                state.records(),
            ))],
        ));
    }
    let m = cells.matrix(&header.names, &mut problems);
    if !problems.is_empty() {
        return Err(invalid(&file, problems));
    }
    let correlation = (0..p).all(|i| (m[(i, i)] - 1.0).abs() < 1e-12);
    if correlation {
        problems = correlation_problems(&m, &header.names);
    } else if header.has_sd {
        problems = cells.sd_problems(&m);
    }
    if !problems.is_empty() {
        return Err(invalid(&file, problems));
    }
    let cov = if correlation && header.has_sd {
        let sd = &cells.sd;
        DMatrix::from_fn(p, p, |a, b| {
            m[(a, b)] * sd[a].unwrap_or(1.0) * sd[b].unwrap_or(1.0)
        })
    } else {
        m
    };
    if cov.clone().cholesky().is_none() {
        return Err(Error::cannot(format!(
            "{file}: the matrix is not positive definite, so it cannot be a covariance or \
             correlation matrix of these variables; check it"
        )));
    }
    Ok(Summary {
        standardized_only: correlation && !header.has_sd,
        names: header.names,
        cov,
    })
}

/// The error for a summary file with these problems.
fn invalid(file: &str, problems: Vec<CellProblem>) -> Error {
    Error::InvalidSheet {
        file: file.to_string(),
        problems,
    }
}

/// A summary's header row: its cells, the variable names, and whether an sd column ends it.
struct Header {
    cells: Vec<String>,
    names: Vec<String>,
    has_sd: bool,
    /// The name of the row labels' column, for messages.
    label_column: String,
}

impl Header {
    /// Read and check the header: at least two variable names, each given once.
    fn read(file: &str, reader: &mut csv::Reader<&[u8]>) -> Result<Header> {
        let cells: Vec<String> = reader
            .headers()
            .map_err(|e| invalid(file, vec![CellProblem::row(1, e.to_string())]))?
            .iter()
            .map(|h| h.trim().to_string())
            .collect();
        let has_sd = cells.len() > 1 && cells.last().is_some_and(|h| h.eq_ignore_ascii_case("sd"));
        let names: Vec<String> = if cells.len() > 1 {
            cells[1..cells.len() - usize::from(has_sd)].to_vec()
        } else {
            Vec::new()
        };
        if names.len() < 2 {
            return Err(invalid(
                file,
                vec![CellProblem::row(
                    1,
                    "the header must be a first column for the row labels followed by at least \
                     two variable names (and optionally an sd column)",
                )],
            ));
        }
        let mut problems = Vec::new();
        for (i, name) in names.iter().enumerate() {
            if name.is_empty() {
                problems.push(CellProblem::row(
                    1,
                    format!("column {} of the header has no variable name", i + 2),
                ));
            } else if names[..i].contains(name) {
                problems.push(CellProblem::row(
                    1,
                    format!("the variable name \"{name}\" appears twice in the header"),
                ));
            }
        }
        if !problems.is_empty() {
            return Err(invalid(file, problems));
        }
        let label_column = if cells[0].is_empty() {
            "first column".to_string()
        } else {
            cells[0].clone()
        };
        Ok(Header {
            cells,
            names,
            has_sd,
            label_column,
        })
    }
}

/// The values read from a summary's rows, by variable.
struct Cells {
    /// The matrix cells row by row (`None` where empty).
    values: Vec<Option<f64>>,
    /// The SD of each variable, when given.
    sd: Vec<Option<f64>>,
    /// The file row of each variable's row.
    row_of: Vec<Option<usize>>,
}

impl Cells {
    /// Read every row, returning the problems found (an unreadable record fails at once).
    fn read_rows(
        &mut self,
        file: &str,
        reader: &mut csv::Reader<&[u8]>,
        header: &Header,
        decimal_comma: bool,
    ) -> Result<Vec<CellProblem>> {
        let names = &header.names;
        let mut problems = Vec::new();
        for (i, rec) in reader.records().enumerate() {
            let rec =
                rec.map_err(|e| invalid(file, vec![CellProblem::row(i + 2, e.to_string())]))?;
            let row = rec.position().map_or(i + 2, |pos| pos.line() as usize);
            if rec.iter().all(|c| c.trim().is_empty()) {
                continue;
            }
            let label = rec.get(0).unwrap_or("").trim();
            let Some(r) = names.iter().position(|n| n == label) else {
                problems.push(CellProblem::cell(
                    row,
                    header.label_column.clone(),
                    format!("\"{label}\" is not one of the variables in the header"),
                ));
                continue;
            };
            if let Some(first) = self.row_of[r] {
                problems.push(CellProblem::cell(
                    row,
                    header.label_column.clone(),
                    format!("\"{label}\" already has a row (row {first})"),
                ));
                continue;
            }
            self.row_of[r] = Some(row);
            self.read_row(&rec, row, r, header, decimal_comma, &mut problems);
        }
        let absent: Vec<&str> = (0..names.len())
            .filter(|&r| self.row_of[r].is_none())
            .map(|r| names[r].as_str())
            .collect();
        if !absent.is_empty() {
            problems.push(CellProblem::file(format!(
                "no row for {} (every variable in the header needs a row)",
                absent.join(", ")
            )));
        }
        Ok(problems)
    }

    /// Read the cells of variable `r`'s row (file row `row`).
    fn read_row(
        &mut self,
        rec: &csv::StringRecord,
        row: usize,
        r: usize,
        header: &Header,
        decimal_comma: bool,
        problems: &mut Vec<CellProblem>,
    ) {
        let width = header.cells.len();
        let p = header.names.len();
        if rec.len() > width && rec.iter().skip(width).any(|c| !c.trim().is_empty()) {
            problems.push(CellProblem::row(
                row,
                format!(
                    "the row has {} cells but the header names {} columns",
                    rec.len(),
                    width
                ),
            ));
        }
        for (c, name) in header.names.iter().enumerate() {
            let text = rec.get(c + 1).unwrap_or("");
            if crate::sheet::is_missing(text) {
                continue;
            }
            match parse_number(text, decimal_comma) {
                Ok(x) => self.values[r * p + c] = Some(x),
                Err(e) => problems.push(CellProblem::cell(row, name.clone(), e)),
            }
        }
        if header.has_sd {
            let text = rec.get(p + 1).unwrap_or("");
            if crate::sheet::is_missing(text) {
                problems.push(CellProblem::cell(row, "sd", "the sd is missing"));
            } else {
                match parse_number(text, decimal_comma) {
                    Ok(x) if x > 0.0 => self.sd[r] = Some(x),
                    Ok(x) => {
                        problems.push(CellProblem::cell(row, "sd", format!("{x} must be above 0")))
                    }
                    Err(e) => problems.push(CellProblem::cell(row, "sd", e)),
                }
            }
        }
    }

    /// The symmetric matrix, each empty cell filled from its mirror; a missing or
    /// non-positive diagonal, a missing pair or an asymmetry is added to `problems`.
    fn matrix(&self, names: &[String], problems: &mut Vec<CellProblem>) -> DMatrix<f64> {
        let p = names.len();
        let cells = &self.values;
        let mut m = DMatrix::zeros(p, p);
        for a in 0..p {
            match cells[a * p + a] {
                Some(x) if x > 0.0 => m[(a, a)] = x,
                Some(x) => problems.push(CellProblem::cell(
                    self.row_of[a].unwrap_or(0),
                    names[a].clone(),
                    format!("the diagonal value {x} must be above 0 (1 for a correlation matrix)"),
                )),
                None => problems.push(CellProblem::cell(
                    self.row_of[a].unwrap_or(0),
                    names[a].clone(),
                    "the diagonal cell is missing",
                )),
            }
            for b in 0..a {
                match (cells[a * p + b], cells[b * p + a]) {
                    (Some(x), Some(y)) => {
                        if (x - y).abs() > 1e-9 * (x.abs() + 1.0) {
                            problems.push(CellProblem::file(format!(
                                "the matrix is not symmetric: {} / {} is {x} one way and {y} \
                                 the other",
                                names[a], names[b]
                            )));
                        }
                        m[(a, b)] = x;
                        m[(b, a)] = x;
                    }
                    (Some(x), None) | (None, Some(x)) => {
                        m[(a, b)] = x;
                        m[(b, a)] = x;
                    }
                    (None, None) => problems.push(CellProblem::file(format!(
                        "the value for {} / {} is missing on both sides of the diagonal",
                        names[a], names[b]
                    ))),
                }
            }
        }
        m
    }

    /// For a covariance matrix: where the sd column disagrees with the diagonal.
    fn sd_problems(&self, m: &DMatrix<f64>) -> Vec<CellProblem> {
        let mut problems = Vec::new();
        // A covariance matrix already carries its SDs; an sd column must agree with it.
        for a in 0..m.nrows() {
            let implied = m[(a, a)].sqrt();
            let given = self.sd[a].unwrap_or(implied);
            if (given - implied).abs() > 1e-3 * implied {
                problems.push(CellProblem::cell(
                    self.row_of[a].unwrap_or(0),
                    "sd",
                    format!(
                        "the diagonal is not all ones, so the matrix reads as a covariance \
                         matrix whose variance {} implies an SD of {implied:.6}, but the sd \
                         column says {given}; give either a correlation matrix with SDs or a \
                         covariance matrix",
                        m[(a, a)]
                    ),
                ));
            }
        }
        problems
    }
}

/// For a correlation matrix: the correlations that are not strictly between -1 and 1.
fn correlation_problems(m: &DMatrix<f64>, names: &[String]) -> Vec<CellProblem> {
    let mut problems = Vec::new();
    for a in 0..names.len() {
        for b in 0..a {
            if m[(a, b)].abs() >= 1.0 {
                problems.push(CellProblem::file(format!(
                    "the correlation of {} and {} is {}, but a correlation lies strictly \
                     between -1 and 1",
                    names[a],
                    names[b],
                    m[(a, b)]
                )));
            }
        }
    }
    problems
}
