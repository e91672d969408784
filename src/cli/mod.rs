//! The command-line face: raw clap arguments (`args`) are turned into the analysis's
//! `Settings` (`config`) before any work runs, `relyard::analysis::run` does the work,
//! and each command renders the `Analysis` (one file per command). Settings in messages
//! are named as options (`names`).

mod args;
mod check;
mod compare;
mod config;
mod correct;
mod explain;
mod files;
mod icc;
mod items;
mod names;
mod output;
mod plan;
mod pool;
mod progress;
mod report;
mod serve;
mod template;

use clap::Parser;
use std::io::Write;

/// Exit status for success.
pub const EXIT_OK: i32 = 0;
/// Exit status for any failure that is not the user's input.
pub const EXIT_FAILURE: i32 = 1;
/// Exit status for bad input or bad usage.
pub const EXIT_BAD_INPUT: i32 = 2;

/// Run the command line and return the exit status.
pub fn run() -> i32 {
    let cli = match args::Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            // Help and version go to stdout with status 0; usage errors exit with 2.
            let _ = e.print();
            return if e.use_stderr() {
                EXIT_BAD_INPUT
            } else {
                EXIT_OK
            };
        }
    };
    let result = match cli.command {
        args::Command::Pool(a) => pool::run_pool(a),
        args::Command::Explain(a) => explain::run_explain(a),
        args::Command::Check(a) => check::run_check(a),
        args::Command::Items(a) => items::run_items(a),
        args::Command::Icc(a) => icc::run_icc(a),
        args::Command::Compare(a) => compare::run_compare(a),
        args::Command::Plan(a) => plan::run_plan(a),
        args::Command::Correct(a) => correct::run_correct(a),
        args::Command::Template(a) => template::run_template(a),
        args::Command::Report(a) => report::run_report(a),
        args::Command::Serve(a) => serve::run_serve(a),
    };
    let stderr = std::io::stderr();
    let mut h = stderr.lock();
    match result {
        Ok(()) | Err(output::Failure::ClosedPipe) => EXIT_OK,
        Err(output::Failure::Usage(u)) => {
            let _ = writeln!(h, "relyard: error: {u}");
            EXIT_BAD_INPUT
        }
        Err(output::Failure::Lib(e)) => {
            let _ = writeln!(h, "relyard: error: {}", e.render(&names::OptionNames));
            if e.is_bad_input() {
                EXIT_BAD_INPUT
            } else {
                EXIT_FAILURE
            }
        }
    }
}
