//! `relyard check`: place a new study against the benchmark.

use super::args::CheckArgs;
use super::names::OptionNames;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::Bar;
use relyard::analysis::run;
use relyard::output::json::CheckDocument;
use relyard::output::prose::placement_paragraph;
use relyard::output::text::check_summary;

pub fn run_check(a: CheckArgs) -> Result<(), Failure> {
    let json = a.json;
    let settings = super::config::check(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let (p, pl) = (
        analysis.prepared.as_ref().expect("check reads a sheet"),
        analysis
            .placement
            .as_ref()
            .expect("check asks for a placement"),
    );
    warn_all(&pl.warnings);
    let paragraph = placement_paragraph(pl, settings.measure.as_deref());
    if json {
        print_json(&CheckDocument::new(p, pl, &paragraph, &OptionNames))
    } else {
        print(&check_summary(p, pl, &paragraph, &OptionNames))
    }
}
