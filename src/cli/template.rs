//! `relyard template`: an empty coding sheet and its data dictionary.

use super::config::TemplateConfig;
use super::output::{Failure, print, write_new_file};
use relyard::sheet::template::{dictionary, empty_sheet};

pub fn run(c: &TemplateConfig) -> Result<(), Failure> {
    // Check both targets before writing either, so a refusal leaves nothing half done.
    for p in [&c.sheet_path, &c.dictionary_path] {
        if p.exists() && !c.force {
            return Err(Failure::Lib(relyard::Error::InvalidOption(format!(
                "{} already exists; choose another name or pass --force to replace it",
                p.display()
            ))));
        }
    }
    write_new_file(&c.sheet_path, &empty_sheet(&c.extra_columns), c.force)?;
    write_new_file(&c.dictionary_path, &dictionary(&c.extra_columns), c.force)?;
    print(&format!(
        "wrote {} (an empty coding sheet) and {} (what each column holds)\n",
        c.sheet_path.display(),
        c.dictionary_path.display()
    ))
}
