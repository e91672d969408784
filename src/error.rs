//! The library's error type: every failure a caller can meet, as kinds it can match.
//!
//! Messages point to settings as [`Setting`]s, never as one face's spelling of them
//! (an option name, a control's label): each face renders them with its own
//! [`SettingNames`]; `Display` uses plain English.

use crate::setting::{Message, PlainNames, Setting, SettingNames};
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
    pub reason: Message,
}

impl CellProblem {
    /// A problem with one cell.
    pub fn cell(row: usize, column: impl Into<String>, reason: impl Into<Message>) -> Self {
        CellProblem {
            row: Some(row),
            column: Some(column.into()),
            reason: reason.into(),
        }
    }

    /// A problem with a whole row.
    pub fn row(row: usize, reason: impl Into<Message>) -> Self {
        CellProblem {
            row: Some(row),
            column: None,
            reason: reason.into(),
        }
    }

    /// A problem with the file as a whole.
    pub fn file(reason: impl Into<Message>) -> Self {
        CellProblem {
            row: None,
            column: None,
            reason: reason.into(),
        }
    }
}

impl CellProblem {
    /// The problem with its place, settings named by `names`: "row 14, column coef: …".
    pub fn render(&self, names: &dyn SettingNames) -> String {
        let reason = self.reason.render(names);
        match (&self.row, &self.column) {
            (Some(r), Some(c)) => format!("row {r}, column {c}: {reason}"),
            (Some(r), None) => format!("row {r}: {reason}"),
            (None, Some(c)) => format!("column {c}: {reason}"),
            (None, None) => reason,
        }
    }
}

impl fmt::Display for CellProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.render(&PlainNames))
    }
}

/// Every error the library returns.
///
/// Messages are lower case, say what is wrong and, where possible, what to do.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// An input file has one or more problems; all of them are listed.
    #[error("{}", list_problems(.file, .problems, &PlainNames))]
    InvalidSheet {
        /// The file as the user named it.
        file: String,
        /// Every problem found, in row order.
        problems: Vec<CellProblem>,
    },
    /// A setting is outside its allowed range or contradicts another.
    #[error("{message}")]
    InvalidSetting {
        /// The setting at fault.
        setting: Setting,
        /// What is wrong (it names the setting where it reads best).
        message: Message,
    },
    /// The data are valid but cannot support the requested analysis (too few studies,
    /// a singular design, …).
    #[error("{0}")]
    CannotAnalyse(Message),
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
    /// The same error with `prefix` put before its message (a file's problems and an
    /// input-output failure already name their file and are kept as they are).
    pub fn in_context(self, prefix: &str) -> Self {
        match self {
            Error::InvalidSetting { setting, message } => Error::InvalidSetting {
                setting,
                message: message.prefixed(prefix.to_string()),
            },
            Error::CannotAnalyse(m) => Error::CannotAnalyse(m.prefixed(prefix.to_string())),
            Error::Numerical(m) => Error::Numerical(format!("{prefix}{m}")),
            other => other,
        }
    }

    /// True when the fault lies in the user's input or settings (exit status 2).
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            Error::InvalidSheet { .. } | Error::InvalidSetting { .. } | Error::CannotAnalyse(_)
        )
    }

    /// A setting that is wrong, with the message that says why.
    pub fn setting(setting: Setting, message: impl Into<Message>) -> Self {
        Error::InvalidSetting {
            setting,
            message: message.into(),
        }
    }

    /// Data that cannot support the analysis.
    pub fn cannot(message: impl Into<Message>) -> Self {
        Error::CannotAnalyse(message.into())
    }

    /// The setting at fault, when there is one.
    pub fn at_fault(&self) -> Option<Setting> {
        match self {
            Error::InvalidSetting { setting, .. } => Some(*setting),
            _ => None,
        }
    }

    /// The message with settings named by `names` (a face's option names or labels).
    pub fn render(&self, names: &dyn SettingNames) -> String {
        match self {
            Error::InvalidSheet { file, problems } => list_problems(file, problems, names),
            Error::InvalidSetting { message, .. } => message.render(names),
            Error::CannotAnalyse(m) => m.render(names),
            other => other.to_string(),
        }
    }

    /// The error as a message, its settings kept for the face to name (for a part of a
    /// run that failed while the rest stands).
    pub fn into_message(self) -> Message {
        match self {
            Error::InvalidSetting { message, .. } | Error::CannotAnalyse(message) => message,
            Error::InvalidSheet { file, problems } => {
                let mut m = Message::from(format!("{file}: "));
                for (i, p) in problems.into_iter().enumerate() {
                    if i > 0 {
                        m = m.followed_by("; ");
                    }
                    let place = match (p.row, &p.column) {
                        (Some(r), Some(c)) => format!("row {r}, column {c}: "),
                        (Some(r), None) => format!("row {r}: "),
                        (None, Some(c)) => format!("column {c}: "),
                        (None, None) => String::new(),
                    };
                    m = m.followed_by(place).then(p.reason);
                }
                m
            }
            other => Message::from(other.to_string()),
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

fn list_problems(file: &str, problems: &[CellProblem], names: &dyn SettingNames) -> String {
    let mut out = String::new();
    match problems.len() {
        0 => out.push_str(&format!("{file}: the file could not be used")),
        1 => out.push_str(&format!("{file}: {}", problems[0].render(names))),
        n => {
            out.push_str(&format!("{file}: {n} problems found"));
            for p in problems {
                out.push_str(&format!("\n  {file}: {}", p.render(names)));
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
