//! `relyard explain`: moderators, score spread, subgroups and influence.

use super::config::{ExplainConfig, fit_options};
use super::output::{Failure, print, print_json, warn_all};
use super::progress::bar;
use relyard::benchmark::prepare;
use relyard::metareg::influence::influence;
use relyard::metareg::permutation::permutation_test;
use relyard::metareg::spread::score_spread;
use relyard::metareg::subgroups::subgroups;
use relyard::metareg::{build_design, explain};
use relyard::report::explain::{ExplainDocument, ExplainParts, explain_summary};
use relyard::sheet::read_coding_sheet;

pub fn run(c: &ExplainConfig) -> Result<(), Failure> {
    let sheet = read_coding_sheet(&c.sheet.path, &c.sheet.options)?;
    let prepared = prepare(sheet, &c.benchmark)?;
    let opts = fit_options(&c.benchmark);
    let design = build_design(&prepared, &c.moderators.specs)?;
    let main = explain(&prepared, design, &opts)?;
    let mut warnings = prepared.warnings.clone();
    warnings.extend(main.warnings.iter().cloned());

    let permutation = match c.permutations {
        Some(n) => {
            let pb = bar(n, "permutations");
            let r = permutation_test(&prepared, &main, n, c.seed, &|d| pb.inc(d as u64))?;
            pb.finish_and_clear();
            Some(r)
        }
        None => None,
    };
    // A score-spread model that cannot be fitted leaves the other results standing.
    let spread = if c.score_spread {
        match score_spread(
            &prepared,
            c.moderators.spread_metric,
            &c.moderators.specs,
            &opts,
        ) {
            Ok(s) => {
                for w in &s.fit.warnings {
                    if w.code() == "not_converged" {
                        warnings.push(w.clone());
                    }
                }
                if !s.excluded.is_empty() {
                    warnings.push(relyard::Warning::RowsLeftOutOfModel {
                        rows: s.excluded.iter().map(|e| e.row).collect(),
                        why: "their SD cannot be used (score-spread model)".into(),
                    });
                }
                Some(s)
            }
            Err(e) if e.is_bad_input() => {
                warnings.push(relyard::Warning::PartFailed {
                    what: "the score-spread test".into(),
                    why: e.to_string(),
                });
                None
            }
            Err(e) => return Err(e.into()),
        }
    } else {
        None
    };
    let groups = match &c.by {
        Some(col) => Some(subgroups(&prepared, col, &c.benchmark.pool)?),
        None => None,
    };
    let infl = if c.influence {
        Some(influence(&main.data(&prepared)?, &main.fit)?)
    } else {
        None
    };
    warn_all(&warnings);
    let parts = ExplainParts {
        prepared: &prepared,
        main: &main,
        permutation: permutation.as_ref(),
        spread: spread.as_ref(),
        subgroups: groups.as_ref(),
        influence: infl.as_deref(),
        warnings: &warnings,
    };
    if c.json {
        let doc = ExplainDocument::new(&parts);
        print_json(&doc)
    } else {
        print(&explain_summary(&parts))
    }
}
