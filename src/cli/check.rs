//! `relyard check`: place a new study against the benchmark.

use super::config::{CheckConfig, fit_options};
use super::output::{Failure, print, print_json, warn_all};
use relyard::benchmark::{Prepared, prepare};
use relyard::placement::{Placement, place};
use relyard::report::check::{CheckDocument, check_paragraph, check_summary};
use relyard::report::paragraph::Paragraph;
use relyard::sheet::read_coding_sheet;

/// The prepared studies, the placement and its paragraph (shared with `relyard report`).
pub fn compute(c: &CheckConfig) -> Result<(Prepared, Placement, Paragraph), Failure> {
    let sheet = read_coding_sheet(&c.sheet.path, &c.sheet.options)?;
    compute_from(c, prepare(sheet, &c.benchmark)?)
}

/// [`compute`] from studies already prepared with `c`'s options (`relyard report`).
pub fn compute_from(
    c: &CheckConfig,
    prepared: Prepared,
) -> Result<(Prepared, Placement, Paragraph), Failure> {
    let opts = fit_options(&c.benchmark);
    let pl = place(
        &prepared,
        &c.study,
        &c.moderators.specs,
        &c.at,
        c.moderators.spread_metric,
        &opts,
    )?;
    let paragraph = check_paragraph(&prepared, &pl, c.measure.as_deref());
    Ok((prepared, pl, paragraph))
}

pub fn run(c: &CheckConfig) -> Result<(), Failure> {
    let (prepared, pl, paragraph) = compute(c)?;
    warn_all(&pl.warnings);
    if c.json {
        let doc = CheckDocument::new(&prepared, &pl, &paragraph, &pl.warnings);
        print_json(&doc)
    } else {
        print(&check_summary(&prepared, &pl, &paragraph))
    }
}
