//! The readable summaries of `relyard items`, `relyard compare` and `relyard plan`.

use super::read_with_care;
use crate::analysis::{Comparison, ItemsOutcome, PlanOutcome};
use crate::format::{fixed, p_value, range, thousands, wrap};
use crate::items::bootstrap::OmegaBootstrap;
use crate::items::multidimensional::MultidimensionalAnalysis;
use crate::items::{FactorPart, ItemAnalysis, ItemData, Missing, Recommendation};
use crate::level::Level;
use crate::numeric::MinimizeStop;
use crate::setting::{Setting, SettingNames};
use std::fmt::Write;

/// Render the items summary.
pub fn items_summary(o_: &ItemsOutcome, names: &dyn SettingNames) -> String {
    let (d, a) = (&o_.data, &o_.analysis);
    let mut o = String::new();
    items_heading(&mut o, d, a);
    items_input(&mut o, d);
    let _ = writeln!(o);
    coefficient_rows(&mut o, o_, names);
    match &a.factor {
        Ok(f) => factor_model(&mut o, f),
        Err(why) => {
            let _ = writeln!(o, "  omega               not available: {why}");
        }
    }
    let _ = writeln!(o);
    item_rows(&mut o, d, a);
    let _ = writeln!(o);
    scale_score(&mut o, a);
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "Which coefficient to report: {}",
        recommendation_words(a.recommendation)
    );
    o.push_str(&wrap(&format!("{}.", a.reading.render(names)), 86, "  "));
    if a.glb.is_ok() {
        let _ = writeln!(o);
        let _ = writeln!(o, "About the greatest lower bound:");
        o.push_str(&wrap(crate::output::json::GLB_CAUTION, 86, "  "));
    }
    match &o_.ordinal {
        Some(Ok(p)) => {
            let _ = writeln!(o);
            let _ = writeln!(
                o,
                "Taken as ordinal: ordinal alpha {} (alpha of the polychoric correlations)",
                fixed(p.alpha, 3)
            );
            let _ = match &p.omega {
                Ok(w) => writeln!(
                    o,
                    "  categorical omega {} (the observed sum's share of common-factor variance)",
                    fixed(*w, 3)
                ),
                Err(why) => writeln!(o, "  categorical omega not available: {why}"),
            };
            o.push_str(&wrap(crate::output::json::ORDINAL_CAUTION, 86, "  "));
        }
        Some(Err(why)) => {
            let _ = writeln!(o);
            let _ = writeln!(o, "Taken as ordinal: not available: {why}");
        }
        None => {}
    }
    match &o_.multidimensional {
        Some(Ok(m)) => subscales(&mut o, m, &d.names),
        Some(Err(why)) => {
            let _ = writeln!(o);
            let _ = writeln!(o, "Subscales: not available: {why}");
        }
        None => {}
    }
    read_with_care(&mut o, &o_.warnings, names);
    o
}

/// The title line: how many items from how many respondents, and its rule.
fn items_heading(o: &mut String, d: &ItemData, a: &ItemAnalysis) {
    let _ = match d.missing {
        Missing::Listwise => writeln!(
            o,
            "Reliability of {} items from {} respondents",
            a.k,
            thousands(a.n_used)
        ),
        Missing::Pairwise => writeln!(
            o,
            "Reliability of {} items from {} respondents (pairwise; n = {} is the smallest pair count)",
            a.k,
            thousands(d.rows_read),
            thousands(a.n_used)
        ),
    };
    let _ = writeln!(o, "{}", "─".repeat(72));
}

/// The file line of a table of scores: its name, worksheet and rows read, and `more`.
pub(super) fn file_line(o: &mut String, d: &ItemData, more: &str) {
    let sheet = d
        .worksheet
        .as_ref()
        .map(|w| format!("workbook, worksheet \"{w}\"; "))
        .unwrap_or_default();
    let _ = writeln!(
        o,
        "  file          {} ({sheet}{} rows read{more})",
        d.file,
        thousands(d.rows_read)
    );
}

/// What was read: the file, identifiers left out, missing answers, reversed items.
/// An SPSS file's value labels of the items analysed: one line when every item shares them,
/// else one line per item.
fn spss_labels(o: &mut String, d: &ItemData) {
    let words = |l: &[(f64, String)]| -> String {
        l.iter()
            .map(|(v, s)| format!("{} = {s}", crate::format::trimmed(*v, 9)))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let of_items: Vec<&(String, Vec<(f64, String)>)> = d
        .value_labels
        .iter()
        .filter(|(v, _)| d.names.contains(v))
        .collect();
    let Some(first) = of_items.first() else {
        return;
    };
    if of_items.len() == d.names.len() && of_items.iter().all(|(_, l)| *l == first.1) {
        let _ = writeln!(o, "  value labels  {} (every item)", words(&first.1));
        return;
    }
    for (v, l) in of_items {
        let _ = writeln!(o, "  value labels  {v}: {}", words(l));
    }
}

fn items_input(o: &mut String, d: &ItemData) {
    file_line(o, d, "");
    if !d.identifiers.is_empty() {
        let _ = writeln!(
            o,
            "  identifiers   {} (left out of the items)",
            d.identifiers.join(", ")
        );
    }
    let missing = match d.missing {
        Missing::Listwise => format!(
            "listwise: {} complete respondents used, {} left out for {}",
            thousands(d.complete_rows),
            thousands(d.rows_read - d.complete_rows),
            crate::format::count(d.missing_cells, "missing cell", "missing cells")
        ),
        Missing::Pairwise => format!(
            "pairwise: each covariance from the respondents who answered both items (fewest {}); {}",
            thousands(d.moments.n_min()),
            crate::format::count(d.missing_cells, "missing cell", "missing cells")
        ),
    };
    let _ = writeln!(o, "  missing       {missing}");
    if let Some(u) = d.user_missing_cells {
        let _ = writeln!(
            o,
            "  SPSS file     {} with a declared user-missing code read as missing",
            crate::format::count(u, "cell", "cells")
        );
    }
    spss_labels(o, d);
    if !d.missing_codes.is_empty() {
        let codes: Vec<String> = d
            .missing_codes
            .iter()
            .map(|c| crate::format::trimmed(*c, 9))
            .collect();
        let _ = writeln!(o, "  missing codes {} (read as missing)", codes.join(", "));
    }
    let reversed: Vec<&str> = d
        .names
        .iter()
        .zip(&d.reversed)
        .filter(|(_, r)| **r)
        .map(|(n, _)| n.as_str())
        .collect();
    if !reversed.is_empty() {
        let _ = writeln!(o, "  reversed      {}", reversed.join(", "));
    }
}

/// The coefficients with their intervals: alpha, standardized alpha, λ2 and omega.
fn coefficient_rows(o: &mut String, o_: &ItemsOutcome, names: &dyn SettingNames) {
    let (d, a) = (&o_.data, &o_.analysis);
    let c3 = |x: f64| fixed(x, 3);
    let _ = writeln!(
        o,
        "  {:<30}{:<10}{} interval",
        "",
        "value",
        a.level.percent()
    );
    let _ = writeln!(
        o,
        "  {:<30}{:<10}{} (Feldt)",
        "coefficient alpha",
        c3(a.alpha),
        range(a.alpha_ci_feldt.0, a.alpha_ci_feldt.1, c3)
    );
    let _ = writeln!(
        o,
        "  {:<30}{:<10}{} (Bonett)",
        "",
        "",
        range(a.alpha_ci_bonett.0, a.alpha_ci_bonett.1, c3)
    );
    let _ = writeln!(
        o,
        "  {:<30}{}",
        "standardized alpha",
        c3(a.alpha_standardized)
    );
    let _ = writeln!(o, "  {:<30}{}", "Guttman's λ2", c3(a.lambda2));
    match &a.glb {
        Ok(g) => {
            let small = if a.n_used < crate::items::glb::LARGE_SAMPLE {
                "  (biased upward below ~1,000 respondents)"
            } else {
                ""
            };
            let _ = writeln!(o, "  {:<30}{}{small}", "greatest lower bound", c3(g.value));
        }
        Err(why) => {
            let _ = writeln!(o, "  {:<30}not available: {why}", "greatest lower bound");
        }
    }
    if let Ok(f) = &a.factor {
        let ci = o_
            .bootstrap
            .as_ref()
            .map(|b| bootstrap_interval(b, d.missing))
            .unwrap_or_else(|| {
                crate::setting::msg!["(", Setting::Bootstrap, " gives an interval)"].render(names)
            });
        let _ = writeln!(
            o,
            "  {:<30}{:<10}{}",
            "omega (one factor, ML)",
            c3(f.congeneric.omega()),
            ci
        );
    }
}

/// Omega's bootstrap interval with its replicates and what did not fit.
fn bootstrap_interval(b: &OmegaBootstrap, missing: Missing) -> String {
    let mut notes = Vec::new();
    if b.failed > 0 {
        notes.push(format!("{} not fitted", b.failed));
    }
    if b.heywood > 0 {
        notes.push(format!("{} with a Heywood case", b.heywood));
    }
    if missing == Missing::Pairwise {
        notes.push("from the complete respondents only".into());
    }
    let extra = if notes.is_empty() {
        String::new()
    } else {
        format!("; {}", notes.join(", "))
    };
    format!(
        "{} (bootstrap, {} replicates{extra})",
        range(b.interval.0, b.interval.1, |x| fixed(x, 3)),
        b.replicates
    )
}

/// The bifactor and correlated-factors models: the coefficients, each subscale, both fits
/// and the reading.
fn subscales(o: &mut String, m: &MultidimensionalAnalysis, names: &[String]) {
    let g = &m.groups;
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "Subscales: {} groups of items ({})",
        g.count(),
        (0..g.count())
            .map(|h| format!("{} {}", g.names[h], g.members(h).len()))
            .collect::<Vec<_>>()
            .join(", ")
    );
    if let Some(c) = &m.omegas {
        let _ = writeln!(o, "  omega total               {}", fixed(c.omega_total, 3));
        let _ = writeln!(
            o,
            "  omega hierarchical        {}  (the general factor alone)",
            fixed(c.omega_hierarchical, 3)
        );
        let _ = writeln!(o, "  explained common variance {}", fixed(c.ecv, 3));
        let width = c
            .subscales
            .iter()
            .map(|s| s.name.chars().count())
            .max()
            .unwrap_or(0)
            .max(8);
        let _ = writeln!(
            o,
            "  {:<width$}  items  omega  own (omega-hierarchical-subscale)",
            "subscale"
        );
        for s in &c.subscales {
            let _ = writeln!(
                o,
                "  {:<width$}  {:>5}  {}  {}",
                s.name,
                s.items.len(),
                fixed(s.omega, 3),
                fixed(s.omega_hierarchical_subscale, 3)
            );
        }
    }
    let _ = writeln!(o, "  Models (maximum likelihood)");
    for (label, fit, ix) in [
        ("bifactor", &m.bifactor, &m.fit_bifactor),
        ("correlated factors", &m.correlated, &m.fit_correlated),
    ] {
        let words = match (fit, ix) {
            (Ok(f), Some(ix)) => {
                let conv = if f.stop.converged() {
                    format!("converged in {} iterations", f.iterations)
                } else {
                    format!(
                        "NOT converged ({:?}) after {} iterations",
                        f.stop, f.iterations
                    )
                };
                match (ix.p, ix.rmsea, ix.cfi) {
                    (Some(p), Some(r), Some(c)) => format!(
                        "χ²({}) = {}, p {}; RMSEA {}; CFI {}; {conv}",
                        ix.df,
                        fixed(ix.chi2, 2),
                        p_value(p),
                        fixed(r, 3),
                        fixed(c, 3)
                    ),
                    _ => format!("no degrees of freedom to test it; {conv}"),
                }
            }
            (Err(why), _) => format!("not fitted: {why}"),
            _ => "not fitted".to_string(),
        };
        model_line(o, label, &words);
    }
    if let Ok(f) = &m.correlated {
        let pairs: Vec<String> = (1..g.count())
            .flat_map(|a| (0..a).map(move |b| (b, a)))
            .map(|(a, b)| {
                format!(
                    "{}–{} {}",
                    g.names[a],
                    g.names[b],
                    fixed(f.correlations[(a, b)], 3)
                )
            })
            .collect();
        model_line(o, "correlations", &pairs.join(", "));
    }
    if let Ok(f) = &m.bifactor
        && !f.heywood.is_empty()
    {
        let items: Vec<String> = f.heywood.iter().map(|&i| names[i].clone()).collect();
        model_line(o, "Heywood cases", &items.join(", "));
    }
    o.push_str(&wrap(
        &format!("{}.", crate::format::capitalized(&m.reading)),
        86,
        "  ",
    ));
}

/// The one-factor model: its fit, the test of tau-equivalence and the estimation.
fn factor_model(o: &mut String, f: &FactorPart) {
    let _ = writeln!(o);
    let _ = writeln!(o, "  One-factor model");
    let fit = &f.fit;
    let fit_words = match (fit.rmsea, fit.cfi, fit.p) {
        (Some(r), Some(c), Some(p)) => format!(
            "χ²({}) = {}, p {}; RMSEA {}; CFI {}",
            fit.df,
            fixed(fit.chi2, 2),
            p_value(p),
            fixed(r, 3),
            fixed(c, 3)
        ),
        _ => "exact (3 items leave no degrees of freedom to test it)".to_string(),
    };
    model_line(o, "fit", &fit_words);
    let t = &f.tau_test;
    model_line(
        o,
        "tau-equivalence",
        &format!(
            "χ²({}) = {}, p {}  (equal loadings against free loadings)",
            t.df,
            fixed(t.chi2, 2),
            p_value(t.p)
        ),
    );
    let conv = |s: MinimizeStop, it: usize| {
        if s.converged() {
            format!("converged in {it} iterations")
        } else {
            format!("NOT converged ({s:?}) after {it} iterations")
        }
    };
    model_line(
        o,
        "estimation",
        &format!(
            "maximum likelihood; free loadings {}; equal loadings {}",
            conv(f.congeneric.stop, f.congeneric.iterations),
            conv(f.tau_equivalent.stop, f.tau_equivalent.iterations)
        ),
    );
}

/// A line of the factor model: its label, then the value wrapped under itself.
fn model_line(o: &mut String, label: &str, value: &str) {
    const INDENT: usize = 23;
    let wrapped = wrap(value, 86 - INDENT, &" ".repeat(INDENT));
    let _ = write!(o, "    {label:<19}{}", wrapped.trim_start());
}

/// One line per item: mean, SD, item-rest correlation, alpha without it, loadings.
fn item_rows(o: &mut String, d: &ItemData, a: &ItemAnalysis) {
    let c3 = |x: f64| fixed(x, 3);
    let _ = writeln!(
        o,
        "  {:<20} {:>7} {:>7} {:>10} {:>10} {:>9} {:>9}",
        "item", "mean", "SD", "item-rest", "α without", "loading", "std. ld."
    );
    let cov = &d.moments.cov;
    for (i, s) in a.item_statistics.iter().enumerate() {
        let name: String = d.names[i].chars().take(20).collect();
        let (ld, sld) = match &a.factor {
            Ok(f) => {
                let flag = if f.congeneric.heywood.contains(&i) {
                    " (Heywood)"
                } else {
                    ""
                };
                (
                    c3(f.congeneric.loadings[i]),
                    format!(
                        "{}{flag}",
                        c3(f.congeneric.loadings[i] / cov[(i, i)].sqrt())
                    ),
                )
            }
            Err(_) => ("–".into(), "–".into()),
        };
        let _ = writeln!(
            o,
            "  {:<20} {:>7} {:>7} {:>10} {:>10} {:>9} {:>9}",
            name,
            fixed(s.mean, 2),
            fixed(s.sd, 2),
            c3(s.corrected_item_total),
            s.alpha_if_deleted.map(c3).unwrap_or_else(|| "–".into()),
            ld,
            sld
        );
    }
}

/// The scale score's mean and SD in the sum and the mean metric.
fn scale_score(o: &mut String, a: &ItemAnalysis) {
    let _ = writeln!(
        o,
        "  scale score   sum: mean {}, SD {};  mean of the items: mean {}, SD {}",
        fixed(a.score.sum_mean, 2),
        fixed(a.score.sum_sd, 2),
        fixed(a.score.mean_mean, 3),
        fixed(a.score.mean_sd, 3)
    );
    let _ = writeln!(
        o,
        "                (the SD to give relyard check as its score SD, with sum or mean as its metric)"
    );
}

/// Which coefficient to report, in words.
fn recommendation_words(r: Recommendation) -> &'static str {
    match r {
        Recommendation::Either => "alpha or omega",
        Recommendation::Omega => "omega",
        Recommendation::CheckDimensionality => "neither yet: check the dimensionality",
        Recommendation::AlphaOnly => "alpha (a lower bound)",
        Recommendation::AlphaWithCaution => "alpha, as a lower bound",
        Recommendation::ReverseKeyFirst => {
            "none yet: reverse-key the items that run against the others"
        }
        Recommendation::NoCommonVariance => "none: the items do not form a scale here",
    }
}

/// Render the compare summary.
pub fn compare_summary(c: &Comparison, names: &dyn SettingNames) -> String {
    let (samples, feldt, hw) = (&c.samples, c.feldt.as_ref(), &c.hakstian_whalen);
    let mut o = String::new();
    let _ = writeln!(
        o,
        "Are these alphas equal? {} independent samples",
        samples.len()
    );
    let _ = writeln!(o, "{}", "─".repeat(72));
    if let Some(source) = &c.source {
        let _ = writeln!(
            o,
            "  {}",
            super::sheet_line(source, c.from_sheet, c.skipped.len())
        );
        let _ = writeln!(o);
    }
    let _ = writeln!(
        o,
        "  {:<24} {:>8} {:>8} {:>6}",
        "sample", "alpha", "n", "items"
    );
    for s in samples {
        let label: String = s.label.chars().take(24).collect();
        let _ = writeln!(
            o,
            "  {:<24} {:>8} {:>8} {:>6}",
            label,
            fixed(s.alpha, 3),
            thousands(s.n),
            s.items
        );
    }
    let _ = writeln!(o);
    if let Some(f) = feldt {
        let _ = writeln!(
            o,
            "  Feldt (1969)              W = {} against F({}, {}), two-sided p {}",
            fixed(f.w, 3),
            f.df1,
            f.df2,
            p_value(f.p)
        );
    }
    let _ = writeln!(
        o,
        "  Hakstian–Whalen (1976)    χ²({}) = {}, p {}",
        hw.df,
        fixed(hw.chi2, 3),
        p_value(hw.p)
    );
    let _ = writeln!(o);
    let lo = samples
        .iter()
        .map(|s| s.alpha)
        .fold(f64::INFINITY, f64::min);
    let hi = samples
        .iter()
        .map(|s| s.alpha)
        .fold(f64::NEG_INFINITY, f64::max);
    let p = feldt.map(|f| f.p).unwrap_or(hw.p);
    let verdict = if p < 0.05 {
        "the alphas differ by more than sampling error explains"
    } else {
        "the data do not show a difference beyond sampling error (which is not proof that the \
         alphas are equal)"
    };
    o.push_str(&wrap(
        &format!(
            "The alphas span {} ({} to {}); at the 5% level {verdict}.",
            fixed(hi - lo, 3),
            fixed(lo, 3),
            fixed(hi, 3)
        ),
        86,
        "  ",
    ));
    if samples.windows(2).any(|w| w[0].items != w[1].items) {
        o.push_str(&wrap(
            "Note: the samples used forms of different lengths; these tests compare one test \
             given to different samples, so a difference may reflect the forms rather than the \
             samples.",
            86,
            "  ",
        ));
    }
    super::skipped_rows(&mut o, &c.skipped, names);
    read_with_care(&mut o, &c.warnings, names);
    o
}

/// Render a sample-size result.
pub fn plan_summary(p: &PlanOutcome, level: Level) -> String {
    let doc = crate::output::json::PlanDocument::new(p, level);
    let goal = if doc.goal == "width" {
        "an interval of a given width"
    } else {
        "a test with a given power"
    };
    let inputs: Vec<(&str, String)> = doc
        .inputs
        .iter()
        .map(|(k, v)| (*k, format!("{v}")))
        .collect();
    let size = &p.size;
    let mut o = String::new();
    let _ = writeln!(o, "Sample size for coefficient alpha: {goal}");
    let _ = writeln!(o, "{}", "─".repeat(72));
    for (k, v) in &inputs {
        let _ = writeln!(o, "  {:<22}{v}", k);
    }
    let _ = writeln!(o);
    let n = match size.n {
        Some(n) => thousands(n),
        None => "more than 9 × 10^15 (out of reach)".to_string(),
    };
    let _ = writeln!(
        o,
        "  required n            {n} (formula value {})",
        crate::format::significant(size.exact, 6)
    );
    let _ = writeln!(o);
    o.push_str(&wrap(
        "Bonett (2002): from the large-sample variance of ln(1 − alpha), 2k/((k − 1)(n − 2)). \
         Plan with a conservative (low) planning value; the formula assumes roughly parallel \
         items and approximately normal responses.",
        86,
        "  ",
    ));
    o
}
