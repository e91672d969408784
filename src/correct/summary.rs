//! A study's summary statistics for the regression correction: a covariance or
//! correlation matrix with optional SDs, read from a small CSV.

use crate::error::{CellProblem, Error, Result};
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
/// covariance matrix.
pub fn read_summary(path: &Path) -> Result<Summary> {
    let file = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => Error::InvalidOption(format!("{file}: no such file")),
        _ => Error::io(format!("reading {file}"), e),
    })?;
    let body = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(&bytes);
    let delimiter = crate::sheet::detect_delimiter(body);
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
    let has_sd = header.last().is_some_and(|h| h.eq_ignore_ascii_case("sd"));
    let names: Vec<String> = header[1..header.len() - usize::from(has_sd)].to_vec();
    let p = names.len();
    if p < 2 {
        return Err(fail(vec![CellProblem::row(
            1,
            "the header must name the variables after a first column",
        )]));
    }
    let mut m = DMatrix::zeros(p, p);
    let mut sd = vec![None; p];
    let mut problems = Vec::new();
    let mut seen = 0;
    for (i, rec) in reader.records().enumerate() {
        let row = i + 2;
        let rec = rec.map_err(|e| fail(vec![CellProblem::row(row, e.to_string())]))?;
        let label = rec.get(0).unwrap_or("").trim();
        let Some(r) = names.iter().position(|n| n == label) else {
            problems.push(CellProblem::cell(
                row,
                header[0].clone(),
                format!("\"{label}\" is not one of the variables in the header"),
            ));
            continue;
        };
        seen += 1;
        for (c, name) in names.iter().enumerate() {
            match rec.get(c + 1).map(|t| parse_number(t, delimiter != b',')) {
                Some(Ok(x)) => m[(r, c)] = x,
                Some(Err(e)) => problems.push(CellProblem::cell(row, name.clone(), e)),
                None => problems.push(CellProblem::cell(row, name.clone(), "the cell is missing")),
            }
        }
        if has_sd {
            match rec.get(p + 1).map(|t| parse_number(t, delimiter != b',')) {
                Some(Ok(x)) if x > 0.0 => sd[r] = Some(x),
                Some(Ok(x)) => {
                    problems.push(CellProblem::cell(row, "sd", format!("{x} must be above 0")))
                }
                Some(Err(e)) => problems.push(CellProblem::cell(row, "sd", e)),
                None => problems.push(CellProblem::cell(row, "sd", "the cell is missing")),
            }
        }
    }
    if seen != p && problems.is_empty() {
        problems.push(CellProblem::file(format!(
            "{p} variables are named in the header but {seen} rows were found"
        )));
    }
    for a in 0..p {
        for b in 0..a {
            if (m[(a, b)] - m[(b, a)]).abs() > 1e-9 * (m[(a, b)].abs() + 1.0) {
                problems.push(CellProblem::file(format!(
                    "the matrix is not symmetric: {} / {} is {} one way and {} the other",
                    names[a],
                    names[b],
                    m[(a, b)],
                    m[(b, a)]
                )));
            }
        }
    }
    if !problems.is_empty() {
        return Err(fail(problems));
    }
    let correlation = (0..p).all(|i| (m[(i, i)] - 1.0).abs() < 1e-12);
    let cov = if correlation && has_sd {
        DMatrix::from_fn(p, p, |a, b| {
            m[(a, b)] * sd[a].unwrap_or(1.0) * sd[b].unwrap_or(1.0)
        })
    } else {
        m
    };
    if cov.clone().cholesky().is_none() {
        return Err(Error::CannotAnalyse(format!(
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
