//! The command-line front end: raw clap arguments (`args`) are turned into a validated
//! configuration (`config`) before any work runs; each command has its own module.

mod args;
mod check;
mod compare;
mod config;
mod correct;
mod explain;
mod items;
mod output;
mod plan;
mod pool;
mod progress;
mod report;

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
        args::Command::Pool(a) => config::PoolConfig::from_args(a).and_then(|c| pool::run(&c)),
        args::Command::Explain(a) => {
            config::ExplainConfig::from_args(a).and_then(|c| explain::run(&c))
        }
        args::Command::Check(a) => config::CheckConfig::from_args(a).and_then(|c| check::run(&c)),
        args::Command::Items(a) => config::ItemsConfig::from_args(a).and_then(|c| items::run(&c)),
        args::Command::Compare(a) => compare::run(a),
        args::Command::Plan(a) => plan::run(a),
        args::Command::Correct(a) => correct::run(a),
        args::Command::Template(a) => {
            config::TemplateConfig::from_args(a).and_then(|c| template::run(&c))
        }
        args::Command::Report(a) => report::run(a),
    };
    match result {
        Ok(()) => EXIT_OK,
        Err(output::Failure::ClosedPipe) => EXIT_OK,
        Err(output::Failure::Lib(e)) => {
            let stderr = std::io::stderr();
            let mut h = stderr.lock();
            let _ = writeln!(h, "relyard: error: {e}");
            if e.is_bad_input() {
                EXIT_BAD_INPUT
            } else {
                EXIT_FAILURE
            }
        }
    }
}
