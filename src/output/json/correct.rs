//! `relyard correct --json`: a corrected correlation or regression.

use super::{RELYARD_VERSION, SCHEMA_VERSION};
use crate::analysis::Correction;
use crate::correct::ReliabilitySource;
use crate::correct::correlation::{CorrelationCorrection, CorrelationInput};
use crate::correct::regression::{RegressionCorrection, RegressionInput};
use crate::level::Level;
use crate::setting::SettingNames;
use crate::warning::{Warning, WarningRecord};
use serde::Serialize;

/// `relyard correct --json`: one of the two documents.
#[derive(Debug, Clone, Serialize)]
#[serde(untagged)]
pub enum CorrectionDocument {
    /// A correlation.
    Correlation(Box<CorrelationDocument>),
    /// A regression.
    Regression(Box<RegressionDocument>),
}

impl CorrectionDocument {
    /// The document of a correction.
    pub fn new(c: &Correction, level: Level, names: &dyn SettingNames) -> Self {
        match c {
            Correction::Correlation {
                input,
                result,
                choices,
                scores,
                warnings,
            } => {
                let mut doc = CorrelationDocument::new(input, result, level, warnings, names);
                doc.by_coefficient = choices.iter().map(ChoiceRecord::from).collect();
                doc.item_data = item_data(scores);
                CorrectionDocument::Correlation(Box::new(doc))
            }
            Correction::Regression {
                input,
                result,
                choices,
                scores,
                warnings,
            } => {
                let mut doc = RegressionDocument::new(input, result, level, warnings, names);
                doc.by_coefficient = choices.iter().map(SlopeChoiceRecord::from).collect();
                doc.item_data = item_data(scores);
                CorrectionDocument::Regression(Box::new(doc))
            }
        }
    }
}

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

fn reliability_record(variable: &str, r: &ReliabilitySource, level: Level) -> ReliabilityRecord {
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
    pub level: Level,
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
    /// The correlation corrected with each coefficient the item data give (empty without
    /// `--items-x` / `--items-y`).
    pub by_coefficient: Vec<ChoiceRecord>,
    /// The item data given for x and y.
    pub item_data: Vec<ItemDataRecord>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
}

/// One row of `by_coefficient`.
#[derive(Debug, Clone, Serialize)]
pub struct ChoiceRecord {
    /// "alpha", "omega", "omega_total", "omega_hierarchical", "glb" or "given".
    pub coefficient: &'static str,
    /// Reliability of x used.
    pub reliability_x: f64,
    /// Reliability of y used.
    pub reliability_y: f64,
    /// Corrected r (null beyond ±1).
    pub corrected: Option<f64>,
    /// r/√(r_xx r_yy), whatever its size.
    pub corrected_value: f64,
    /// Classical interval with the reliabilities taken as known (null entirely beyond ±1).
    pub ci: Option<[f64; 2]>,
    /// True when an end of `ci` was cut at ±1.
    pub ci_capped: bool,
    /// Whether the coefficient is a lower bound (it over-corrects).
    pub lower_bound: bool,
}

impl From<&crate::correct::choice::ChoiceRow> for ChoiceRecord {
    fn from(r: &crate::correct::choice::ChoiceRow) -> Self {
        ChoiceRecord {
            coefficient: r.coefficient.name(),
            reliability_x: r.reliability_x,
            reliability_y: r.reliability_y,
            corrected: (r.corrected.abs() <= 1.0).then_some(r.corrected),
            corrected_value: r.corrected,
            ci: r.ci.map(|(a, b)| [a, b]),
            ci_capped: r.ci_capped,
            lower_bound: r.lower_bound,
        }
    }
}

/// The item data of x and y, when given.
fn item_data(scores: &[Option<Box<crate::analysis::ScoreItems>>; 2]) -> Vec<ItemDataRecord> {
    ["x", "y"]
        .iter()
        .zip(scores)
        .filter_map(|(v, s)| s.as_ref().map(|s| ItemDataRecord::new(v, s)))
        .collect()
}

/// One row of a regression's `by_coefficient`.
#[derive(Debug, Clone, Serialize)]
pub struct SlopeChoiceRecord {
    /// "alpha", "omega", "omega_total", "omega_hierarchical", "glb" or "given".
    pub coefficient: &'static str,
    /// Reliability of the predictor used.
    pub reliability_x: f64,
    /// Reliability of the outcome used (1 when none was given).
    pub reliability_y: f64,
    /// The predictor's corrected slope (null when the correction is impossible).
    pub corrected: Option<f64>,
    /// The corrected slope standardized on the true-score SDs.
    pub corrected_standardized: Option<f64>,
    /// Percentile interval of the corrected slope with the row's reliabilities taken as
    /// known (null when the draws do not determine it).
    pub ci: Option<[f64; 2]>,
    /// Whether the coefficient is a lower bound (it over-corrects).
    pub lower_bound: bool,
    /// Why the correction is impossible, when it is.
    pub note: Option<String>,
}

impl From<&crate::correct::choice::SlopeChoiceRow> for SlopeChoiceRecord {
    fn from(r: &crate::correct::choice::SlopeChoiceRow) -> Self {
        SlopeChoiceRecord {
            coefficient: r.coefficient.name(),
            reliability_x: r.reliability_x,
            reliability_y: r.reliability_y,
            corrected: r.slope.as_ref().ok().copied(),
            corrected_standardized: r.standardized,
            ci: r.ci.map(|(a, b)| [a, b]),
            lower_bound: r.lower_bound,
            note: r.slope.as_ref().err().cloned(),
        }
    }
}

/// The item data of one score.
#[derive(Debug, Clone, Serialize)]
pub struct ItemDataRecord {
    /// "x" or "y".
    pub variable: &'static str,
    /// The file.
    pub file: String,
    /// Respondents behind the coefficients.
    pub n_used: u64,
    /// Items.
    pub items: usize,
    /// The coefficient the main correction took from them (null when a value was given).
    pub used: Option<&'static str>,
}

impl ItemDataRecord {
    fn new(variable: &'static str, s: &crate::analysis::ScoreItems) -> Self {
        ItemDataRecord {
            variable,
            file: s.outcome.data.file.clone(),
            n_used: s.outcome.analysis.n_used,
            items: s.outcome.analysis.k,
            used: s.used.map(|c| c.name()),
        }
    }
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
        input: &CorrelationInput,
        c: &CorrelationCorrection,
        level: Level,
        warnings: &[Warning],
        names: &dyn SettingNames,
    ) -> Self {
        let (n, rel_x, rel_y) = (input.n, &input.rel_x, &input.rel_y);
        CorrelationDocument {
            schema_version: SCHEMA_VERSION,
            command: "correct",
            relyard_version: RELYARD_VERSION,
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
            by_coefficient: Vec::new(),
            item_data: Vec::new(),
            warnings: super::warnings(warnings, names),
        }
    }
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
    pub level: Level,
    /// The file the data came from (raw data or a summary).
    pub data_file: Option<String>,
    /// The worksheet read, when the raw data are in a workbook (null otherwise).
    pub sheet_name: Option<String>,
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
    pub method: crate::correct::regression::DrawMethod,
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
    /// The one predictor's slope corrected with each coefficient the item data give (empty
    /// without `--items-x` / `--items-y`).
    pub by_coefficient: Vec<SlopeChoiceRecord>,
    /// The item data given for the predictor (x) and the outcome (y).
    pub item_data: Vec<ItemDataRecord>,
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
        level: Level,
        warnings: &[Warning],
        names: &dyn SettingNames,
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
            relyard_version: RELYARD_VERSION,
            case: "regression",
            level,
            data_file: input.data_file.clone(),
            sheet_name: input.sheet_name.clone(),
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
            by_coefficient: Vec::new(),
            item_data: Vec::new(),
            warnings: super::warnings(warnings, names),
        }
    }
}
