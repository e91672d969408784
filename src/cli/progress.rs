//! Progress on standard error, shown only when it is a terminal.

use indicatif::{ProgressBar, ProgressStyle};
use relyard::analysis::{Progress, Task};
use std::io::IsTerminal;
use std::sync::Mutex;

/// A progress bar for the analysis's long tasks; nothing when stderr is not a terminal.
#[derive(Default)]
pub struct Bar {
    bar: Mutex<Option<ProgressBar>>,
}

impl Progress for Bar {
    fn start(&self, task: Task, total: u64) {
        let pb = if std::io::stderr().is_terminal() {
            let pb = ProgressBar::new(total);
            let style = ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} ({eta} left)")
                .unwrap_or_else(|_| ProgressStyle::default_bar())
                .progress_chars("=> ");
            pb.set_style(style);
            pb.set_message(task.name());
            pb
        } else {
            ProgressBar::hidden()
        };
        if let Ok(mut b) = self.bar.lock() {
            *b = Some(pb);
        }
    }

    fn advance(&self, steps: u64) {
        if let Ok(b) = self.bar.lock()
            && let Some(pb) = b.as_ref()
        {
            pb.inc(steps);
        }
    }

    fn finish(&self) {
        if let Ok(mut b) = self.bar.lock()
            && let Some(pb) = b.take()
        {
            pb.finish_and_clear();
        }
    }
}
