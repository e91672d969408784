//! SPSS data files (.sav, .zsav) as item data: the file is decoded (by the `ambers` crate),
//! its user-missing codes and system-missing cells turned into empty cells, and the result
//! handed to the item reader as delimited text, so every check and message is the same as
//! for a CSV file. The value labels are kept to be shown.

use crate::error::{CellProblem, Error, Result};
use arrow_array::{Array, Float64Array, StringArray, StringViewArray};

/// An SPSS system file starts with one of these.
pub fn is_sav(bytes: &[u8]) -> bool {
    bytes.starts_with(b"$FL2") || bytes.starts_with(b"$FL3")
}

/// An SPSS file decoded.
#[derive(Debug, Clone, PartialEq)]
pub struct SavText {
    /// The data as comma-delimited text with a header of variable names.
    pub text: Vec<u8>,
    /// Each variable's value labels, in the file's order (variables without labels left
    /// out).
    pub value_labels: Vec<(String, Vec<(f64, String)>)>,
    /// Cells holding a declared user-missing code, read as missing.
    pub user_missing_cells: u64,
}

/// A problem with the whole file.
fn whole(file: &str, reason: String) -> Error {
    Error::InvalidSheet {
        file: file.to_string(),
        problems: vec![CellProblem {
            row: None,
            column: None,
            reason: reason.into(),
        }],
    }
}

/// A text cell quoted for the comma-delimited text.
fn quoted(s: &str) -> String {
    format!("\"{}\"", s.replace('"', "\"\""))
}

/// A text column's cells, quoted; an empty cell for a missing one.
fn text_cells<'a>(n: usize, cell: impl Fn(usize) -> Option<&'a str>) -> Vec<String> {
    (0..n)
        .map(|r| cell(r).map(quoted).unwrap_or_default())
        .collect()
}

/// Decode an SPSS file's bytes (`file` names it in messages).
pub fn sav_to_text(file: &str, bytes: &[u8]) -> Result<SavText> {
    let (batch, meta) = ambers::read_sav_from_reader(std::io::Cursor::new(bytes))
        .map_err(|e| whole(file, format!("the SPSS file could not be read: {e}")))?;
    if let Some(w) = meta.warnings.first() {
        // A file that says it holds more rows than it does is damaged: refuse it rather
        // than analyse part of it.
        return Err(whole(
            file,
            format!("the SPSS file is damaged or incomplete ({w}); nothing was analysed"),
        ));
    }
    let schema = batch.schema();
    let names: Vec<String> = schema.fields().iter().map(|f| f.name().clone()).collect();
    let mut columns: Vec<Vec<String>> = Vec::with_capacity(names.len());
    let mut user_missing = 0u64;
    for (i, name) in names.iter().enumerate() {
        let column = batch.column(i);
        let specs = meta.variable_missing_values.get(name);
        let is_missing = |x: f64| {
            specs.is_some_and(|s| {
                s.iter().any(|m| match m {
                    ambers::MissingSpec::Value(v) => x == *v,
                    ambers::MissingSpec::Range { lo, hi } => *lo <= x && x <= *hi,
                    ambers::MissingSpec::StringValue(_) => false,
                })
            })
        };
        let cells: Vec<String> = if let Some(a) = column.as_any().downcast_ref::<Float64Array>() {
            (0..a.len())
                .map(|r| {
                    if a.is_null(r) {
                        String::new()
                    } else if is_missing(a.value(r)) {
                        user_missing += 1;
                        String::new()
                    } else {
                        format!("{}", a.value(r))
                    }
                })
                .collect()
        } else if let Some(a) = column.as_any().downcast_ref::<StringViewArray>() {
            text_cells(a.len(), |r| (!a.is_null(r)).then(|| a.value(r)))
        } else if let Some(a) = column.as_any().downcast_ref::<StringArray>() {
            text_cells(a.len(), |r| (!a.is_null(r)).then(|| a.value(r)))
        } else {
            return Err(whole(
                file,
                format!(
                    "variable {name} has a type the item reader does not take ({})",
                    column.data_type()
                ),
            ));
        };
        columns.push(cells);
    }
    let mut text: Vec<u8> = names
        .iter()
        .map(|n| quoted(n))
        .collect::<Vec<_>>()
        .join(",")
        .into_bytes();
    text.push(b'\n');
    for r in 0..batch.num_rows() {
        let row: Vec<&str> = columns.iter().map(|c| c[r].as_str()).collect();
        text.extend_from_slice(row.join(",").as_bytes());
        text.push(b'\n');
    }
    let value_labels = meta
        .variable_value_labels
        .iter()
        .map(|(name, labels)| {
            let mut numeric: Vec<(f64, String)> = labels
                .iter()
                .filter_map(|(v, l)| match v {
                    ambers::Value::Numeric(x) => Some((*x, l.clone())),
                    ambers::Value::String(_) => None,
                })
                .collect();
            numeric.sort_by(|a, b| a.0.total_cmp(&b.0));
            (name.clone(), numeric)
        })
        .filter(|(_, l)| !l.is_empty())
        .collect();
    Ok(SavText {
        text,
        value_labels,
        user_missing_cells: user_missing,
    })
}
