//! Score spread: SDs put on one metric, and the score-variance test.
//!
//! A reliability coefficient is the share of observed-score variance that is true-score
//! variance: 1 − ρ = σ²_E / σ²_X. With the error variance constant across samples,
//! ln(1 − ρ) = ln σ²_E − 2 ln σ_X, so regressing the Bonett-transformed coefficient on
//! ln(SD) gives slope −2 when the differences in reliability come wholly from the spread
//! of scores, and slope 0 when the error variance grows with the total variance.

use super::design::{Centring, ExcludedRow, ModeratorSpec, build_design, check_rank};
use crate::benchmark::Prepared;
use crate::error::{Error, Result};
use crate::pool::{Coefficient, FitOptions, MetaData, Model, ModelFit, fit_model};
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::sheet::{SdMetric, StudyRecord};
use crate::transform::{CoefficientFamily, TransformKind};
use nalgebra::DMatrix;
use serde::Serialize;
use std::fmt;
use std::str::FromStr;

/// The common metric SDs are put on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SpreadMetric {
    /// SD of the mean item score (a sum-score SD divided by the number of items).
    PerItem,
    /// Percent of maximum possible: the per-item SD × 100 / (scale_max − scale_min).
    Pomp,
}

impl SpreadMetric {
    /// Command-line and JSON name.
    pub fn name(self) -> &'static str {
        match self {
            SpreadMetric::PerItem => "per-item",
            SpreadMetric::Pomp => "pomp",
        }
    }
}

impl SpreadMetric {
    /// The metric for readers: "per-item" or "POMP".
    pub fn label(self) -> &'static str {
        match self {
            SpreadMetric::PerItem => "per-item",
            SpreadMetric::Pomp => "POMP",
        }
    }
}

/// Shown as its label (the JSON keeps the name).
impl fmt::Display for SpreadMetric {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.label())
    }
}

impl FromStr for SpreadMetric {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "per-item" | "per_item" => Ok(SpreadMetric::PerItem),
            "pomp" => Ok(SpreadMetric::Pomp),
            _ => Err(format!(
                "unknown SD metric \"{s}\" (choose per-item or pomp)"
            )),
        }
    }
}

/// One study's SD on the common metrics, or why it cannot be converted.
#[derive(Debug, Clone, PartialEq)]
pub struct HarmonizedSd {
    /// SD of the mean item score.
    pub per_item: Option<f64>,
    /// SD in POMP units (0–100).
    pub pomp: Option<f64>,
    /// Why the SD could not be put on the per-item metric (or on POMP).
    pub problem: Option<String>,
}

/// Put an SD on the per-item and POMP metrics.
///
/// per-item SD = SD (mean metric) or SD / items (sum metric);
/// POMP SD = 100 × per-item SD / (scale_max − scale_min).
///
/// # References
/// Cohen, P., Cohen, J., Aiken, L. S., & West, S. G. (1999). The problem of units and the
/// circumstance for POMP. *Multivariate Behavioral Research*, 34(3), 315–346.
pub fn harmonize(
    sd: Option<f64>,
    metric: Option<SdMetric>,
    items: Option<u32>,
    min: Option<f64>,
    max: Option<f64>,
) -> HarmonizedSd {
    let fail = |why: &str| HarmonizedSd {
        per_item: None,
        pomp: None,
        problem: Some(why.to_string()),
    };
    let Some(sd) = sd else {
        return fail("no SD is reported");
    };
    let per_item = match metric {
        None => {
            return fail(
                "sd_metric is missing, so it is unknown whether the SD is for sum or mean scores",
            );
        }
        Some(SdMetric::Mean) => sd,
        Some(SdMetric::Sum) => match items {
            Some(k) if k >= 1 => sd / f64::from(k),
            _ => return fail("the SD is for sum scores but the number of items is missing"),
        },
    };
    if let (Some(lo), Some(hi)) = (min, max)
        && hi > lo
        && per_item > (hi - lo) / 2.0
    {
        // A variable bounded by lo and hi has an SD of at most (hi − lo)/2.
        return fail(&format!(
            "a per-item SD of {} exceeds the largest possible on a {lo}–{hi} scale ({}); check \
             sd and sd_metric",
            crate::format::significant(per_item, 3),
            (hi - lo) / 2.0
        ));
    }
    let (pomp, problem) = match (min, max) {
        (Some(lo), Some(hi)) if hi > lo => (Some(100.0 * per_item / (hi - lo)), None),
        _ => (
            None,
            Some("scale_min or scale_max is missing, so there is no POMP value".to_string()),
        ),
    };
    HarmonizedSd {
        per_item: Some(per_item),
        pomp,
        problem,
    }
}

/// Harmonize a study record's SD.
pub fn harmonize_record(r: &StudyRecord) -> HarmonizedSd {
    harmonize(r.sd, r.sd_metric, r.items, r.scale_min, r.scale_max)
}

/// The plain-language reading of the score-spread test.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SpreadReading {
    /// The slope's interval excludes 0 and includes −2, and ln(SD) explains at least half
    /// of τ².
    AccountsForMost,
    /// The slope's interval excludes 0 and includes −2, but ln(SD) explains less than half
    /// of τ².
    ConsistentButMinor,
    /// The slope's interval excludes 0 and −2, with the slope between them.
    AccountsForPart,
    /// The slope is steeper than −2.
    SteeperThanExpected,
    /// The slope is positive: coefficients are higher where scores spread less.
    OppositeDirection,
    /// The interval includes 0 but not −2.
    DoesNotAccount,
    /// The interval includes both 0 and −2.
    Undecided,
    /// The coefficients do not vary beyond sampling error (τ² without ln(SD) is 0).
    NothingToExplain,
}

/// Share of τ² that ln(SD) must explain for "most" (common practice, no source: a
/// majority).
pub const MOST_SHARE: f64 = 50.0;

impl SpreadReading {
    /// The sentence for reports.
    pub fn sentence(self) -> &'static str {
        match self {
            SpreadReading::AccountsForMost => {
                "score spread accounts for most of the differences between samples: the slope \
                 is consistent with a constant error variance (−2) and ln(SD) explains at least \
                 half of the between-sample variance, so a sample with a narrower spread of \
                 scores is expected to have a lower coefficient even when the measurement is \
                 equally precise"
            }
            SpreadReading::ConsistentButMinor => {
                "the slope is consistent with a constant error variance (−2), but score spread \
                 explains less than half of the between-sample variance: other differences \
                 between samples matter more"
            }
            SpreadReading::AccountsForPart => {
                "score spread accounts for part of the differences between samples: the slope \
                 lies between 0 and −2, so error variance also differs between samples (or grows \
                 with the spread of scores)"
            }
            SpreadReading::SteeperThanExpected => {
                "coefficients fall with narrower score spread faster than a constant error \
                 variance predicts (slope below −2): samples with narrow spread also measured \
                 less precisely"
            }
            SpreadReading::OppositeDirection => {
                "score spread does not account for the differences in the way a constant error \
                 variance predicts: coefficients are HIGHER where scores spread less (positive \
                 slope), so check the coding of sd and sd_metric, or look for another cause"
            }
            SpreadReading::DoesNotAccount => {
                "score spread does not account for the differences between samples: the slope \
                 is not distinguishable from 0 and differs from the −2 that a constant error \
                 variance predicts"
            }
            SpreadReading::Undecided => {
                "the data cannot tell whether score spread accounts for the differences between \
                 samples: the slope's interval includes both 0 and −2 (too few studies, or too \
                 little variation in SD)"
            }
            SpreadReading::NothingToExplain => {
                "the coefficients of the samples with a usable SD do not vary beyond sampling \
                 error, so there are no differences for score spread to explain"
            }
        }
    }

    /// True when the benchmark shows that coefficients fall with narrower spread.
    pub fn spread_matters(self) -> bool {
        matches!(
            self,
            SpreadReading::AccountsForMost
                | SpreadReading::ConsistentButMinor
                | SpreadReading::AccountsForPart
                | SpreadReading::SteeperThanExpected
        )
    }
}

/// The reading of a slope's interval and the τ² share.
pub fn read_slope(lower: f64, upper: f64, estimate: f64, tau2_share: Option<f64>) -> SpreadReading {
    let Some(share) = tau2_share else {
        return SpreadReading::NothingToExplain;
    };
    let covers = |x: f64| lower <= x && x <= upper;
    match (covers(0.0), covers(-2.0)) {
        (_, _) if lower > 0.0 => SpreadReading::OppositeDirection,
        (false, true) if share >= MOST_SHARE => SpreadReading::AccountsForMost,
        (false, true) => SpreadReading::ConsistentButMinor,
        (true, true) => SpreadReading::Undecided,
        (true, false) => SpreadReading::DoesNotAccount,
        (false, false) if estimate < -2.0 => SpreadReading::SteeperThanExpected,
        (false, false) => SpreadReading::AccountsForPart,
    }
}

/// The score-variance test.
#[derive(Debug, Clone)]
pub struct ScoreSpread {
    /// The SD metric used.
    pub metric: SpreadMetric,
    /// Spreadsheet rows in the model.
    pub rows: Vec<usize>,
    /// Rows left out (SD not convertible, or the Bonett scale not computable).
    pub excluded: Vec<ExcludedRow>,
    /// Names of the model's columns (intercept, ln_sd, other moderators).
    pub names: Vec<String>,
    /// The fit, on the Bonett scale.
    pub fit: ModelFit,
    /// The slope of ln(SD).
    pub slope: Coefficient,
    /// p value of slope = 0.
    pub p_zero: f64,
    /// Statistic of slope = −2.
    pub statistic_minus_two: f64,
    /// p value of slope = −2.
    pub p_minus_two: f64,
    /// τ² of the same model without ln(SD).
    pub tau2_without: f64,
    /// Share of that τ² explained by ln(SD), in percent (`None` when it is 0).
    pub tau2_share: Option<f64>,
    /// The plain-language reading.
    pub reading: SpreadReading,
    /// Median SD of the studies in the model, on the chosen metric.
    pub typical_sd: f64,
    /// The studies' SDs on the chosen metric, in model order.
    pub sds: Vec<f64>,
    /// Reliability of ln(SD) across the studies: 1 − (mean sampling variance of ln SD,
    /// 1/(2(n − 1))) / (variance of ln SD between studies). The slope is attenuated
    /// towards 0 by about this factor; `None` when it cannot be computed.
    pub sd_reliability: Option<f64>,
    /// True when ln(items) is in the model (the number of items varies).
    pub log_items_column: bool,
    /// The design of the other moderators over the studies with an SD (for predictions).
    pub others: super::design::Design,
    /// The model's design matrix (intercept, ln SD, [ln items], other moderators), one row
    /// per study in `rows`.
    pub x: DMatrix<f64>,
}

impl ScoreSpread {
    /// The other moderators in the model besides ln(SD) and ln(items), by name (a
    /// categorical moderator once, however many columns it has).
    pub fn other_moderators(&self) -> Vec<String> {
        self.others
            .moderators
            .iter()
            .map(|m| m.name().to_string())
            .collect()
    }

    /// Expected Bonett-scale value at an SD (with `items` when ln(items) is in the model,
    /// other moderators at the given design values), with its variance.
    pub fn predict(&self, sd: f64, items: Option<u32>, others: &[f64]) -> Result<(f64, f64)> {
        let mut x0 = vec![1.0, sd.ln()];
        if self.log_items_column {
            let k = items.ok_or_else(|| {
                Error::setting(
                    Setting::StudyItems,
                    msg![
                        "the score-spread model includes ln(items) (the benchmark's forms differ \
                         in length); give ",
                        Setting::StudyItems
                    ],
                )
            })?;
            x0.push(f64::from(k).ln());
        }
        x0.extend_from_slice(others);
        Ok(self.fit.predict(&x0))
    }
}

/// Bonett-scale value and variance of a study, whatever the run's transform: for
/// internal-consistency coefficients ln(1 − α) with 2J/((J − 1)(n − 2)); for
/// correlation-type coefficients ln(1 − r) with the delta-method variance (1 + r)²/(n − 3).
pub fn bonett_scale(r: &StudyRecord) -> std::result::Result<(f64, f64), String> {
    if r.coef >= 1.0 {
        return Err("the coefficient is not below 1".into());
    }
    let y = (-r.coef).ln_1p();
    match r.coef_type.family() {
        CoefficientFamily::InternalConsistency => match (r.n, r.items) {
            (Some(n), Some(k)) if n >= 3 && k >= 2 => {
                let (n, k) = (n as f64, f64::from(k));
                Ok((y, 2.0 * k / ((k - 1.0) * (n - 2.0))))
            }
            _ => Err("the Bonett scale needs n ≥ 3 and at least 2 items".into()),
        },
        CoefficientFamily::Correlation => match r.n {
            Some(n) if n >= 4 && r.coef > -1.0 => {
                Ok((y, (1.0 + r.coef).powi(2) / (n as f64 - 3.0)))
            }
            _ => Err("the Bonett scale for a correlation needs n ≥ 4".into()),
        },
    }
}

/// Run the score-variance test: regress the Bonett-transformed coefficients on ln(SD)
/// (SD on `metric`, or POMP when every usable study has a scale range, else per-item),
/// with ln(items) when the number of items varies (the error variance of a mean score
/// shrinks with the number of items), and with other moderators if given.
pub fn score_spread(
    p: &Prepared,
    metric: Option<SpreadMetric>,
    others: &[ModeratorSpec],
    centring: Centring,
    options: &FitOptions,
) -> Result<ScoreSpread> {
    score_spread_inner(p, metric, others, centring, options).map_err(|e| match e {
        Error::CannotAnalyse(m) => Error::CannotAnalyse(m.prefixed("score-spread model: ")),
        Error::InvalidSetting { setting, message } => Error::InvalidSetting {
            setting,
            message: message.prefixed("score-spread model: "),
        },
        other => other,
    })
}

fn score_spread_inner(
    p: &Prepared,
    metric: Option<SpreadMetric>,
    others: &[ModeratorSpec],
    centring: Centring,
    options: &FitOptions,
) -> Result<ScoreSpread> {
    check_reliabilities(p)?;
    let others = with_main_references(p, others, centring)?;
    let harmonized: Vec<HarmonizedSd> = p.records.iter().map(harmonize_record).collect();
    let metric = metric.unwrap_or_else(|| default_metric(&harmonized));
    let usable = usable_sds(p, &harmonized, metric);
    let mut excluded = usable.excluded;
    let sds = usable.sds;
    // The sub-sheet on the Bonett scale; the other moderators' design over it.
    let mut sub = p.subset(&usable.keep);
    sub.y = usable.bonett.iter().map(|b| b.0).collect();
    sub.v = usable.bonett.iter().map(|b| b.1).collect();
    let note = excluded_note(&excluded);
    let base = build_design(&sub, &others, centring)
        .map_err(|e| among_usable(e, &note, usable.keep.len()))?;
    for e in &base.excluded {
        excluded.push(e.clone());
    }
    excluded.sort_by_key(|e| e.row);
    let used = base.used.clone();
    let log_sd: Vec<f64> = used.iter().map(|&i| sds[i].ln()).collect();
    let log_items = log_items(&used, &sub);
    let (x, names) = spread_design(&base, &log_sd, log_items.as_deref(), &note)?;
    let cols = x.ncols();
    let y: Vec<f64> = used.iter().map(|&i| sub.y[i]).collect();
    let v: Vec<f64> = used.iter().map(|&i| sub.v[i]).collect();
    let grouping = super::dependent::multilevel_grouping(&sub, &used, options);
    let (fit, tau2_without, slope_df) =
        fit_with_and_without_sd(y, v, &x, options, grouping.as_ref())?;
    let slope = fit.coefficients[1];
    let stat2 = (slope.estimate + 2.0) / slope.se;
    let p_minus_two = match slope_df {
        Some(df) => crate::dist::t_two_sided_p(stat2, df),
        None => fit.two_sided_p(stat2),
    };
    let tau2_share = tau2_share(options.model, tau2_without, fit.tau2.tau2);
    let reading = read_slope(slope.ci.lower, slope.ci.upper, slope.estimate, tau2_share);
    let model_sds: Vec<f64> = used.iter().map(|&i| sds[i]).collect();
    // The attenuation factor is exact only when ln(SD) is alone in the model.
    let sd_reliability = if cols == 2 {
        sd_reliability(&log_sd, &used, &sub)
    } else {
        None
    };
    let rows = used.iter().map(|&i| sub.records[i].row).collect();
    Ok(ScoreSpread {
        metric,
        rows,
        excluded,
        names,
        slope,
        p_zero: slope.p,
        statistic_minus_two: stat2,
        p_minus_two,
        tau2_without,
        tau2_share,
        reading,
        typical_sd: median(&model_sds),
        sds: model_sds,
        sd_reliability,
        log_items_column: log_items.is_some(),
        fit,
        others: base,
        x,
    })
}

/// Refuse a sheet of effects of unknown kind: the test needs reliability coefficients.
fn check_reliabilities(p: &Prepared) -> Result<()> {
    if p.transform == TransformKind::None {
        return Err(Error::setting(
            Setting::ScoreSpread,
            msg![
                "the score-spread test needs reliability coefficients; with ",
                given(Setting::Transform, "none"),
                " the sheet holds effects of unknown kind"
            ],
        ));
    }
    Ok(())
}

/// The other moderators with the reference levels of the main model (from all usable
/// studies), so that the two models name their coefficients alike.
fn with_main_references(
    p: &Prepared,
    others: &[ModeratorSpec],
    centring: Centring,
) -> Result<Vec<ModeratorSpec>> {
    if others.is_empty() {
        return Ok(Vec::new());
    }
    let full = build_design(p, others, centring)?;
    Ok(others
        .iter()
        .map(|spec| {
            let reference = full.moderators.iter().find_map(|m| match m {
                super::design::Moderator::Categorical {
                    name, reference, ..
                } if name.eq_ignore_ascii_case(&spec.name) => Some(reference.clone()),
                _ => None,
            });
            ModeratorSpec {
                reference: spec.reference.clone().or(reference),
                ..spec.clone()
            }
        })
        .collect())
}

/// POMP when every study with a per-item SD also has a POMP SD, else per-item.
fn default_metric(harmonized: &[HarmonizedSd]) -> SpreadMetric {
    let all_pomp = harmonized
        .iter()
        .filter(|h| h.per_item.is_some())
        .all(|h| h.pomp.is_some());
    if all_pomp {
        SpreadMetric::Pomp
    } else {
        SpreadMetric::PerItem
    }
}

/// The studies with a usable SD and Bonett-scale value, and the rows left out.
struct UsableSds {
    /// Indices of the usable studies among the prepared ones.
    keep: Vec<usize>,
    /// Rows left out, with their reasons.
    excluded: Vec<ExcludedRow>,
    /// Bonett-scale value and variance of each usable study.
    bonett: Vec<(f64, f64)>,
    /// SD of each usable study on the chosen metric.
    sds: Vec<f64>,
}

/// Sort the studies into those with a usable SD on `metric` and Bonett-scale value, and
/// the rest (with the reasons).
fn usable_sds(p: &Prepared, harmonized: &[HarmonizedSd], metric: SpreadMetric) -> UsableSds {
    let mut usable = UsableSds {
        keep: Vec::new(),
        excluded: Vec::new(),
        bonett: Vec::new(),
        sds: Vec::new(),
    };
    for (i, (r, h)) in p.records.iter().zip(harmonized).enumerate() {
        let sd = match metric {
            SpreadMetric::PerItem => h.per_item,
            SpreadMetric::Pomp => h.pomp,
        };
        let b = bonett_scale(r);
        match (sd, b) {
            (Some(sd), Ok(yv)) if sd > 0.0 => {
                usable.keep.push(i);
                usable.bonett.push(yv);
                usable.sds.push(sd);
            }
            (sd, b) => {
                let mut reasons = Vec::new();
                if sd.is_none() {
                    reasons.push(format!(
                        "column sd: {}",
                        h.problem
                            .clone()
                            .unwrap_or_else(|| "the SD cannot be converted".into())
                    ));
                }
                if let Err(e) = b {
                    reasons.push(format!("column coef: {e}"));
                }
                usable.excluded.push(ExcludedRow {
                    row: r.row,
                    reasons,
                });
            }
        }
    }
    usable
}

/// A design error over the studies with a usable SD, saying so and how many rows were
/// left out.
fn among_usable(e: Error, note: &str, kept: usize) -> Error {
    match e {
        Error::CannotAnalyse(m) => Error::CannotAnalyse(m.followed_by(note.to_string())),
        Error::InvalidSetting { setting, message } => Error::InvalidSetting {
            setting,
            message: message
                .followed_by(format!(" among the {kept} studies with a usable SD{note}")),
        },
        other => other,
    }
}

/// ln(items) of the studies in the model, when every study gives its items and they
/// differ.
fn log_items(used: &[usize], sub: &Prepared) -> Option<Vec<f64>> {
    let items: Vec<Option<u32>> = used.iter().map(|&i| sub.records[i].items).collect();
    if items.iter().all(Option::is_some) {
        let v: Vec<f64> = items
            .iter()
            .map(|k| f64::from(k.expect("checked")).ln())
            .collect();
        v.iter().any(|x| (x - v[0]).abs() > 1e-12).then_some(v)
    } else {
        None
    }
}

/// The score-spread model's design matrix (intercept, ln SD, [ln items], other
/// moderators) and column names, checked for enough studies, varying SDs and full rank.
fn spread_design(
    base: &super::design::Design,
    log_sd: &[f64],
    log_items: Option<&[f64]>,
    note: &str,
) -> Result<(DMatrix<f64>, Vec<String>)> {
    let k = log_sd.len();
    let extra = usize::from(log_items.is_some());
    let cols = base.x.ncols() + 1 + extra;
    if k <= cols + 1 {
        return Err(Error::cannot(format!(
            "the model has {cols} coefficients but only {k} studies with a usable SD; at least {} \
             are needed{note}",
            cols + 2
        )));
    }
    if log_sd.iter().all(|v| (*v - log_sd[0]).abs() < 1e-12) {
        return Err(Error::cannot(
            "every study in the model reports the same SD, so its effect cannot be estimated",
        ));
    }
    let x = DMatrix::from_fn(k, cols, |i, j| match j {
        0 => 1.0,
        1 => log_sd[i],
        2 if extra == 1 => log_items.expect("present")[i],
        _ => base.x[(i, j - 1 - extra)],
    });
    let mut names = vec!["intercept".to_string(), "ln_sd".to_string()];
    if extra == 1 {
        names.push("ln_items".to_string());
    }
    names.extend(base.names.iter().skip(1).cloned());
    check_rank(&x, &names)?;
    Ok((x, names))
}

/// Fit the score-spread model, and the same model without ln(SD) (the design's second
/// column) for the share of τ² it explains: the fit, τ² without ln(SD), and the slope's
/// own degrees of freedom when it has them (a multilevel fit under robust inference).
/// With a `grouping` both are the multilevel model (τ² the sum of its two variances).
fn fit_with_and_without_sd(
    y: Vec<f64>,
    v: Vec<f64>,
    x: &DMatrix<f64>,
    options: &FitOptions,
    grouping: Option<&crate::pool::multilevel::Grouping>,
) -> Result<(ModelFit, f64, Option<f64>)> {
    let keep_cols: Vec<usize> = (0..x.ncols()).filter(|&j| j != 1).collect();
    if let Some(g) = grouping {
        let pool = crate::pool::PoolOptions {
            model: options.model,
            ci: options.ci,
            level: options.level,
        };
        let dep = &options.dependence;
        let s = crate::pool::dependence::summarize(&y, &v, x, g, &pool, dep)?;
        let fit = super::dependent::model_fit(&s, options, &y);
        let without =
            crate::pool::multilevel::NestedData::new(&y, &v, &x.select_columns(&keep_cols), g)?;
        let w = crate::pool::multilevel::fit(&without, &s.fit.options)?;
        let slope_df = s.coefficients[1].df;
        return Ok((fit, w.tau2_cluster + w.tau2_within, slope_df));
    }
    let data = MetaData::with_design(y.clone(), v.clone(), x.clone())?;
    let fit = fit_model(&data, options)?;
    let without = MetaData::with_design(y, v, x.select_columns(&keep_cols))?;
    let fit_without = fit_model(
        &without,
        &FitOptions {
            tau2_interval: false,
            ..*options
        },
    )?;
    Ok((fit, fit_without.tau2.tau2, None))
}

/// The share of τ² (without ln(SD)) that ln(SD) explains, in percent; `None` when
/// there is none to explain.
fn tau2_share(model: Model, tau2_without: f64, tau2: f64) -> Option<f64> {
    match model {
        Model::Random(_) if tau2_without > 0.0 => {
            Some((100.0 * (tau2_without - tau2) / tau2_without).max(0.0))
        }
        _ => None,
    }
}

/// Reliability of ln(SD) across the studies in the model (`None` when a study lacks a
/// sample size above 1 or the SDs do not vary).
fn sd_reliability(log_sd: &[f64], used: &[usize], sub: &Prepared) -> Option<f64> {
    let n = log_sd.len() as f64;
    let mean = log_sd.iter().sum::<f64>() / n;
    let between = log_sd.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
    let errors: Vec<f64> = used
        .iter()
        .filter_map(|&i| sub.records[i].n)
        .filter(|&m| m > 1)
        .map(|m| 1.0 / (2.0 * (m as f64 - 1.0)))
        .collect();
    (errors.len() == used.len() && between > 0.0)
        .then(|| (1.0 - errors.iter().sum::<f64>() / errors.len() as f64 / between).max(0.0))
}

fn excluded_note(excluded: &[ExcludedRow]) -> String {
    if excluded.is_empty() {
        String::new()
    } else {
        format!(
            " ({} left out for an SD that cannot be used; see docs/coding-sheet.md on sd, \
             sd_metric and the scale range)",
            if excluded.len() == 1 {
                "1 row was".to_string()
            } else {
                format!("{} rows were", excluded.len())
            }
        )
    }
}

fn median(xs: &[f64]) -> f64 {
    let mut s = xs.to_vec();
    s.sort_by(|a, b| a.total_cmp(b));
    let n = s.len();
    if n == 0 {
        f64::NAN
    } else if n % 2 == 1 {
        s[n / 2]
    } else {
        0.5 * (s[n / 2 - 1] + s[n / 2])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sds_are_put_on_one_metric() {
        // A sum-score SD of 6 over 10 items is a per-item SD of 0.6; on a 1–5 scale that
        // is 15 POMP units.
        let h = harmonize(
            Some(6.0),
            Some(SdMetric::Sum),
            Some(10),
            Some(1.0),
            Some(5.0),
        );
        assert!((h.per_item.unwrap() - 0.6).abs() < 1e-12);
        assert!((h.pomp.unwrap() - 15.0).abs() < 1e-12);
        let h = harmonize(Some(0.6), Some(SdMetric::Mean), Some(6), None, None);
        assert_eq!(h.per_item, Some(0.6));
        assert!(h.pomp.is_none() && h.problem.is_some());
        assert!(
            harmonize(Some(6.0), None, Some(10), None, None)
                .per_item
                .is_none()
        );
        assert!(
            harmonize(None, Some(SdMetric::Mean), None, None, None)
                .problem
                .is_some()
        );
        assert!(
            harmonize(Some(6.0), Some(SdMetric::Sum), None, None, None)
                .per_item
                .is_none()
        );
    }
}
