//! The explanation of the differences between studies: the moderators' model, its
//! permutation test, the score-variance test, subgroups and influence.

use super::settings::{ExplainSettings, Settings};
use super::{Progress, Task, fit_options, with_progress};
use crate::benchmark::Prepared;
use crate::error::Result;
use crate::metareg::dependent::explain_dependent;
use crate::metareg::dependent::multilevel_grouping;
use crate::metareg::influence::{StudyInfluence, influence};
use crate::metareg::permutation::{
    PermutationResult, dependent_permutation_refused, permutation_test, permutation_test_dependent,
};
use crate::metareg::spread::{ScoreSpread, score_spread};
use crate::metareg::subgroups::{Subgroups, subgroups};
use crate::metareg::{
    Centring, Design, Explanation, Moderator, ModeratorSpec, build_design,
    explain as fit_explanation,
};
use crate::pool::dependence::{DependenceMethod, method_in_force};
use crate::warning::Warning;

/// Everything the explanation found.
#[derive(Debug, Clone)]
pub struct Explained {
    /// The model with every moderator (intercept only without moderators).
    pub main: Explanation,
    /// The permutation test, when asked for.
    pub permutation: Option<PermutationResult>,
    /// The score-variance test, when asked for (and when it could be fitted).
    pub spread: Option<ScoreSpread>,
    /// Benchmarks per level of a column, when asked for.
    pub subgroups: Option<Subgroups>,
    /// Leave-one-out diagnostics of the main model, when asked for.
    pub influence: Option<Vec<StudyInfluence>>,
    /// For the figures: each numeric moderator in a model of its own.
    pub marginal: Vec<Explanation>,
    /// Every warning of the explanation (the sheet's first).
    pub warnings: Vec<Warning>,
}

/// Explain the differences between the prepared studies.
pub(crate) fn explain(
    p: &Prepared,
    s: &Settings,
    e: &ExplainSettings,
    progress: &dyn Progress,
) -> Result<Explained> {
    let specs = &s.moderators.specs;
    let design = build_design(p, specs, s.moderators.centring)?;
    let main = fit_main(p, design, s)?;
    let mut warnings = p.warnings.clone();
    warnings.extend(main.warnings.iter().cloned());
    warnings.extend(not_modelled(p, s));
    let dependent = main.dependent.is_some();
    // Beside a multilevel fit, whole clusters are permuted, when each moderator takes one
    // value per cluster (said in a warning when not).
    let refused = match e.permutations {
        Some(_) if dependent => dependent_permutation_refused(p, &main),
        _ => None,
    };
    let permutation = match e.permutations {
        Some(_) if refused.is_some() => {
            warnings.push(Warning::PartFailed {
                what: "the permutation test".into(),
                why: refused.unwrap_or_default().into(),
            });
            None
        }
        Some(n) if dependent => Some(with_progress(progress, Task::Permutations, n, |tick| {
            permutation_test_dependent(p, &main, n, s.seed, tick, &|| progress.stop_asked())
        })?),
        Some(n) => Some(with_progress(progress, Task::Permutations, n, |tick| {
            permutation_test(p, &main, n, s.seed, tick, &|| progress.stop_asked())
        })?),
        None => None,
    };
    let spread = if e.score_spread {
        spread_part(p, s, &mut warnings)?
    } else {
        None
    };
    let groups = match &e.by {
        Some(col) => {
            let g = subgroups(p, col, &s.pool_options(), &s.model.dependence)?;
            warnings.extend(g.warnings.iter().cloned());
            Some(g)
        }
        None => None,
    };
    let infl = if e.influence && dependent {
        let rows = main.design.used.len();
        Some(with_progress(progress, Task::Influence, rows, |tick| {
            crate::metareg::dependent::influence_dependent(p, &main, tick)
        })?)
    } else if e.influence {
        let data = main.data(p)?;
        Some(with_progress(
            progress,
            Task::Influence,
            data.k(),
            |tick| influence(&data, &main.fit, tick),
        )?)
    } else {
        None
    };
    let mut marginal = Vec::new();
    if s.figures {
        for m in &main.design.moderators {
            if let Moderator::Numeric { name, .. } = m {
                let d = build_design(p, &[ModeratorSpec::auto(name.clone())], Centring::None)?;
                marginal.push(fit_main(p, d, s)?);
            }
        }
    }
    Ok(Explained {
        main,
        permutation,
        spread,
        subgroups: groups,
        influence: infl,
        marginal,
        warnings,
    })
}

/// The moderators' model: the multilevel model when the sheet's rows share samples or
/// clusters (and dependence is modelled), else the usual mixed-effects model.
fn fit_main(p: &Prepared, design: Design, s: &Settings) -> Result<Explanation> {
    let opts = fit_options(s);
    match multilevel_grouping(p, &design.used, &opts) {
        Some(g) => explain_dependent(p, design, &opts, &opts.dependence, &g),
        None => fit_explanation(p, design, &opts),
    }
}

/// The warnings of the parts that treat dependent rows as independent.
fn not_modelled(p: &Prepared, s: &Settings) -> Vec<Warning> {
    // Under composites the explanation's studies are the composites (not grouped); only an
    // explicit `ignore` fits rows that share samples or clusters as independent.
    let ignored =
        p.grouped() && method_in_force(&s.model.dependence, true) == DependenceMethod::Ignore;
    ignored
        .then(|| Warning::DependenceNotModelled {
            part: "the meta-regression (--dependence ignore)".into(),
        })
        .into_iter()
        .collect()
}

/// The score-variance test with the run's moderators; a model that cannot be fitted
/// leaves the other results standing, with a warning that says why.
fn spread_part(
    p: &Prepared,
    s: &Settings,
    warnings: &mut Vec<Warning>,
) -> Result<Option<ScoreSpread>> {
    match score_spread(
        p,
        s.moderators.spread_metric,
        &s.moderators.specs,
        s.moderators.centring,
        &fit_options(s),
    ) {
        Ok(sp) => {
            for w in &sp.fit.warnings {
                if matches!(w, Warning::NotConverged { .. }) {
                    warnings.push(w.clone());
                }
            }
            if !sp.excluded.is_empty() {
                warnings.push(Warning::RowsLeftOutOfModel {
                    rows: sp.excluded.iter().map(|e| e.row).collect(),
                    why: "the SD cannot be used (score-spread model)".into(),
                });
            }
            Ok(Some(sp))
        }
        Err(e) if e.is_bad_input() => {
            warnings.push(Warning::PartFailed {
                what: "the score-spread test".into(),
                why: e.into_message(),
            });
            Ok(None)
        }
        Err(e) => Err(e),
    }
}
