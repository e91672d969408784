//! `relyard plan`: sample sizes for coefficient alpha.

use super::args::PlanArgs;
use super::output::{Failure, print, print_json};
use relyard::Error;
use relyard::plan::{n_for_test, n_for_width};
use relyard::report::items::{PlanDocument, plan_summary};
use std::collections::BTreeMap;

pub fn run(a: PlanArgs) -> Result<(), Failure> {
    let (goal, size, inputs): (&'static str, _, Vec<(&'static str, f64)>) = match (a.width, a.null)
    {
        (Some(w), None) => (
            "width",
            n_for_width(a.planning, w, a.items, a.level)?,
            vec![
                ("items", f64::from(a.items)),
                ("planning", a.planning),
                ("width", w),
                ("level", a.level),
            ],
        ),
        (None, Some(null)) => (
            "test",
            n_for_test(
                null,
                a.planning,
                a.items,
                a.significance,
                a.power,
                a.one_sided,
            )?,
            vec![
                ("items", f64::from(a.items)),
                ("planning", a.planning),
                ("null", null),
                ("power", a.power),
                ("significance", a.significance),
                ("sides", if a.one_sided { 1.0 } else { 2.0 }),
            ],
        ),
        _ => {
            return Err(Failure::Lib(Error::InvalidOption(
                "say what to plan for: --width W (an interval of that width) or --null ALPHA (a \
                 test against that value)"
                    .into(),
            )));
        }
    };
    if a.json {
        let doc = PlanDocument {
            schema_version: relyard::report::json::SCHEMA_VERSION,
            command: "plan",
            relyard_version: env!("CARGO_PKG_VERSION"),
            goal,
            n: size.n,
            n_exact: size.exact,
            inputs: inputs.iter().copied().collect::<BTreeMap<_, _>>(),
        };
        print_json(&doc)
    } else {
        let shown: Vec<(&str, String)> = inputs.iter().map(|(k, v)| (*k, format!("{v}"))).collect();
        let title = if goal == "width" {
            "an interval of a given width"
        } else {
            "a test with a given power"
        };
        print(&plan_summary(title, &shown, &size))
    }
}
