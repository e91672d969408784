//! The readable summary of a placement (`relyard check`): the verdict first.

use super::{heading, line, paper, para, read_with_care, sheet_line};
use crate::benchmark::Prepared;
use crate::format::{fixed, range, significant, thousands};
use crate::output::prose::{Paragraph, ordinal, spread_conclusion};
use crate::placement::{Placement, SpreadShortfall, Verdict};
use crate::setting::SettingNames;
use crate::transform::BackInterval;
use std::fmt::Write;

/// Render the check summary.
pub fn check_summary(
    p: &Prepared,
    pl: &Placement,
    paragraph: &Paragraph,
    names: &dyn SettingNames,
) -> String {
    let mut o = String::new();
    heading(
        &mut o,
        &format!(
            "Where the new study falls ({} = {}, n = {}{})",
            pl.study.coef_type.name(),
            fixed(pl.study.coef, 3),
            thousands(pl.study.n),
            pl.study
                .items
                .map(|k| format!(", {k} items"))
                .unwrap_or_default()
        ),
    );
    verdict_lines(&mut o, pl);
    if let Some(sp) = &pl.spread {
        let _ = writeln!(o);
        heading(&mut o, "How much of it score spread accounts for");
        spread_lines(&mut o, pl, sp);
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
        &format!("{}: {}", pl.transform.label(), pl.transform.get().formula()),
    );
    match &pl.dependent {
        Some(d) => {
            let s = &d.summary;
            line(
                &mut o,
                "benchmark rows",
                &format!(
                    "{} rows from {} samples in {} clusters; τ² = {} between and {} within \
                     clusters (multilevel, sampling correlation {} assumed)",
                    s.fit.k,
                    s.fit.samples,
                    s.fit.clusters,
                    significant(s.fit.tau2_cluster, 3),
                    significant(s.fit.tau2_within, 3),
                    fixed(s.dependence.sampling_correlation, 2)
                ),
            );
            let whose = match &pl.in_cluster {
                Some(c) => format!(
                    "a new sample of the sheet's cluster \"{c}\" (its predicted value; \
                     model-based prediction error)"
                ),
                None => "a new sample from a new cluster".to_string(),
            };
            line(&mut o, "ranges for", &whose);
        }
        None => line(
            &mut o,
            "benchmark studies",
            &format!(
                "{} in the model, τ² = {}",
                pl.fit.k,
                significant(pl.fit.tau2.tau2, 3)
            ),
        ),
    }
    paper(&mut o, "For your paper (adapt as needed)", paragraph);
    read_with_care(&mut o, &pl.warnings, names);
    o
}

/// The verdict, the percentile and the ranges a study like it should observe.
fn verdict_lines(o: &mut String, pl: &Placement) {
    let level = pl.fit.options.level.percent();
    let r = |i: BackInterval| range(i.lower, i.upper, |x| fixed(x, 3));
    let verdict = match pl.verdict {
        Verdict::Below => "BELOW the range a study like it should observe",
        Verdict::Within => "within the range a study like it should observe",
        Verdict::Above => "ABOVE the range a study like it should observe",
    };
    line(o, "verdict", verdict);
    line(
        o,
        "percentile",
        &format!(
            "{} (of the coefficients a study of this size should observe)",
            ordinal(pl.percentile)
        ),
    );
    line(
        o,
        &format!("{level} observed range"),
        &format!(
            "{}   for a sample of n = {}",
            r(pl.pi_observed),
            thousands(pl.study.n)
        ),
    );
    line(
        o,
        "expected coefficient",
        &format!("{}   {level} CI {}", fixed(pl.expected, 3), r(pl.ci)),
    );
    line(
        o,
        &format!("{level} true range"),
        &format!(
            "{}   for the true coefficient (t with {} df)",
            r(pl.pi),
            pl.pi_df
        ),
    );
    if !pl.at.is_empty() {
        let parts: Vec<String> = pl.at.iter().map(|(k, v)| format!("{k} = {v}")).collect();
        line(o, "for a study with", &parts.join(", "));
    }
}

/// How much of the shortfall the study's score spread accounts for.
fn spread_lines(o: &mut String, pl: &Placement, sp: &SpreadShortfall) {
    let level = pl.fit.options.level.percent();
    let c3 = |x: f64| fixed(x, 3);
    line(
        o,
        "score SD",
        &format!(
            "{} against a typical {} in the benchmark ({} metric)",
            significant(sp.sd, 3),
            significant(sp.typical_sd, 3),
            sp.metric
        ),
    );
    let items = if sp.model.log_items_column {
        pl.study
            .items
            .map(|k| format!(" (for {k} items)"))
            .unwrap_or_default()
    } else {
        String::new()
    };
    line(
        o,
        "expected at its SD",
        &format!(
            "{}; at the typical SD {}{items}",
            c3(sp.expected_at_own_sd),
            c3(sp.expected_at_typical_sd)
        ),
    );
    let (lo, hi) = sp.explained_shortfall_ci;
    line(
        o,
        "difference from spread",
        &format!(
            "{} ({level} CI {})",
            c3(sp.explained_shortfall),
            range(lo, hi, c3)
        ),
    );
    line(
        o,
        "shortfall observed",
        &format!(
            "{} (expected at the typical SD minus observed)",
            c3(sp.shortfall_from_typical_sd)
        ),
    );
    para(o, &spread_conclusion(sp));
}
