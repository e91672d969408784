//! A progress bar on standard error, shown only when it is a terminal.

use indicatif::{ProgressBar, ProgressStyle};
use std::io::IsTerminal;

/// A bar for `total` steps with a message; hidden when stderr is not a terminal.
pub fn bar(total: usize, message: &str) -> ProgressBar {
    if !std::io::stderr().is_terminal() {
        return ProgressBar::hidden();
    }
    let pb = ProgressBar::new(total as u64);
    let style = ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} ({eta} left)")
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> ");
    pb.set_style(style);
    pb.set_message(message.to_string());
    pb
}
