//! The readable summaries of a correction (`relyard correct`).

use super::{heading, read_with_care};
use crate::correct::correlation::{CorrelationCorrection, CorrelationInput};
use crate::correct::regression::{RegressionCorrection, RegressionInput};
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
    level: Level,
    warnings: &[Warning],
    names: &dyn SettingNames,
) -> String {
    let (n, rel_x, rel_y) = (input.n, &input.rel_x, &input.rel_y);
    let lv = level.percent();
    let c3 = |x: f64| fixed(x, 3);
    let mut o = String::new();
    heading(&mut o, "The correlation corrected for unreliability");
    if c.admissible {
        let _ = writeln!(
            o,
            "  {:<26}{}   = r / √(r_xx · r_yy)",
            "corrected r",
            c3(c.corrected_value)
        );
    } else {
        let _ = writeln!(
            o,
            "  {:<26}IMPOSSIBLE: r / √(r_xx · r_yy) = {} lies beyond ±1 (see the warning)",
            "corrected r",
            c3(c.corrected_value)
        );
    }
    let bound = |x: f64, at: bool| {
        if at {
            format!("{} (bound)", c3(x))
        } else {
            c3(x)
        }
    };
    match c.ci {
        Some((a, b)) => {
            let _ = writeln!(
                o,
                "  {:<26}{} to {}   Fisher-z interval of r, corrected",
                format!("{lv} CI (classical)"),
                bound(a, c.ci_capped && a <= -1.0),
                bound(b, c.ci_capped && b >= 1.0)
            );
        }
        None => {
            let _ = writeln!(
                o,
                "  {:<26}none: the whole corrected interval lies beyond ±1",
                format!("{lv} CI (classical)")
            );
        }
    }
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
    if c.mc_bound.0 || c.mc_bound.1 || (c.ci_capped) {
        let _ = writeln!(
            o,
            "  (bound): the end is ±1 itself — the data do not limit the corrected correlation there"
        );
    }
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "  {:<26}{}   (n = {})",
        "observed r",
        c3(c.observed),
        thousands(n)
    );
    let _ = writeln!(o, "  {:<26}{}", "reliability of x", rel_x.describe());
    let _ = writeln!(o, "  {:<26}{}", "reliability of y", rel_y.describe());
    let _ = writeln!(o);
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
            let _ = write!(
                o,
                " {:>7}",
                s.corrected.map(c3).unwrap_or_else(|| "–".into())
            );
        }
        let _ = writeln!(o);
    }
    let _ = writeln!(o);
    o.push_str(&wrap(LOWER_BOUND_NOTE, 86, "  "));
    read_with_care(&mut o, warnings, names);
    o
}

/// Render the regression correction.
pub fn regression_summary(
    input: &RegressionInput,
    c: &RegressionCorrection,
    level: Level,
    warnings: &[Warning],
    names: &dyn SettingNames,
) -> String {
    let lv = level.percent();
    let c3 = |x: f64| fixed(x, 3);
    let e = &c.estimate;
    let mut o = String::new();
    heading(
        &mut o,
        &format!(
            "The regression of {} corrected for unreliable predictors",
            input.outcome
        ),
    );
    if let Some(note) = &input.data_note {
        let _ = writeln!(o, "  {note}");
    }
    let _ = writeln!(
        o,
        "  n = {}; intervals from {} {} (seed {}){}",
        thousands(input.n),
        thousands(c.draws as u64),
        if c.method == "bootstrap" {
            "bootstrap samples of the respondents"
        } else {
            "Monte Carlo draws of the covariance matrix"
        },
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
    let _ = writeln!(o);
    let corr = e.corrected.as_ref().ok();
    let interval = |s: Option<crate::correct::regression::Spread>| {
        s.map(|s| range(s.ci.0, s.ci.1, c3))
            .unwrap_or_else(|| "not determined".into())
    };
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
                interval(c.corrected_spread[j]),
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
            interval(c.ols_spread[j]),
            cv,
            cci,
            se
        );
    }
    let _ = writeln!(o);
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
        format!("{lv} CI")
    );
    for (j, name) in input.predictors.iter().enumerate() {
        let short: String = name.chars().take(18).collect();
        let (cs, ci) = match corr {
            Some(k) => (
                c3(k.standardized[j]),
                interval(c.corrected_standardized_spread[j]),
            ),
            None => ("impossible".into(), String::new()),
        };
        let _ = writeln!(
            o,
            "  {:<18} {:>9} {:>10} {:>20}",
            short,
            c3(e.ols_standardized[j]),
            cs,
            ci
        );
    }
    let _ = writeln!(o);
    let r2c = corr
        .map(|k| {
            let ci = c
                .r2_spread
                .map(|s| format!(" ({lv} CI {})", range(s.ci.0, s.ci.1, c3)))
                .unwrap_or_default();
            format!("{}{ci}", c3(k.r2))
        })
        .unwrap_or_else(|| "impossible".into());
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
    let _ = writeln!(o);
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
                    .map(|s| c3(s[j]))
                    .unwrap_or_else(|| "–".into());
                format!("{}→{v}", fixed(*r, 2))
            })
            .collect();
        o.push_str(&wrap(&format!("{name}: {}", row.join("  ")), 86, "    "));
    }
    let _ = writeln!(o);
    o.push_str(&wrap(SEM_NOTE, 86, "  "));
    o.push_str(&wrap(LOWER_BOUND_NOTE, 86, "  "));
    read_with_care(&mut o, warnings, names);
    o
}
