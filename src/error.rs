//! The library's error type: every failure a caller can meet, as kinds it can match.

use std::fmt;

/// One problem found in an input file, located as a spreadsheet shows it.
///
/// Rows are numbered as a spreadsheet numbers them: the header is row 1, the
/// first data row is row 2.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CellProblem {
    /// Spreadsheet row number (header = 1); `None` for a problem with the whole file.
    pub row: Option<usize>,
    /// Column name as it appears in the file's header, when one column is at fault.
    pub column: Option<String>,
    /// What is wrong and, where possible, what to do about it (lower case).
    pub reason: String,
}

impl CellProblem {
    /// A problem with one cell.
    pub fn cell(row: usize, column: impl Into<String>, reason: impl Into<String>) -> Self {
        CellProblem {
            row: Some(row),
            column: Some(column.into()),
            reason: reason.into(),
        }
    }

    /// A problem with a whole row.
    pub fn row(row: usize, reason: impl Into<String>) -> Self {
        CellProblem {
            row: Some(row),
            column: None,
            reason: reason.into(),
        }
    }

    /// A problem with the file as a whole.
    pub fn file(reason: impl Into<String>) -> Self {
        CellProblem {
            row: None,
            column: None,
            reason: reason.into(),
        }
    }
}

impl fmt::Display for CellProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match (&self.row, &self.column) {
            (Some(r), Some(c)) => write!(f, "row {r}, column {c}: {}", self.reason),
            (Some(r), None) => write!(f, "row {r}: {}", self.reason),
            (None, Some(c)) => write!(f, "column {c}: {}", self.reason),
            (None, None) => write!(f, "{}", self.reason),
        }
    }
}

/// Every error the library returns.
///
/// Messages are lower case, say what is wrong and, where possible, what to do.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// An input file has one or more problems; all of them are listed.
    #[error("{}", list_problems(.file, .problems))]
    InvalidSheet {
        /// The file as the user named it.
        file: String,
        /// Every problem found, in row order.
        problems: Vec<CellProblem>,
    },
    /// An option or argument is outside its allowed range or contradicts another.
    #[error("{0}")]
    InvalidOption(String),
    /// The data are valid but cannot support the requested analysis (too few studies,
    /// a singular design, …).
    #[error("{0}")]
    CannotAnalyse(String),
    /// A numerical procedure failed in a way that leaves no trustworthy result.
    #[error("{0}")]
    Numerical(String),
    /// Reading or writing a file failed.
    #[error("{context}: {source}")]
    Io {
        /// What was being done, e.g. `reading coding.csv`.
        context: String,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
}

impl Error {
    /// True when the fault lies in the user's input or options (exit status 2).
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            Error::InvalidSheet { .. } | Error::InvalidOption(_) | Error::CannotAnalyse(_)
        )
    }

    /// Reword an option name inside a message, for when a library routine written for
    /// one command is reached through another command's options (e.g. the item reader's
    /// `--items` when the columns came from `--predictor`/`--outcome`).
    pub fn reword_option(self, from: &str, to: &str) -> Self {
        match self {
            Error::InvalidOption(m) => Error::InvalidOption(m.replace(from, to)),
            Error::CannotAnalyse(m) => Error::CannotAnalyse(m.replace(from, to)),
            Error::InvalidSheet { file, problems } => Error::InvalidSheet {
                file,
                problems: problems
                    .into_iter()
                    .map(|mut p| {
                        p.reason = p.reason.replace(from, to);
                        p
                    })
                    .collect(),
            },
            other => other,
        }
    }

    /// Shorthand for an I/O error with context.
    pub fn io(context: impl Into<String>, source: std::io::Error) -> Self {
        Error::Io {
            context: context.into(),
            source,
        }
    }
}

fn list_problems(file: &str, problems: &[CellProblem]) -> String {
    let mut out = String::new();
    match problems.len() {
        0 => out.push_str(&format!("{file}: the file could not be used")),
        1 => out.push_str(&format!("{file}: {}", problems[0])),
        n => {
            out.push_str(&format!("{file}: {n} problems found"));
            for p in problems {
                out.push_str(&format!("\n  {file}: {p}"));
            }
        }
    }
    out
}

/// The library's result type.
pub type Result<T, E = Error> = std::result::Result<T, E>;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cell_problem_names_row_and_column() {
        let p = CellProblem::cell(14, "coef", "1.07 is not a reliability coefficient");
        assert_eq!(
            p.to_string(),
            "row 14, column coef: 1.07 is not a reliability coefficient"
        );
    }

    #[test]
    fn sheet_error_lists_every_problem_with_the_file() {
        let e = Error::InvalidSheet {
            file: "a.csv".into(),
            problems: vec![CellProblem::row(2, "x"), CellProblem::cell(3, "n", "y")],
        };
        let s = e.to_string();
        assert!(s.starts_with("a.csv: 2 problems found"), "{s}");
        assert!(s.contains("a.csv: row 2: x"), "{s}");
        assert!(s.contains("a.csv: row 3, column n: y"), "{s}");
        assert!(e.is_bad_input());
    }
}
