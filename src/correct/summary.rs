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
    let bytes = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => {
            Error::setting(Setting::Summary, format!("{file}: no such file"))
        }
        _ => Error::io(format!("reading {file}"), e),
    })?;
    let body = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(&bytes);
    let delimiter = crate::sheet::detect_delimiter(body);
    let decimal_comma = crate::sheet::SheetFormat::Delimited(delimiter).decimal_comma();
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .flexible(true)
        .from_reader(body);
    let fail = |problems: Vec<CellProblem>| Error::InvalidSheet {
        file: file.clone(),
        problems,
    };
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| fail(vec![CellProblem::row(1, e.to_string())]))?
        .iter()
        .map(|h| h.trim().to_string())
        .collect();
    let has_sd = header.len() > 1 && header.last().is_some_and(|h| h.eq_ignore_ascii_case("sd"));
    let names: Vec<String> = if header.len() > 1 {
        header[1..header.len() - usize::from(has_sd)].to_vec()
    } else {
        Vec::new()
    };
    let p = names.len();
    if p < 2 {
        return Err(fail(vec![CellProblem::row(
            1,
            "the header must be a first column for the row labels followed by at least two \
             variable names (and optionally an sd column)",
        )]));
    }
    let mut header_problems = Vec::new();
    for (i, name) in names.iter().enumerate() {
        if name.is_empty() {
            header_problems.push(CellProblem::row(
                1,
                format!("column {} of the header has no variable name", i + 2),
            ));
        } else if names[..i].contains(name) {
            header_problems.push(CellProblem::row(
                1,
                format!("the variable name \"{name}\" appears twice in the header"),
            ));
        }
    }
    if !header_problems.is_empty() {
        return Err(fail(header_problems));
    }
    let label_column = if header[0].is_empty() {
        "first column".to_string()
    } else {
        header[0].clone()
    };
    let mut cells: Vec<Option<f64>> = vec![None; p * p];
    let mut sd = vec![None; p];
    let mut row_of: Vec<Option<usize>> = vec![None; p];
    let mut problems = Vec::new();
    for (i, rec) in reader.records().enumerate() {
        let rec = rec.map_err(|e| fail(vec![CellProblem::row(i + 2, e.to_string())]))?;
        let row = rec.position().map_or(i + 2, |pos| pos.line() as usize);
        if rec.iter().all(|c| c.trim().is_empty()) {
            continue;
        }
        let label = rec.get(0).unwrap_or("").trim();
        let Some(r) = names.iter().position(|n| n == label) else {
            problems.push(CellProblem::cell(
                row,
                label_column.clone(),
                format!("\"{label}\" is not one of the variables in the header"),
            ));
            continue;
        };
        if let Some(first) = row_of[r] {
            problems.push(CellProblem::cell(
                row,
                label_column.clone(),
                format!("\"{label}\" already has a row (row {first})"),
            ));
            continue;
        }
        row_of[r] = Some(row);
        if rec.len() > header.len() && rec.iter().skip(header.len()).any(|c| !c.trim().is_empty()) {
            problems.push(CellProblem::row(
                row,
                format!(
                    "the row has {} cells but the header names {} columns",
                    rec.len(),
                    header.len()
                ),
            ));
        }
        for (c, name) in names.iter().enumerate() {
            let text = rec.get(c + 1).unwrap_or("");
            if crate::sheet::is_missing(text) {
                continue;
            }
            match parse_number(text, decimal_comma) {
                Ok(x) => cells[r * p + c] = Some(x),
                Err(e) => problems.push(CellProblem::cell(row, name.clone(), e)),
            }
        }
        if has_sd {
            let text = rec.get(p + 1).unwrap_or("");
            if crate::sheet::is_missing(text) {
                problems.push(CellProblem::cell(row, "sd", "the sd is missing"));
            } else {
                match parse_number(text, decimal_comma) {
                    Ok(x) if x > 0.0 => sd[r] = Some(x),
                    Ok(x) => {
                        problems.push(CellProblem::cell(row, "sd", format!("{x} must be above 0")))
                    }
                    Err(e) => problems.push(CellProblem::cell(row, "sd", e)),
                }
            }
        }
    }
    let absent: Vec<&str> = (0..p)
        .filter(|&r| row_of[r].is_none())
        .map(|r| names[r].as_str())
        .collect();
    if !absent.is_empty() {
        problems.push(CellProblem::file(format!(
            "no row for {} (every variable in the header needs a row)",
            absent.join(", ")
        )));
    }
    if !problems.is_empty() {
        return Err(fail(problems));
    }
    let mut m = DMatrix::zeros(p, p);
    for a in 0..p {
        match cells[a * p + a] {
            Some(x) if x > 0.0 => m[(a, a)] = x,
            Some(x) => problems.push(CellProblem::cell(
                row_of[a].unwrap_or(0),
                names[a].clone(),
                format!("the diagonal value {x} must be above 0 (1 for a correlation matrix)"),
            )),
            None => problems.push(CellProblem::cell(
                row_of[a].unwrap_or(0),
                names[a].clone(),
                "the diagonal cell is missing",
            )),
        }
        for b in 0..a {
            match (cells[a * p + b], cells[b * p + a]) {
                (Some(x), Some(y)) => {
                    if (x - y).abs() > 1e-9 * (x.abs() + 1.0) {
                        problems.push(CellProblem::file(format!(
                            "the matrix is not symmetric: {} / {} is {x} one way and {y} the \
                             other",
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
    if !problems.is_empty() {
        return Err(fail(problems));
    }
    let correlation = (0..p).all(|i| (m[(i, i)] - 1.0).abs() < 1e-12);
    if correlation {
        for a in 0..p {
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
    } else if has_sd {
        // A covariance matrix already carries its SDs; an sd column must agree with it.
        for a in 0..p {
            let implied = m[(a, a)].sqrt();
            let given = sd[a].unwrap_or(implied);
            if (given - implied).abs() > 1e-3 * implied {
                problems.push(CellProblem::cell(
                    row_of[a].unwrap_or(0),
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
    }
    if !problems.is_empty() {
        return Err(fail(problems));
    }
    let cov = if correlation && has_sd {
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
        names,
        cov,
        standardized_only: correlation && !has_sd,
    })
}
