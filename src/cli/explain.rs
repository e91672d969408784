//! `relyard explain`: moderators, score spread, subgroups and influence.

use super::config::{ExplainConfig, fit_options};
use super::output::{Failure, print, print_json, warn_all};
use super::progress::bar;
use relyard::benchmark::{Prepared, prepare};
use relyard::metareg::influence::{StudyInfluence, influence};
use relyard::metareg::permutation::{PermutationResult, permutation_test};
use relyard::metareg::spread::{ScoreSpread, score_spread};
use relyard::metareg::subgroups::{Subgroups, subgroups};
use relyard::metareg::{Explanation, build_design, explain};
use relyard::report::explain::{ExplainDocument, ExplainParts, explain_summary};
use relyard::sheet::read_coding_sheet;

/// Everything `relyard explain` computes (shared with `relyard report`).
pub struct Explained {
    pub prepared: Prepared,
    pub main: Explanation,
    pub permutation: Option<PermutationResult>,
    pub spread: Option<ScoreSpread>,
    pub groups: Option<Subgroups>,
    pub influence: Option<Vec<StudyInfluence>>,
    pub warnings: Vec<relyard::Warning>,
}

impl Explained {
    pub fn parts(&self) -> ExplainParts<'_> {
        ExplainParts {
            prepared: &self.prepared,
            main: &self.main,
            permutation: self.permutation.as_ref(),
            spread: self.spread.as_ref(),
            subgroups: self.groups.as_ref(),
            influence: self.influence.as_deref(),
            warnings: &self.warnings,
        }
    }
}

pub fn compute(c: &ExplainConfig) -> Result<Explained, Failure> {
    let sheet = read_coding_sheet(&c.sheet.path, &c.sheet.options)?;
    compute_from(c, prepare(sheet, &c.benchmark)?)
}

/// [`compute`] from studies already prepared with `c`'s options (`relyard report`).
pub fn compute_from(c: &ExplainConfig, prepared: Prepared) -> Result<Explained, Failure> {
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
    Ok(Explained {
        prepared,
        main,
        permutation,
        spread,
        groups,
        influence: infl,
        warnings,
    })
}

pub fn run(c: &ExplainConfig) -> Result<(), Failure> {
    let e = compute(c)?;
    warn_all(&e.warnings);
    let parts = e.parts();
    if c.json {
        let doc = ExplainDocument::new(&parts);
        print_json(&doc)
    } else {
        print(&explain_summary(&parts))
    }
}
