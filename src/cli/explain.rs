//! `relyard explain`: moderators, score spread, subgroups and influence.

use super::args::ExplainArgs;
use super::names::OptionNames;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::Bar;
use relyard::analysis::run;
use relyard::output::json::ExplainDocument;
use relyard::output::text::explain_summary;

pub fn run_explain(a: ExplainArgs) -> Result<(), Failure> {
    let json = a.json;
    let settings = super::config::explain(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let (p, e) = (
        analysis.prepared.as_ref().expect("explain reads a sheet"),
        analysis
            .explanation
            .as_ref()
            .expect("explain asks for an explanation"),
    );
    warn_all(&e.warnings);
    if json {
        print_json(&ExplainDocument::new(p, e, &OptionNames))
    } else {
        print(&explain_summary(p, e, &OptionNames))
    }
}
