//! `relyard compare`: tests of equality for independent alphas.

use super::args::CompareArgs;
use super::names::OptionNames;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::Bar;
use relyard::analysis::run;
use relyard::output::json::CompareDocument;
use relyard::output::text::compare_summary;

pub fn run_compare(a: CompareArgs) -> Result<(), Failure> {
    let json = a.json;
    let settings = super::config::compare(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let c = analysis
        .comparison
        .as_ref()
        .expect("compare asks for a comparison");
    warn_all(&c.warnings);
    if json {
        print_json(&CompareDocument::new(c, &OptionNames))
    } else {
        print(&compare_summary(c, &OptionNames))
    }
}
