//! The `relyard` command: parse the command line, run, map errors to exit statuses.

mod cli;

fn main() {
    // A damaged workbook that makes its reader panic is refused with an error of its own;
    // the panic's own message would only confuse.
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if !relyard::sheet::panic_is_contained() {
            default_hook(info);
        }
    }));
    std::process::exit(cli::run());
}
