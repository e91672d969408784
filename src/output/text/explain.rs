//! The readable summary of an explanation (`relyard explain`): what the moderators
//! explain first, then what remains, then score spread, subgroups and influence.

use super::{excluded_rows, heading, line, para, read_with_care, sheet_line, skipped_rows};
use crate::analysis::Explained;
use crate::benchmark::Prepared;
use crate::format::{fixed, p_cell, p_value, range, significant, wrap};
use crate::metareg::DependentExplanation;
use crate::metareg::influence::StudyInfluence;
use crate::metareg::spread::ScoreSpread;
use crate::metareg::subgroups::Subgroups;
use crate::metareg::{Centring, Explanation, Moderator, OmnibusTest};
use crate::pool::dependence::Inference;
use crate::pool::{CiMethod, Model, ModelFit};
use crate::setting::SettingNames;
use crate::transform::TransformKind;
use std::fmt::Write;

/// How to read a coefficient's sign on the analysis scale.
fn sign_note(t: TransformKind) -> String {
    match t {
        TransformKind::Bonett | TransformKind::HakstianWhalen => format!(
            "changes on the {} scale, {}: a negative change means a HIGHER reliability",
            t.label(),
            t.get().formula()
        ),
        TransformKind::FisherZ => {
            "changes on the Fisher z scale: a positive change means a higher reliability".into()
        }
        TransformKind::Raw => "changes on the coefficient's own scale".into(),
        TransformKind::None => "changes on the scale of the sheet's effects".into(),
    }
}

/// A test of several coefficients: "F(2, 28) = 6.12, p = 0.006" (both df for F).
pub(crate) fn omnibus_words(t: &OmnibusTest) -> String {
    match t.df2 {
        Some(d2) => format!(
            "F({}, {}) = {}, p {}",
            t.df,
            if d2.fract() == 0.0 {
                d2.to_string()
            } else {
                fixed(d2, 1)
            },
            fixed(t.statistic, 2),
            p_value(t.p)
        ),
        None => format!(
            "χ²({}) = {}, p {}",
            t.df,
            fixed(t.statistic, 2),
            p_value(t.p)
        ),
    }
}

/// The table of a model's terms.
fn terms(o: &mut String, names: &[String], fit: &ModelFit, perm: Option<&[Option<f64>]>) {
    let level = fit.options.level.percent();
    let _ = write!(
        o,
        "  {:<36} {:>9} {:>8} {:>21} {:>9}",
        "term",
        "change",
        "SE",
        format!("{level} CI"),
        "p"
    );
    if perm.is_some() {
        let _ = write!(o, " {:>11}", "shuffled p");
    }
    let _ = writeln!(o);
    for (j, (name, c)) in names.iter().zip(&fit.coefficients).enumerate() {
        // A long term name takes a line of its own, the numbers the next.
        let label = if name.chars().count() > 36 {
            let _ = writeln!(o, "  {name}");
            ""
        } else {
            name.as_str()
        };
        let _ = write!(
            o,
            "  {:<36} {:>9} {:>8} {:>21} {:>9}",
            label,
            fixed(c.estimate, 4),
            fixed(c.se, 4),
            range(c.ci.lower, c.ci.upper, |x| fixed(x, 4)),
            p_cell(c.p)
        );
        if let Some(pp) = perm {
            let _ = write!(
                o,
                " {:>11}",
                pp[j].map(|p| fixed(p, 4)).unwrap_or_else(|| "–".into())
            );
        }
        let _ = writeln!(o);
    }
}

/// Render the explain summary.
pub fn explain_summary(p: &Prepared, e: &Explained, names: &dyn SettingNames) -> String {
    let ex = &e.main;
    let fit = &ex.fit;
    let level = fit.options.level.percent();
    let mut o = String::new();
    if !ex.design.moderators.is_empty() {
        moderators(&mut o, p, e);
        let _ = writeln!(o);
    }
    heading(
        &mut o,
        if ex.design.moderators.is_empty() {
            "How much the studies differ"
        } else {
            "What the moderators leave unexplained"
        },
    );
    let tau_ci = fit
        .tau2_ci
        .map(|c| {
            format!(
                ", {level} CI {}",
                range(c.lower, c.upper, |x| significant(x, 3))
            )
        })
        .unwrap_or_default();
    line(
        &mut o,
        "spread of true values",
        &format!("τ² = {}{tau_ci}", significant(fit.tau2.tau2, 3)),
    );
    if let Some(d) = &ex.dependent {
        dependent_lines(&mut o, d, &level);
    }
    line(
        &mut o,
        "between-setting share",
        &format!("I² = {}%", fixed(fit.i2, 1)),
    );
    line(
        &mut o,
        if ex.design.moderators.is_empty() {
            "test of equal values"
        } else {
            "remaining differences"
        },
        &format!(
            "Q = {} on {} df, p {}",
            fixed(fit.heterogeneity.q, 2),
            fit.heterogeneity.df,
            p_value(fit.heterogeneity.p)
        ),
    );
    excluded_rows(
        &mut o,
        "Rows left out of the model (missing moderator value)",
        &ex.design.excluded,
    );
    if let Some(s) = &e.spread {
        spread_section(&mut o, s, &level);
    }
    if let Some(g) = &e.subgroups {
        subgroup_section(&mut o, g, &level, names);
    }
    if let Some(inf) = &e.influence {
        influence_section(&mut o, p, ex, inf);
    }
    let _ = writeln!(o);
    heading(&mut o, "How it was computed");
    line(
        &mut o,
        "sheet",
        &sheet_line(&p.source, p.records.len(), p.skipped.len()),
    );
    line(
        &mut o,
        "analysis scale",
        &format!("{}: {}", p.transform.label(), p.transform.get().formula()),
    );
    match &ex.dependent {
        Some(d) => {
            let s = &d.summary;
            line(
                &mut o,
                "rows, samples, clusters",
                &format!(
                    "{} rows from {} samples in {} clusters",
                    s.fit.k, s.fit.samples, s.fit.clusters
                ),
            );
            line(&mut o, "model", &dependent_words(fit, d));
        }
        None => line(
            &mut o,
            "model",
            &model_words(fit, !ex.design.moderators.is_empty()),
        ),
    }
    skipped_rows(&mut o, &p.skipped, names);
    read_with_care(&mut o, &e.warnings, names);
    o
}

/// The variance left between and within clusters (a multilevel model).
fn dependent_lines(o: &mut String, d: &DependentExplanation, level: &str) {
    let r = &d.summary.dependence;
    let part = |t, ci| crate::output::prose::dependence::component_words(t, ci, level);
    line(
        o,
        "  between clusters",
        &part(r.tau2_cluster, r.tau2_cluster_ci),
    );
    if r.within_identified {
        line(
            o,
            "  within clusters",
            &part(r.tau2_within, r.tau2_within_ci),
        );
    }
    if let Some(t) = r.lrt {
        line(
            o,
            "  cluster variance = 0?",
            &crate::output::prose::dependence::lrt_words(&t),
        );
    }
}

/// The multilevel model and its tests in words.
fn dependent_words(fit: &ModelFit, d: &DependentExplanation) -> String {
    let s = &d.summary;
    let est = match fit.options.model {
        Model::Random(e) => e.abbreviation(),
        Model::Common => "REML",
    };
    let tests = match s.inference {
        Inference::Robust => "cluster-robust (CR2) tests with Satterthwaite df; all terms \
                              together the approximate Hotelling test"
            .to_string(),
        Inference::Model => match fit.df {
            Some(df) => format!("model-based tests (t with {df} df, clusters − coefficients)"),
            None => "model-based Wald tests (z; all terms together χ²)".to_string(),
        },
    };
    format!(
        "multilevel mixed effects (variance between and within clusters) by {est}; sampling \
         errors within a sample correlated at {} (assumed); {tests}; level {}",
        fixed(s.dependence.sampling_correlation, 2),
        fit.options.level.percent()
    )
}

/// The model and its tests in words (a meta-regression, or the plain random-effects model
/// when there are no moderators).
fn model_words(fit: &ModelFit, with_moderators: bool) -> String {
    let opts = fit.options;
    let model = match (opts.model, with_moderators) {
        (Model::Common, _) => "common effect (τ² = 0 assumed)".to_string(),
        (Model::Random(est), true) => format!(
            "mixed effects; the remaining τ² by {} ({})",
            est.label(),
            est.abbreviation()
        ),
        (Model::Random(est), false) => format!(
            "random effects; τ² by {} ({})",
            est.label(),
            est.abbreviation()
        ),
    };
    let together = if with_moderators {
        "; all terms together F"
    } else {
        ""
    };
    let tests = match opts.ci {
        CiMethod::Wald if with_moderators => "Wald tests (z; all terms together χ²)".to_string(),
        CiMethod::Wald => "Wald intervals (z)".to_string(),
        CiMethod::KnappHartung | CiMethod::KnappHartungFloor => format!(
            "Knapp–Hartung {} (t with {} df{together}){}",
            if with_moderators {
                "tests"
            } else {
                "intervals"
            },
            fit.k - fit.p,
            if opts.ci == CiMethod::KnappHartungFloor {
                ", factor at least 1"
            } else {
                ""
            }
        ),
    };
    format!("{model}; {tests}; level {}", opts.level.percent())
}

fn moderators(o: &mut String, p: &Prepared, e: &Explained) {
    let ex = &e.main;
    let counted = match &ex.dependent {
        Some(d) => format!(
            "{} rows from {} samples in {} clusters",
            d.summary.fit.k, d.summary.fit.samples, d.summary.fit.clusters
        ),
        None => format!("{} studies", ex.fit.k),
    };
    heading(
        o,
        &format!("What the moderators explain ({counted} in the model)"),
    );
    para(o, &explained_lead(e));
    let _ = writeln!(o);
    for m in &ex.design.moderators {
        moderator_line(o, m, ex.design.centring);
    }
    let _ = writeln!(o);
    super::para(o, &format!("({})", sign_note(p.transform)));
    let names: Vec<String> = (0..ex.design.names.len())
        .map(|j| crate::output::term_label(ex, j))
        .collect();
    terms(
        o,
        &names,
        &ex.fit,
        e.permutation.as_ref().map(|r| r.coefficient_p.as_slice()),
    );
    if let Some(r) = &e.permutation {
        let failed = if r.failed > 0 {
            format!("; {} could not be fitted and were left out", r.failed)
        } else {
            String::new()
        };
        // Beside a multilevel fit whole clusters' moderator values are permuted.
        let units = if ex.dependent.is_some() {
            "clusters"
        } else {
            "studies"
        };
        let _ = writeln!(
            o,
            "  shuffled p: {} permutations of the moderators across {units}, seed {}{failed}",
            r.permutations, r.seed
        );
    }
}

/// How much the moderators explain (R²) and the test of all of them together.
fn explained_lead(e: &Explained) -> String {
    let ex = &e.main;
    let r2 = match ex.r2 {
        Some(r2) => format!(
            "Together the moderators explain {}% of the variance between settings (R²; τ² \
             {} without them).",
            fixed(r2, 1),
            significant(ex.tau2_intercept_only, 3)
        ),
        None => "The share they explain (R²) is not defined: without them τ² is 0.".into(),
    };
    let test = ex
        .omnibus
        .map(|om| {
            let perm = e
                .permutation
                .as_ref()
                .and_then(|r| r.omnibus_p)
                .map(|pp| {
                    let units = if ex.dependent.is_some() {
                        "clusters"
                    } else {
                        "studies"
                    };
                    format!(
                        "; with the moderators shuffled across {units} p = {}",
                        fixed(pp, 4)
                    )
                })
                .unwrap_or_default();
            format!(
                " Test of all moderators together: {}{perm}.",
                omnibus_words(&om)
            )
        })
        .unwrap_or_default();
    format!("{r2}{test}")
}

/// One moderator as the model used it: numeric (and its centre) or categorical (its
/// reference and levels).
fn moderator_line(o: &mut String, m: &Moderator, centring: Centring) {
    match m {
        Moderator::Numeric { name, centre, .. } => {
            let at = match centring {
                Centring::Means => format!(", centred at its mean {}", significant(*centre, 4)),
                Centring::None => String::new(),
            };
            let _ = writeln!(o, "  {name}: numeric{at}");
        }
        Moderator::Categorical {
            name,
            reference,
            counts,
            ..
        } => {
            let levels: Vec<String> = counts.iter().map(|(l, k)| format!("{l} ({k})")).collect();
            o.push_str(
                &wrap(
                    &format!(
                        "{name}: categorical, compared with \"{reference}\"; levels (studies): {}",
                        levels.join(", ")
                    ),
                    super::WIDTH - 4,
                    "    ",
                )
                .replacen("    ", "  ", 1),
            );
        }
    }
}

fn spread_section(o: &mut String, s: &ScoreSpread, level: &str) {
    let _ = writeln!(o);
    heading(o, "Do coefficients follow the spread of scores?");
    para(
        o,
        &format!(
            "Reading: {}.",
            crate::format::capitalized(s.reading.sentence())
        ),
    );
    let _ = writeln!(o);
    spread_tests(o, s, level);
    line(
        o,
        "typical SD",
        &format!(
            "{} (median, {} metric)",
            significant(s.typical_sd, 3),
            s.metric
        ),
    );
    let mut model = format!(
        "ln(1 − coefficient) on ln(SD), always on the Bonett scale; {} studies",
        s.rows.len()
    );
    if !s.other_moderators().is_empty() {
        model.push_str(&format!(
            "; also in the model: {}",
            crate::format::and_list(&s.other_moderators())
        ));
    }
    line(o, "model", &model);
    if s.log_items_column {
        para(
            o,
            "ln(items) is in the model: the forms differ in length, and a mean score's error \
             variance shrinks with the number of items.",
        );
    }
    if let Some(rel) = s.sd_reliability {
        para(
            o,
            &format!(
                "The reported SDs carry sampling error (reliability of ln(SD) across studies \
                 {}), which flattens the slope by about {}%.",
                fixed(rel, 3),
                fixed(100.0 * (1.0 - rel), 1)
            ),
        );
    }
    excluded_rows(o, "Rows left out of the score-spread model", &s.excluded);
}

/// The slope of ln(SD), its tests against 0 and −2, and the share of τ² it explains.
fn spread_tests(o: &mut String, s: &ScoreSpread, level: &str) {
    line(
        o,
        "slope of ln(SD)",
        &format!(
            "{} (SE {}; {level} CI {})",
            fixed(s.slope.estimate, 3),
            fixed(s.slope.se, 3),
            range(s.slope.ci.lower, s.slope.ci.upper, |x| fixed(x, 3))
        ),
    );
    line(
        o,
        "test of no link (0)",
        &format!("p {}", p_value(s.p_zero)),
    );
    line(
        o,
        "test of slope −2",
        &format!(
            "p {}  (−2: the same error variance everywhere)",
            p_value(s.p_minus_two)
        ),
    );
    match s.tau2_share {
        Some(sh) => line(
            o,
            "τ² explained by spread",
            &format!(
                "{}%  (τ² {} without ln(SD), {} with it)",
                fixed(sh, 1),
                significant(s.tau2_without, 3),
                significant(s.fit.tau2.tau2, 3)
            ),
        ),
        None => line(
            o,
            "τ² explained by spread",
            "not defined (τ² without ln(SD) is 0)",
        ),
    }
}

fn subgroup_section(o: &mut String, g: &Subgroups, level: &str, names: &dyn SettingNames) {
    let _ = writeln!(o);
    heading(o, &format!("A benchmark per {}", g.column));
    let _ = writeln!(
        o,
        "  {:<24} {:>4}  {:>8}  {:>16}  {:>16}  {:>8}  {:>6}",
        "group",
        "k",
        "pooled",
        format!("{level} CI"),
        "expected range",
        "τ²",
        "I²"
    );
    for grp in &g.groups {
        let name: String = grp.level.chars().take(24).collect();
        match &grp.result {
            Ok(b) => {
                let c = b.coefficient;
                let pooled = c
                    .map(|c| fixed(c.estimate, 3))
                    .unwrap_or_else(|| significant(b.pool.estimate, 3));
                let ci = c
                    .map(|c| range(c.ci.lower, c.ci.upper, |x| fixed(x, 3)))
                    .unwrap_or_else(|| {
                        range(b.pool.ci.lower, b.pool.ci.upper, |x| significant(x, 3))
                    });
                let pi = c
                    .and_then(|c| c.pi)
                    .map(|i| range(i.lower, i.upper, |x| fixed(x, 3)))
                    .unwrap_or_else(|| "none".into());
                let _ = writeln!(
                    o,
                    "  {:<24} {:>4}  {:>8}  {:>16}  {:>16}  {:>8}  {:>5}%",
                    name,
                    b.pool.k,
                    pooled,
                    ci,
                    pi,
                    significant(b.pool.tau2.tau2, 3),
                    fixed(b.pool.i2, 0)
                );
            }
            Err(why) => {
                let _ = writeln!(
                    o,
                    "  {:<24} {:>4}  {}",
                    name,
                    grp.rows.len(),
                    why.render(names)
                );
            }
        }
    }
    if let Some(b) = g.between {
        line(
            o,
            "groups differ (own τ²)",
            &format!("Q = {} on {} df, p {}", fixed(b.q, 2), b.df, p_value(b.p)),
        );
    }
    match (g.moderator_test, &g.moderator_test_note) {
        (Some(t), _) => line(o, "groups differ (one τ²)", &omnibus_words(&t)),
        (None, Some(note)) => line(
            o,
            "groups differ (one τ²)",
            &format!("not available: {}", note.render(names)),
        ),
        _ => {}
    }
    excluded_rows(o, "Rows without a value", &g.excluded);
}

fn influence_section(o: &mut String, p: &Prepared, ex: &Explanation, inf: &[StudyInfluence]) {
    let _ = writeln!(o);
    heading(o, "Each study left out in turn");
    let first = if ex.design.moderators.is_empty() {
        "pooled without"
    } else {
        "intercept without"
    };
    let _ = writeln!(
        o,
        "  {:>5}  {:<24} {:>12} {:>12} {:>17} {:>10}  notes",
        "row", "study", "left-out z", "fit change", first, "τ² without"
    );
    let dash = || "–".to_string();
    for s in inf {
        let rec = &p.records[ex.design.used[s.index]];
        let label: String = rec.label.chars().take(24).collect();
        let mut flags = Vec::new();
        if s.outlier {
            flags.push("far from the rest");
        }
        if s.influential {
            flags.push("moves the fit");
        }
        let _ = writeln!(
            o,
            "  {:>5}  {:<24} {:>12} {:>12} {:>17} {:>10}  {}",
            rec.row,
            label,
            s.rstudent.map(|r| fixed(r, 2)).unwrap_or_else(dash),
            s.cooks_distance.map(|d| fixed(d, 3)).unwrap_or_else(dash),
            s.without
                .as_ref()
                .map(|w| fixed(w.beta[0], 4))
                .unwrap_or_else(dash),
            s.without
                .as_ref()
                .map(|w| significant(w.tau2, 3))
                .unwrap_or_else(dash),
            flags.join(", ")
        );
    }
    para(
        o,
        "left-out z: how far the study lies from what the other studies predict for it, in \
         standard errors (the externally studentized residual); \"far from the rest\" when \
         beyond 1.96 (about 1 study in 20 by chance; common practice, no source). fit \
         change: how much leaving it out moves all coefficients together (Cook's distance); \
         \"moves the fit\" when above the median of F(p, k − p) (Cook 1977). The last two \
         columns are on the analysis scale; – where the model cannot be refitted without the \
         study.",
    );
}
