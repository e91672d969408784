//! `relyard template`: an empty coding sheet and its data dictionary.

use super::args::TemplateArgs;
use super::config::TemplateConfig;
use super::files::{refuse_link, write_new_file};
use super::output::{Failure, UsageError, print};
use relyard::sheet::template::{WORKBOOK_SHEETS, dictionary, empty_sheet, workbook};

pub fn run_template(a: TemplateArgs) -> Result<(), Failure> {
    let c = TemplateConfig::from_args(a)?;
    // Check both targets before writing either, so a refusal leaves nothing half done.
    for p in std::iter::once(&c.sheet_path).chain(c.dictionary_path.as_ref()) {
        refuse_link(p)?;
        if p.exists() && !c.force {
            return Err(Failure::Usage(UsageError(format!(
                "{} already exists; choose another name or pass --force to replace it",
                p.display()
            ))));
        }
    }
    let Some(dictionary_path) = &c.dictionary_path else {
        let bytes = workbook(&c.extra_columns).map_err(|e| {
            Failure::Lib(relyard::Error::io(
                format!("writing {}", c.sheet_path.display()),
                e,
            ))
        })?;
        write_new_file(&c.sheet_path, &bytes, c.force)?;
        return print(&format!(
            "wrote {} (a workbook: an empty coding sheet on worksheet \"{}\", what each \
             column holds on worksheet \"{}\")\n",
            c.sheet_path.display(),
            WORKBOOK_SHEETS[0],
            WORKBOOK_SHEETS[1]
        ));
    };
    write_new_file(
        &c.sheet_path,
        empty_sheet(&c.extra_columns).as_bytes(),
        c.force,
    )?;
    write_new_file(
        dictionary_path,
        dictionary(&c.extra_columns).as_bytes(),
        c.force,
    )?;
    print(&format!(
        "wrote {} (an empty coding sheet) and {} (what each column holds)\n",
        c.sheet_path.display(),
        dictionary_path.display()
    ))
}
