//! `relyard plan`: sample sizes for coefficient alpha.

use super::args::PlanArgs;
use super::output::{Failure, print, print_json};
use super::progress::Bar;
use relyard::analysis::run;
use relyard::output::json::PlanDocument;
use relyard::output::text::plan_summary;

pub fn run_plan(a: PlanArgs) -> Result<(), Failure> {
    let json = a.json;
    let settings = super::config::plan(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let p = analysis.plan.as_ref().expect("plan asks for a sample size");
    if json {
        print_json(&PlanDocument::new(p, settings.level))
    } else {
        print(&plan_summary(p, settings.level))
    }
}
