//! The `relyard` command: parse the command line, run, map errors to exit statuses.

mod cli;

fn main() {
    std::process::exit(cli::run());
}
