//! The readable summaries of a correction (`relyard correct`).

use super::{heading, read_with_care};
use crate::analysis::ScoreItems;
use crate::correct::choice::{ChoiceRow, CoefficientChoice, SlopeChoiceRow};
use crate::correct::correlation::{CorrelationCorrection, CorrelationInput};
use crate::correct::regression::{RegressionCorrection, RegressionInput, Spread};
use crate::format::{fixed, range, thousands, wrap};
use crate::level::Level;
use crate::output::json::SEM_NOTE;
use crate::setting::SettingNames;
use crate::warning::Warning;
use std::fmt::Write;

const LOWER_BOUND_NOTE: &str = "If a reliability is coefficient alpha and the items are not \
tau-equivalent, alpha is a lower bound and the correction is too large; use omega then \
(relyard items says which applies).";

/// Render the correlation correction.
pub fn correlation_summary(
    input: &CorrelationInput,
    c: &CorrelationCorrection,
    (choices, scores): (&[ChoiceRow], &[Option<Box<ScoreItems>>; 2]),
    level: Level,
    warnings: &[Warning],
    names: &dyn SettingNames,
) -> String {
    let mut o = String::new();
    heading(&mut o, "The correlation corrected for unreliability");
    corrected_correlation(&mut o, c, level);
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "  {:<26}{}   (n = {})",
        "observed r",
        fixed(c.observed, 3),
        thousands(input.n)
    );
    for ((label, rel), s) in [
        ("reliability of x", &input.rel_x),
        ("reliability of y", &input.rel_y),
    ]
    .into_iter()
    .zip(scores)
    {
        let _ = writeln!(o, "  {label:<26}{}", rel.describe());
        if let Some(s) = s {
            let _ = writeln!(o, "  {:<26}{}", "", source_words(s));
        }
    }
    let _ = writeln!(o);
    if !choices.is_empty() {
        choice_table(&mut o, choices, c.corrected_value, level);
        let _ = writeln!(o);
    }
    correlation_grid(&mut o, c);
    if choices.is_empty() {
        let _ = writeln!(o);
        o.push_str(&wrap(LOWER_BOUND_NOTE, 86, "  "));
    }
    read_with_care(&mut o, warnings, names);
    o
}

/// Where a score's reliability came from, when it has item data.
fn source_words(s: &ScoreItems) -> String {
    use crate::items::Recommendation;
    let file = &s.outcome.data.file;
    let Some(used) = s.used else {
        return format!("(the value given; item data {file} in the table below)");
    };
    let why = match (used, s.outcome.analysis.recommendation) {
        (CoefficientChoice::OmegaTotal, _) => "omega total of the bifactor model of its subscales",
        (_, Recommendation::CheckDimensionality) => {
            "alpha: one factor does not describe these items (relyard items says more; give \
             their subscales to use omega total)"
        }
        (_, Recommendation::ReverseKeyFirst | Recommendation::NoCommonVariance) => {
            "alpha, though the items do not form a scale as they stand (see relyard items)"
        }
        (CoefficientChoice::Omega, _) => "omega, as the items' reading recommends",
        _ => "alpha, as the items' reading recommends",
    };
    format!("from {file}: {why}")
}

/// What the choice of coefficient does: the correction under each coefficient the item data
/// give, beside the main one.
fn choice_table(o: &mut String, rows: &[ChoiceRow], main: f64, level: Level) {
    let c3 = |x: f64| fixed(x, 3);
    let _ = writeln!(
        o,
        "  The choice of coefficient (each row's reliabilities taken as known)"
    );
    let _ = writeln!(
        o,
        "    {:<24}{:>6}  {:>6}  {:>11}  {:<18} {:>8}",
        "coefficient",
        "r_xx",
        "r_yy",
        "corrected r",
        format!("{} interval", level.percent()),
        "vs above"
    );
    for r in rows {
        let ci =
            r.ci.map(|(a, b)| range(a, b, c3))
                .unwrap_or_else(|| "beyond ±1".to_string());
        let value = if r.corrected.abs() <= 1.0 {
            c3(r.corrected)
        } else {
            "beyond ±1".to_string()
        };
        let shift = crate::format::change(r.corrected - main, 3);
        let bound = if r.lower_bound { "  lower bound" } else { "" };
        let _ = writeln!(
            o,
            "    {:<24}{:>6}  {:>6}  {:>11}  {:<18} {:>8}{bound}",
            r.coefficient.words(),
            c3(r.reliability_x),
            c3(r.reliability_y),
            value,
            ci,
            shift
        );
    }
    let note = choice_note(
        rows.iter()
            .map(|r| (r.coefficient, r.reliability_x, r.reliability_y)),
    );
    o.push_str(&wrap(&note, 86, "  "));
}

/// The regression's choice table: the one predictor's corrected slope under each
/// coefficient, beside the main correction's.
fn slope_choice_table(
    o: &mut String,
    input: &RegressionInput,
    c: &RegressionCorrection,
    (rows, scores): (&[SlopeChoiceRow], &[Option<Box<ScoreItems>>; 2]),
    level: Level,
) {
    let c3 = |x: f64| fixed(x, 3);
    let main = c.estimate.corrected.as_ref().ok().map(|k| k.slopes[0]);
    let _ = writeln!(
        o,
        "  The choice of coefficient: the slope of {} under each (reliabilities taken as known)",
        input.predictors[0]
    );
    for (label, s) in ["x (the predictor)", "y (the outcome)"].iter().zip(scores) {
        if let Some(s) = s {
            let _ = writeln!(o, "    {label}: {}", source_words(s));
        }
    }
    let _ = writeln!(
        o,
        "    {:<24}{:>6}  {:>6}  {:>9}  {:<20} {:>8}",
        "coefficient",
        "r_xx",
        "r_yy",
        "slope",
        format!("{} interval", level.percent()),
        "vs above"
    );
    for r in rows {
        let (value, shift) = match (&r.slope, main) {
            (Ok(b), Some(m)) => (c3(*b), crate::format::change(b - m, 3)),
            (Ok(b), None) => (c3(*b), String::new()),
            (Err(_), _) => ("impossible".to_string(), String::new()),
        };
        let ci =
            r.ci.map(|(a, b)| range(a, b, c3))
                .unwrap_or_else(|| "–".to_string());
        let bound = if r.lower_bound { "  lower bound" } else { "" };
        let _ = writeln!(
            o,
            "    {:<24}{:>6}  {:>6}  {:>9}  {:<20} {:>8}{bound}",
            r.coefficient.words(),
            c3(r.reliability_x),
            c3(r.reliability_y),
            value,
            ci,
            shift
        );
    }
    let note = choice_note(
        rows.iter()
            .map(|r| (r.coefficient, r.reliability_x, r.reliability_y)),
    );
    o.push_str(&wrap(&note, 86, "  "));
}

/// The note under a choice table: what it shows, and the glb's sentence when it applies.
pub fn choice_note(rows: impl IntoIterator<Item = (CoefficientChoice, f64, f64)>) -> String {
    let mut note = CHOICE_NOTE.to_string();
    if let Some(extra) = crate::correct::choice::glb_above_omega(rows) {
        note.push(' ');
        note.push_str(extra);
    }
    note
}

/// What the choice table shows.
pub const CHOICE_NOTE: &str = "A lower bound (alpha when the items' loadings differ, the greatest \
lower bound) understates reliability, so the correction it gives is too large; omega \
hierarchical is the total score's reliability for the general trait alone, so it gives a \
larger correction by design. The change column (“vs above” in the text) is each row's change \
from the main correction above.";

/// The corrected correlation and its classical and Monte Carlo intervals.
fn corrected_correlation(o: &mut String, c: &CorrelationCorrection, level: Level) {
    let lv = level.percent();
    let c3 = |x: f64| fixed(x, 3);
    let _ = if c.admissible {
        writeln!(
            o,
            "  {:<26}{}   = r / √(r_xx · r_yy)",
            "corrected r",
            c3(c.corrected_value)
        )
    } else {
        writeln!(
            o,
            "  {:<26}IMPOSSIBLE: r / √(r_xx · r_yy) = {} lies beyond ±1 (see the warning)",
            "corrected r",
            c3(c.corrected_value)
        )
    };
    let bound = |x: f64, at: bool| {
        if at {
            format!("{} (bound)", c3(x))
        } else {
            c3(x)
        }
    };
    let _ = match c.ci {
        Some((a, b)) => writeln!(
            o,
            "  {:<26}{} to {}   Fisher-z interval of r, corrected",
            format!("{lv} CI (classical)"),
            bound(a, c.ci_capped && a <= -1.0),
            bound(b, c.ci_capped && b >= 1.0)
        ),
        None => writeln!(
            o,
            "  {:<26}none: the whole corrected interval lies beyond ±1",
            format!("{lv} CI (classical)")
        ),
    };
    if let Some((a, b)) = c.mc_ci {
        let _ = writeln!(
            o,
            "  {:<26}{} to {}   {} draws of r and the reliabilities, seed {}; {}% beyond ±1",
            format!("{lv} CI (Monte Carlo)"),
            bound(a, c.mc_bound.0),
            bound(b, c.mc_bound.1),
            thousands(c.draws as u64),
            c.seed,
            fixed(100.0 * c.inadmissible_share, 1)
        );
    }
    if c.mc_ci.is_none() && c.draws > 0 {
        let _ = writeln!(
            o,
            "  {:<26}none: {}% of {} draws lie beyond ±1 (seed {})",
            format!("{lv} CI (Monte Carlo)"),
            fixed(100.0 * c.inadmissible_share, 1),
            thousands(c.draws as u64),
            c.seed
        );
    }
    if (c.mc_ci.is_some() && (c.mc_bound.0 || c.mc_bound.1)) || (c.ci.is_some() && c.ci_capped) {
        let _ = writeln!(
            o,
            "  (bound): the end is ±1 itself — the data do not limit the corrected correlation there"
        );
    }
}

/// The corrected correlation over a grid of both reliabilities.
fn correlation_grid(o: &mut String, c: &CorrelationCorrection) {
    let _ = writeln!(
        o,
        "  Corrected r over other reliabilities (rows: r_xx; columns: r_yy; – beyond ±1)"
    );
    let mut ys: Vec<f64> = c.sensitivity.iter().map(|s| s.rel_y).collect();
    ys.dedup();
    ys.sort_by(|a, b| a.total_cmp(b));
    ys.dedup_by(|a, b| (*a - *b).abs() < 1e-12);
    let _ = write!(o, "  {:>8}", "");
    for y in &ys {
        let _ = write!(o, " {:>7}", fixed(*y, 3));
    }
    let _ = writeln!(o);
    let mut xs: Vec<f64> = c.sensitivity.iter().map(|s| s.rel_x).collect();
    xs.dedup_by(|a, b| (*a - *b).abs() < 1e-12);
    for x in xs {
        let _ = write!(o, "  {:>8}", fixed(x, 3));
        for s in c.sensitivity.iter().filter(|s| (s.rel_x - x).abs() < 1e-12) {
            let cell = s
                .corrected
                .map(|v| fixed(v, 3))
                .unwrap_or_else(|| "–".into());
            let _ = write!(o, " {cell:>7}");
        }
        let _ = writeln!(o);
    }
}

/// Render the regression correction.
pub fn regression_summary(
    input: &RegressionInput,
    c: &RegressionCorrection,
    (choices, scores): (&[SlopeChoiceRow], &[Option<Box<ScoreItems>>; 2]),
    level: Level,
    warnings: &[Warning],
    names: &dyn SettingNames,
) -> String {
    let mut o = String::new();
    heading(
        &mut o,
        &format!(
            "The regression of {} corrected for unreliable predictors",
            input.outcome
        ),
    );
    regression_inputs(&mut o, input, c);
    let _ = writeln!(o);
    slope_table(&mut o, input, c, level);
    let _ = writeln!(o);
    standardized_table(&mut o, input, c, level);
    let _ = writeln!(o);
    explained_variance(&mut o, c, level);
    let _ = writeln!(o);
    slope_sensitivity(&mut o, input, c);
    let _ = writeln!(o);
    if !choices.is_empty() {
        slope_choice_table(&mut o, input, c, (choices, scores), level);
        let _ = writeln!(o);
    }
    o.push_str(&wrap(SEM_NOTE, 86, "  "));
    if choices.is_empty() {
        o.push_str(&wrap(LOWER_BOUND_NOTE, 86, "  "));
    }
    read_with_care(&mut o, warnings, names);
    o
}

/// The data, the draws and each variable's reliability.
fn regression_inputs(o: &mut String, input: &RegressionInput, c: &RegressionCorrection) {
    if let Some(note) = &input.data_note {
        let _ = writeln!(o, "  {note}");
    }
    let _ = writeln!(
        o,
        "  n = {}; intervals from {} {} (seed {}){}",
        thousands(input.n),
        thousands(c.draws as u64),
        c.method.words(),
        c.seed,
        if input.standardized_only {
            "; correlations only, so slopes are standardized"
        } else {
            ""
        }
    );
    for (name, r) in input.predictors.iter().zip(&input.rel) {
        let _ = writeln!(o, "  reliability of {:<16}{}", name, r.describe());
    }
    if let Some(ry) = &input.rel_y {
        let _ = writeln!(o, "  reliability of {:<16}{}", input.outcome, ry.describe());
    }
}

/// An interval drawn for a slope, or why there is none.
fn spread_interval(s: Option<Spread>) -> String {
    s.map(|s| range(s.ci.0, s.ci.1, |x| fixed(x, 3)))
        .unwrap_or_else(|| "not determined".into())
}

/// The ordinary and corrected slopes with their intervals.
fn slope_table(o: &mut String, input: &RegressionInput, c: &RegressionCorrection, level: Level) {
    let (lv, c3) = (level.percent(), |x: f64| fixed(x, 3));
    let (e, corr) = (&c.estimate, c.estimate.corrected.as_ref().ok());
    let _ = writeln!(o, "  Slopes");
    let _ = writeln!(
        o,
        "  {:<18} {:>9} {:>20} {:>10} {:>20} {:>8}",
        "predictor",
        "OLS",
        format!("{lv} CI"),
        "corrected",
        format!("{lv} CI"),
        "SE"
    );
    for (j, name) in input.predictors.iter().enumerate() {
        let short: String = name.chars().take(18).collect();
        let (cv, cci, se) = match corr {
            Some(k) => (
                c3(k.slopes[j]),
                spread_interval(c.corrected_spread[j]),
                c.corrected_spread[j]
                    .map(|s| c3(s.se))
                    .unwrap_or_else(|| "–".into()),
            ),
            None => ("impossible".into(), String::new(), String::new()),
        };
        let _ = writeln!(
            o,
            "  {:<18} {:>9} {:>20} {:>10} {:>20} {:>8}",
            short,
            c3(e.ols[j]),
            spread_interval(c.ols_spread[j]),
            cv,
            cci,
            se
        );
    }
}

/// The standardized slopes, ordinary and corrected (on the true-score SDs).
fn standardized_table(
    o: &mut String,
    input: &RegressionInput,
    c: &RegressionCorrection,
    level: Level,
) {
    let (e, corr) = (&c.estimate, c.estimate.corrected.as_ref().ok());
    let _ = writeln!(
        o,
        "  Standardized slopes (corrected: on the true-score SDs)"
    );
    let _ = writeln!(
        o,
        "  {:<18} {:>9} {:>10} {:>20}",
        "predictor",
        "OLS",
        "corrected",
        format!("{} CI", level.percent())
    );
    for (j, name) in input.predictors.iter().enumerate() {
        let short: String = name.chars().take(18).collect();
        let (cs, ci) = match corr {
            Some(k) => (
                fixed(k.standardized[j], 3),
                spread_interval(c.corrected_standardized_spread[j]),
            ),
            None => ("impossible".into(), String::new()),
        };
        let _ = writeln!(
            o,
            "  {:<18} {:>9} {:>10} {:>20}",
            short,
            fixed(e.ols_standardized[j], 3),
            cs,
            ci
        );
    }
}

/// R² observed and corrected, and how many draws gave an impossible correction.
fn explained_variance(o: &mut String, c: &RegressionCorrection, level: Level) {
    let c3 = |x: f64| fixed(x, 3);
    let e = &c.estimate;
    let r2c = e
        .corrected
        .as_ref()
        .map(|k| {
            let ci = c
                .r2_spread
                .map(|s| format!(" ({} CI {})", level.percent(), range(s.ci.0, s.ci.1, c3)))
                .unwrap_or_default();
            format!("{}{ci}", c3(k.r2))
        })
        .unwrap_or_else(|_| "impossible".into());
    let _ = writeln!(o, "  R²   observed {}   corrected {r2c}", c3(e.r2_observed));
    if let Err(why) = &e.corrected {
        let _ = writeln!(o, "  The correction is impossible here: {why}.");
    }
    if c.inadmissible_share > 0.0 {
        let _ = writeln!(
            o,
            "  {}% of the draws gave an impossible correction{}.",
            fixed(100.0 * c.inadmissible_share, 1),
            if c.intervals_determined {
                "; they are left out of the intervals"
            } else {
                " — more than the intervals' tail share, so the corrected intervals are not determined"
            }
        );
    }
}

/// Each corrected slope as its predictor's reliability varies.
fn slope_sensitivity(o: &mut String, input: &RegressionInput, c: &RegressionCorrection) {
    let _ = writeln!(
        o,
        "  Corrected slopes as one predictor's reliability varies (others at their values)"
    );
    for (j, name) in input.predictors.iter().enumerate() {
        let row: Vec<String> = c.sensitivity[j]
            .iter()
            .map(|(r, slopes)| {
                let v = slopes
                    .as_ref()
                    .map(|s| fixed(s[j], 3))
                    .unwrap_or_else(|| "–".into());
                format!("{}→{v}", fixed(*r, 2))
            })
            .collect();
        o.push_str(&wrap(&format!("{name}: {}", row.join("  ")), 86, "    "));
    }
}
