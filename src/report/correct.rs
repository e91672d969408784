//! Output of `relyard correct`.

use super::format::{fixed, percent_level, range, thousands};
use super::json::SCHEMA_VERSION;
use crate::correct::ReliabilitySource;
use crate::correct::correlation::CorrelationCorrection;
use crate::correct::regression::{RegressionCorrection, RegressionInput};
use crate::warning::{Warning, WarningRecord};
use serde::Serialize;
use std::fmt::Write;

const LOWER_BOUND_NOTE: &str = "If a reliability is coefficient alpha and the items are not \
tau-equivalent, alpha is a lower bound and the correction is too large; use omega then \
(relyard items says which applies).";

/// A reliability in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct ReliabilityRecord {
    /// The variable.
    pub variable: String,
    /// The value used for the point correction.
    pub value: f64,
    /// "fixed", "estimate" or "benchmark".
    pub kind: &'static str,
    /// A description.
    pub description: String,
    /// The interval its draws come from (null for a fixed value).
    pub interval: Option<[f64; 2]>,
}

fn reliability_record(variable: &str, r: &ReliabilitySource, level: f64) -> ReliabilityRecord {
    ReliabilityRecord {
        variable: variable.to_string(),
        value: r.point(),
        kind: match r {
            ReliabilitySource::Point { .. } => "fixed",
            ReliabilitySource::Estimate { .. } => "estimate",
            ReliabilitySource::Benchmark { .. } => "benchmark",
        },
        description: r.describe(),
        interval: r.interval(level).map(|(a, b)| [a, b]),
    }
}

/// `relyard correct --json` for a correlation.
#[derive(Debug, Clone, Serialize)]
pub struct CorrelationDocument {
    /// Layout version.
    pub schema_version: &'static str,
    /// "correct".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// "correlation".
    pub case: &'static str,
    /// Level.
    pub level: f64,
    /// Sample size.
    pub n: u64,
    /// Observed r.
    pub observed: f64,
    /// Corrected r (null when impossible).
    pub corrected: Option<f64>,
    /// r/√(r_xx r_yy), whatever its size.
    pub corrected_value: f64,
    /// Classical interval (null when it lies entirely beyond ±1).
    pub ci: Option<[f64; 2]>,
    /// True when an end of `ci` was cut at ±1.
    pub ci_capped: bool,
    /// Monte Carlo interval.
    pub mc_ci: Option<[f64; 2]>,
    /// For each end of `mc_ci`, true when it is the bound ±1 itself (more draws beyond it
    /// than the tail share).
    pub mc_ci_at_bound: [bool; 2],
    /// Share of draws with an impossible correction.
    pub inadmissible_share: f64,
    /// Draws.
    pub draws: usize,
    /// Seed.
    pub seed: u64,
    /// The reliabilities.
    pub reliabilities: Vec<ReliabilityRecord>,
    /// Corrected r over a grid of reliabilities.
    pub sensitivity: Vec<CorrelationCell>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
}

/// A sensitivity cell.
#[derive(Debug, Clone, Serialize)]
pub struct CorrelationCell {
    /// Reliability of x.
    pub rel_x: f64,
    /// Reliability of y.
    pub rel_y: f64,
    /// Corrected r (null beyond ±1).
    pub corrected: Option<f64>,
}

impl CorrelationDocument {
    /// Build the document.
    pub fn new(
        c: &CorrelationCorrection,
        n: u64,
        rel_x: &ReliabilitySource,
        rel_y: &ReliabilitySource,
        level: f64,
        warnings: &[Warning],
    ) -> Self {
        CorrelationDocument {
            schema_version: SCHEMA_VERSION,
            command: "correct",
            relyard_version: env!("CARGO_PKG_VERSION"),
            case: "correlation",
            level,
            n,
            observed: c.observed,
            corrected: c.admissible.then_some(c.corrected_value),
            corrected_value: c.corrected_value,
            ci: c.ci.map(|(a, b)| [a, b]),
            ci_capped: c.ci_capped,
            mc_ci: c.mc_ci.map(|(a, b)| [a, b]),
            mc_ci_at_bound: [c.mc_bound.0, c.mc_bound.1],
            inadmissible_share: c.inadmissible_share,
            draws: c.draws,
            seed: c.seed,
            reliabilities: vec![
                reliability_record("x", rel_x, level),
                reliability_record("y", rel_y, level),
            ],
            sensitivity: c
                .sensitivity
                .iter()
                .map(|s| CorrelationCell {
                    rel_x: s.rel_x,
                    rel_y: s.rel_y,
                    corrected: s.corrected,
                })
                .collect(),
            warnings: warnings.iter().map(WarningRecord::from).collect(),
        }
    }
}

/// Render the correlation correction.
pub fn correlation_summary(
    c: &CorrelationCorrection,
    n: u64,
    rel_x: &ReliabilitySource,
    rel_y: &ReliabilitySource,
    level: f64,
) -> String {
    let lv = percent_level(level);
    let c3 = |x: f64| fixed(x, 3);
    let mut o = String::new();
    let _ = writeln!(o, "Correcting a correlation for unreliability");
    let _ = writeln!(o, "{}", "─".repeat(72));
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
        "  Corrected r over reliabilities (rows: r_xx; columns: r_yy; – beyond ±1)"
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
    o.push_str(&super::format::wrap(LOWER_BOUND_NOTE, 86, "  "));
    o
}

/// A coefficient of the corrected regression in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct RegressionCoefficient {
    /// Predictor.
    pub name: String,
    /// OLS slope.
    pub ols: f64,
    /// OLS interval over the draws.
    pub ols_ci: Option<[f64; 2]>,
    /// OLS standardized slope.
    pub ols_standardized: f64,
    /// Corrected slope (null when impossible).
    pub corrected: Option<f64>,
    /// Standardized on true-score SDs (null when impossible).
    pub corrected_standardized: Option<f64>,
    /// SE of the corrected slope over the admissible draws.
    pub se: Option<f64>,
    /// Percentile interval of the corrected slope.
    pub ci: Option<[f64; 2]>,
    /// Percentile interval of the corrected standardized slope.
    pub ci_standardized: Option<[f64; 2]>,
}

/// R² in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct R2Record {
    /// OLS R².
    pub observed: f64,
    /// Corrected R² (null when impossible).
    pub corrected: Option<f64>,
    /// Its interval.
    pub corrected_ci: Option<[f64; 2]>,
}

/// `relyard correct --json` for a regression.
#[derive(Debug, Clone, Serialize)]
pub struct RegressionDocument {
    /// Layout version.
    pub schema_version: &'static str,
    /// "correct".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// "regression".
    pub case: &'static str,
    /// Level.
    pub level: f64,
    /// Outcome.
    pub outcome: String,
    /// Sample size.
    pub n: u64,
    /// True when the input held correlations only (slopes standardized).
    pub standardized_only: bool,
    /// Coefficients.
    pub coefficients: Vec<RegressionCoefficient>,
    /// R².
    pub r2: R2Record,
    /// Why the point correction is impossible, when it is.
    pub inadmissible_reason: Option<String>,
    /// Share of draws with an impossible correction.
    pub inadmissible_share: f64,
    /// "bootstrap" or "monte-carlo".
    pub method: &'static str,
    /// Draws.
    pub draws: usize,
    /// Seed.
    pub seed: u64,
    /// The reliabilities.
    pub reliabilities: Vec<ReliabilityRecord>,
    /// Per predictor: corrected slopes over a grid of its reliability.
    pub sensitivity: Vec<SensitivityRow>,
    /// The equivalence with a structural model.
    pub note: &'static str,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
}

/// Sensitivity for one predictor.
#[derive(Debug, Clone, Serialize)]
pub struct SensitivityRow {
    /// The predictor whose reliability varies.
    pub predictor: String,
    /// Grid points: reliability and the slopes (null when impossible).
    pub points: Vec<SensitivityPoint>,
}

/// One grid point.
#[derive(Debug, Clone, Serialize)]
pub struct SensitivityPoint {
    /// The predictor's reliability.
    pub reliability: f64,
    /// Corrected slopes of every predictor (null when impossible).
    pub slopes: Option<Vec<f64>>,
}

/// The structural-model equivalence, stated with every regression correction.
pub const SEM_NOTE: &str = "The corrected slopes equal those of a structural equation model \
with one indicator per predictor whose error variance is fixed at (1 − reliability) × its \
variance.";

impl RegressionDocument {
    /// Build the document.
    pub fn new(
        input: &RegressionInput,
        c: &RegressionCorrection,
        level: f64,
        warnings: &[Warning],
    ) -> Self {
        let e = &c.estimate;
        let corr = e.corrected.as_ref().ok();
        let pair = |s: Option<crate::correct::regression::Spread>| s.map(|s| [s.ci.0, s.ci.1]);
        let mut reliabilities: Vec<ReliabilityRecord> = input
            .predictors
            .iter()
            .zip(&input.rel)
            .map(|(n, r)| reliability_record(n, r, level))
            .collect();
        if let Some(ry) = &input.rel_y {
            reliabilities.push(reliability_record(&input.outcome, ry, level));
        }
        RegressionDocument {
            schema_version: SCHEMA_VERSION,
            command: "correct",
            relyard_version: env!("CARGO_PKG_VERSION"),
            case: "regression",
            level,
            outcome: input.outcome.clone(),
            n: input.n,
            standardized_only: input.standardized_only,
            coefficients: input
                .predictors
                .iter()
                .enumerate()
                .map(|(j, name)| RegressionCoefficient {
                    name: name.clone(),
                    ols: e.ols[j],
                    ols_ci: pair(c.ols_spread[j]),
                    ols_standardized: e.ols_standardized[j],
                    corrected: corr.map(|k| k.slopes[j]),
                    corrected_standardized: corr.map(|k| k.standardized[j]),
                    se: c.corrected_spread[j].map(|s| s.se),
                    ci: pair(c.corrected_spread[j]),
                    ci_standardized: pair(c.corrected_standardized_spread[j]),
                })
                .collect(),
            r2: R2Record {
                observed: e.r2_observed,
                corrected: corr.map(|k| k.r2),
                corrected_ci: pair(c.r2_spread),
            },
            inadmissible_reason: e.corrected.as_ref().err().cloned(),
            inadmissible_share: c.inadmissible_share,
            method: c.method,
            draws: c.draws,
            seed: c.seed,
            reliabilities,
            sensitivity: input
                .predictors
                .iter()
                .zip(&c.sensitivity)
                .map(|(name, pts)| SensitivityRow {
                    predictor: name.clone(),
                    points: pts
                        .iter()
                        .map(|(r, s)| SensitivityPoint {
                            reliability: *r,
                            slopes: s.clone(),
                        })
                        .collect(),
                })
                .collect(),
            note: SEM_NOTE,
            warnings: warnings.iter().map(WarningRecord::from).collect(),
        }
    }
}

/// Render the regression correction.
pub fn regression_summary(input: &RegressionInput, c: &RegressionCorrection, level: f64) -> String {
    let lv = percent_level(level);
    let c3 = |x: f64| fixed(x, 3);
    let e = &c.estimate;
    let mut o = String::new();
    let _ = writeln!(
        o,
        "Correcting a regression of {} for unreliable predictors",
        input.outcome
    );
    let _ = writeln!(o, "{}", "─".repeat(72));
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
        o.push_str(&super::format::wrap(
            &format!("{name}: {}", row.join("  ")),
            86,
            "    ",
        ));
    }
    let _ = writeln!(o);
    o.push_str(&super::format::wrap(SEM_NOTE, 86, "  "));
    o.push_str(&super::format::wrap(LOWER_BOUND_NOTE, 86, "  "));
    o
}
