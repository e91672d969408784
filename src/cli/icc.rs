//! `relyard icc`: intraclass correlations of a table of scores.

use super::args::IccArgs;
use super::names::OptionNames;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::Bar;
use relyard::analysis::run;
use relyard::output::json::IccDocument;
use relyard::output::text::icc_summary;

pub fn run_icc(a: IccArgs) -> Result<(), Failure> {
    let json = a.json;
    let settings = super::config::icc(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let o = analysis
        .icc
        .as_ref()
        .expect("icc asks for intraclass correlations");
    warn_all(&o.warnings);
    if json {
        print_json(&IccDocument::new(o, &OptionNames))
    } else {
        print(&icc_summary(o, &OptionNames))
    }
}
