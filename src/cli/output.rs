//! Writing results: stdout with a closed pipe treated as success, stderr for warnings,
//! and files written atomically without overwriting unless forced.

use super::names::OptionNames;
use relyard::{Error, Warning};
use std::fmt;
use std::io::{self, Write};
use std::path::Path;

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

/// Write a new file atomically (a temporary file beside it, then a rename); an
/// existing file is replaced only with `force`.
pub fn write_new_file(path: &Path, contents: &str, force: bool) -> Result<(), Failure> {
    write_new_bytes(path, contents.as_bytes(), force)
}

/// [`write_new_file`] for bytes (images).
pub fn write_new_bytes(path: &Path, contents: &[u8], force: bool) -> Result<(), Failure> {
    let shown = path.display().to_string();
    if path.exists() && !force {
        return Err(Failure::Usage(UsageError(format!(
            "{shown} already exists; choose another name or pass --force to replace it"
        ))));
    }
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or_else(|| Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = std::fs::write(&tmp, contents).and_then(|_| std::fs::rename(&tmp, path));
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(Failure::Lib(Error::io(format!("writing {shown}"), e)));
    }
    Ok(())
}
