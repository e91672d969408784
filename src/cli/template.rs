//! `relyard template`: an empty coding sheet and its data dictionary.

use super::args::TemplateArgs;
use super::config::TemplateConfig;
use super::files::{refuse_link, write_new_file};
use super::output::{Failure, UsageError, print};
use relyard::sheet::template::{dictionary, empty_sheet};

pub fn run_template(a: TemplateArgs) -> Result<(), Failure> {
    let c = TemplateConfig::from_args(a)?;
    // Check both targets before writing either, so a refusal leaves nothing half done.
    for p in [&c.sheet_path, &c.dictionary_path] {
        refuse_link(p)?;
        if p.exists() && !c.force {
            return Err(Failure::Usage(UsageError(format!(
                "{} already exists; choose another name or pass --force to replace it",
                p.display()
            ))));
        }
    }
    write_new_file(
        &c.sheet_path,
        empty_sheet(&c.extra_columns).as_bytes(),
        c.force,
    )?;
    write_new_file(
        &c.dictionary_path,
        dictionary(&c.extra_columns).as_bytes(),
        c.force,
    )?;
    print(&format!(
        "wrote {} (an empty coding sheet) and {} (what each column holds)\n",
        c.sheet_path.display(),
        c.dictionary_path.display()
    ))
}
