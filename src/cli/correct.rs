//! `relyard correct`: what-if correction for measurement error.

use super::args::CorrectArgs;
use super::names::OptionNames;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::Bar;
use relyard::analysis::{Correction, run};
use relyard::output::json::CorrectionDocument;
use relyard::output::text::{correlation_summary, regression_summary};

pub fn run_correct(a: CorrectArgs) -> Result<(), Failure> {
    let json = a.json;
    let settings = super::config::correct(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let c = analysis
        .correction
        .as_ref()
        .expect("correct asks for a correction");
    warn_all(c.warnings());
    if json {
        return print_json(&CorrectionDocument::new(c, settings.level, &OptionNames));
    }
    match c {
        Correction::Correlation {
            input,
            result,
            choices,
            scores,
            warnings,
        } => print(&correlation_summary(
            input,
            result,
            (choices, scores),
            settings.level,
            warnings,
            &OptionNames,
        )),
        Correction::Regression {
            input,
            result,
            choices,
            scores,
            warnings,
        } => print(&regression_summary(
            input,
            result,
            (choices, scores),
            settings.level,
            warnings,
            &OptionNames,
        )),
    }
}
