//! Writing results: stdout with a closed pipe treated as success, and stderr for
//! warnings (files are written by `files`).

use super::names::OptionNames;
use relyard::{Error, Warning};
use std::fmt;
use std::io::{self, Write};

/// A problem with the command line itself (an option missing, two that contradict each
/// other), found before the analysis runs.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UsageError(pub String);

impl fmt::Display for UsageError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

/// Why a command stopped early.
#[derive(Debug)]
pub enum Failure {
    /// A library error (the message is printed, the status follows its kind).
    Lib(Error),
    /// The command line is wrong (status 2).
    Usage(UsageError),
    /// The reader of stdout went away; not an error.
    ClosedPipe,
}

impl From<Error> for Failure {
    fn from(e: Error) -> Self {
        Failure::Lib(e)
    }
}

/// Write `text` to stdout.
pub fn print(text: &str) -> Result<(), Failure> {
    let stdout = io::stdout();
    let mut h = stdout.lock();
    h.write_all(text.as_bytes())
        .and_then(|_| h.flush())
        .map_err(|e| {
            if e.kind() == io::ErrorKind::BrokenPipe {
                Failure::ClosedPipe
            } else {
                Failure::Lib(Error::io("writing to standard output", e))
            }
        })
}

/// Write a JSON document to stdout in relyard's layout (see `relyard::output::layout`),
/// streamed through a buffer rather than built in memory first.
pub fn print_json<T: serde::Serialize + ?Sized>(doc: &T) -> Result<(), Failure> {
    let stdout = io::stdout();
    let w = io::BufWriter::with_capacity(1 << 16, stdout.lock());
    relyard::output::layout::write_json(w, doc).map_err(|e| {
        if e.kind() == io::ErrorKind::BrokenPipe {
            Failure::ClosedPipe
        } else {
            Failure::Lib(Error::io("writing to standard output", e))
        }
    })
}

/// Print warnings to stderr, one per line, each once.
pub fn warn_all(warnings: &[Warning]) {
    let stderr = io::stderr();
    let mut h = stderr.lock();
    let mut seen: Vec<&Warning> = Vec::new();
    for w in warnings {
        if seen.contains(&w) {
            continue;
        }
        seen.push(w);
        let _ = writeln!(h, "relyard: warning: {}", w.message().render(&OptionNames));
    }
}
