//! The what-if correction: reliabilities resolved (a value, an estimate, another sheet's
//! benchmark or the run's own), the correlation or regression corrected, and the
//! warnings that go with it.

use super::ItemsOutcome;
use super::settings::{CorrectionSettings, ItemSettings, RegressionData, Settings};
use super::{Progress, Task, with_progress};
use crate::benchmark::Prepared;
use crate::correct::choice::{
    ChoiceRow, CoefficientChoice, ScoreReliability, SlopeChoiceRow, by_coefficient, choices,
};
use crate::correct::correlation::{CorrelationCorrection, CorrelationInput, correct_correlation};
use crate::correct::regression::{RegressionCorrection, RegressionInput, correct_regression};
use crate::correct::reliability::{BenchmarkAt, benchmark_source};
use crate::correct::summary::{read_summary, summary_from_bytes};
use crate::correct::{ReliabilitySource, ReliabilitySpec, resolve};
use crate::error::{Error, Result};
use crate::items::{ItemData, ItemReadOptions, Missing, read_items};
use crate::pool::FitOptions;
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::sheet::CoefType;
use crate::warning::Warning;

/// A correction and its warnings.
#[derive(Debug, Clone)]
pub enum Correction {
    /// A corrected correlation.
    Correlation {
        /// What was corrected.
        input: Box<CorrelationInput>,
        /// The result.
        result: Box<CorrelationCorrection>,
        /// The correlation corrected with each coefficient the item data give (empty
        /// without item data).
        choices: Vec<ChoiceRow>,
        /// The item data of x and y, when given.
        scores: [Option<Box<ScoreItems>>; 2],
        /// Its warnings.
        warnings: Vec<Warning>,
    },
    /// A corrected regression.
    Regression {
        /// What was corrected.
        input: Box<RegressionInput>,
        /// The result.
        result: Box<RegressionCorrection>,
        /// The one predictor's slope corrected with each coefficient the item data give
        /// (empty without item data).
        choices: Vec<SlopeChoiceRow>,
        /// The item data of x (the predictor) and y (the outcome), when given.
        scores: [Option<Box<ScoreItems>>; 2],
        /// Its warnings.
        warnings: Vec<Warning>,
    },
}

impl Correction {
    /// The correction's warnings.
    pub fn warnings(&self) -> &[Warning] {
        match self {
            Correction::Correlation { warnings, .. } | Correction::Regression { warnings, .. } => {
                warnings
            }
        }
    }
}

/// A score's item data and what the correction took from them.
#[derive(Debug, Clone)]
pub struct ScoreItems {
    /// The items' analysis.
    pub outcome: ItemsOutcome,
    /// The coefficient the main correction uses, when it comes from the items (no value
    /// was given).
    pub used: Option<CoefficientChoice>,
}

/// What one score brings to a correlation's correction.
struct Score {
    source: ReliabilitySource,
    reliability: ScoreReliability,
    items: Option<Box<ScoreItems>>,
}

/// The coefficients an item analysis gives, in the table's order. Without subscales, the
/// bifactor rows take the one-factor omega (with one factor, omega total and omega
/// hierarchical are that omega).
fn coefficients(o: &ItemsOutcome) -> Vec<(CoefficientChoice, f64)> {
    let a = &o.analysis;
    let mut c = vec![(CoefficientChoice::Alpha, a.alpha)];
    if let Some(w) = a.omega() {
        c.push((CoefficientChoice::Omega, w));
    }
    match (&o.multidimensional, a.omega()) {
        (Some(Ok(m)), _) => {
            if let Some(w) = &m.omegas {
                c.push((CoefficientChoice::OmegaTotal, w.omega_total));
                c.push((CoefficientChoice::OmegaHierarchical, w.omega_hierarchical));
            }
        }
        (None, Some(w)) => {
            c.push((CoefficientChoice::OmegaTotal, w));
            c.push((CoefficientChoice::OmegaHierarchical, w));
        }
        _ => {}
    }
    if let Ok(g) = &a.glb {
        c.push((CoefficientChoice::Glb, g.value));
    }
    c
}

/// The coefficient an item analysis recommends for a correction: omega total of the
/// bifactor model when subscales were given, omega when the one-factor reading says so (or
/// finds alpha and omega equivalent), alpha otherwise.
fn recommended(o: &ItemsOutcome) -> (CoefficientChoice, f64, CoefType) {
    use crate::items::Recommendation;
    let a = &o.analysis;
    if let Some(Ok(m)) = &o.multidimensional
        && let (Some(w), Ok(fit)) = (&m.omegas, &m.bifactor)
        && fit.stop.converged()
        && fit.heywood.is_empty()
    {
        return (
            CoefficientChoice::OmegaTotal,
            w.omega_total,
            CoefType::Omega,
        );
    }
    match (a.recommendation, a.omega()) {
        (Recommendation::Omega | Recommendation::Either, Some(w)) => {
            (CoefficientChoice::Omega, w, CoefType::Omega)
        }
        _ => (CoefficientChoice::Alpha, a.alpha, CoefType::Alpha),
    }
}

/// One score of a correlation: its reliability as given or from its item data, and the
/// coefficients those give.
fn score(
    spec: &Option<ReliabilitySpec>,
    items: &Option<Box<ItemSettings>>,
    setting: Setting,
    this: Option<&Prepared>,
    s: &Settings,
    progress: &dyn Progress,
    warnings: &mut Vec<Warning>,
) -> Result<Score> {
    let outcome = match items {
        Some(i) => {
            let which = if setting == Setting::ReliabilityY {
                "y"
            } else {
                "x"
            };
            let context = format!("the item data of {which} ({}): ", i.path.display());
            Some(super::items::items(i, s, progress).map_err(|e| e.in_context(&context))?)
        }
        None => None,
    };
    if let Some(o) = &outcome {
        warnings.extend(o.warnings.iter().cloned());
    }
    let (source, used) = match (spec, &outcome) {
        (Some(spec), _) => (self::source(spec, setting, this, s)?, None),
        (None, Some(o)) => {
            let (choice, value, kind) = recommended(o);
            let source = ReliabilitySource::Estimate {
                value,
                n: o.analysis.n_used,
                items: o.analysis.k as u32,
                kind: Some(kind),
            };
            (source, Some(choice))
        }
        (None, None) => {
            return Err(Error::setting(
                setting,
                msg![setting, " is needed (a value, or item data)"],
            ));
        }
    };
    let reliability = ScoreReliability {
        computed: outcome.as_ref().map(coefficients),
        given: spec.as_ref().map(|_| {
            (
                source.point(),
                source.lower_bound_share().is_some_and(|v| v >= 0.5),
            )
        }),
        main: source.point(),
    };
    Ok(Score {
        source,
        reliability,
        items: outcome.map(|outcome| Box::new(ScoreItems { outcome, used })),
    })
}

/// True when a reliability is the run's own benchmark (so the sheet must be read).
pub(crate) fn uses_this_benchmark(c: &CorrectionSettings) -> bool {
    let this = |r: &ReliabilitySpec| matches!(r, ReliabilitySpec::ThisBenchmark { .. });
    match c {
        CorrectionSettings::Correlation { rel_x, rel_y, .. } => {
            rel_x.as_ref().is_some_and(this) || rel_y.as_ref().is_some_and(this)
        }
        CorrectionSettings::Regression {
            predictors,
            outcome_reliability,
            ..
        } => {
            predictors.iter().any(|(_, r)| this(r))
                || outcome_reliability.as_ref().is_some_and(this)
        }
    }
}

/// Benchmarks behind reliabilities are fitted with the run's model (without τ²'s
/// interval, which a reliability does not use).
fn reliability_fit(s: &Settings) -> FitOptions {
    FitOptions {
        tau2_interval: false,
        ..super::fit_options(s)
    }
}

/// A reliability ready to draw from.
fn source(
    spec: &ReliabilitySpec,
    setting: Setting,
    this: Option<&Prepared>,
    s: &Settings,
) -> Result<ReliabilitySource> {
    match (spec, this) {
        (ReliabilitySpec::ThisBenchmark { at }, Some(p)) => benchmark_source(
            p,
            &BenchmarkAt {
                moderators: &s.moderators.specs,
                at,
                centring: s.moderators.centring,
                setting,
            },
            &reliability_fit(s),
            p.file(),
        ),
        _ => resolve(spec, &reliability_fit(s), setting),
    }
}

/// Run the correction the settings ask for.
pub(crate) fn correct(
    c: &CorrectionSettings,
    this: Option<&Prepared>,
    s: &Settings,
    progress: &dyn Progress,
) -> Result<Correction> {
    match c {
        CorrectionSettings::Correlation {
            r,
            n,
            rel_x,
            rel_y,
            items_x,
            items_y,
            draws,
            grid,
        } => {
            let mut warnings = Vec::new();
            let mut x = score(
                rel_x,
                items_x,
                Setting::ReliabilityX,
                this,
                s,
                progress,
                &mut warnings,
            )?;
            let mut y = score(
                rel_y,
                items_y,
                Setting::ReliabilityY,
                this,
                s,
                progress,
                &mut warnings,
            )?;
            trim_bifactor_rows(&mut x, &mut y);
            let input = CorrelationInput {
                r: *r,
                n: *n,
                rel_x: x.source,
                rel_y: y.source,
            };
            let result = with_progress(progress, Task::Draws, *draws, |tick| {
                correct_correlation(&input, *draws, s.seed, s.level, *grid, tick)
            })?;
            warnings.extend(correlation_warnings(&input, &result));
            let choices = by_coefficient(*r, *n, s.level, &x.reliability, &y.reliability);
            Ok(Correction::Correlation {
                input: Box::new(input),
                result: Box::new(result),
                choices,
                scores: [x.items, y.items],
                warnings,
            })
        }
        CorrectionSettings::Regression {
            data,
            outcome,
            predictors,
            outcome_reliability,
            items_x,
            items_y,
            draws,
            grid,
        } => {
            let mut rel = Vec::with_capacity(predictors.len());
            for (_, spec) in predictors {
                rel.push(source(spec, Setting::Reliabilities, this, s)?);
            }
            let rel_y = match outcome_reliability {
                Some(spec) => Some(source(spec, Setting::Reliabilities, this, s)?),
                None => None,
            };
            let names: Vec<String> = predictors.iter().map(|(n, _)| n.clone()).collect();
            let (input, mut warnings) = regression_input(data, outcome, names, rel, rel_y)?;
            let task = if input.rows.is_some() {
                Task::Bootstrap
            } else {
                Task::Draws
            };
            let result = with_progress(progress, task, *draws, |tick| {
                correct_regression(&input, *draws, s.seed, s.level, *grid, tick)
            })?;
            warnings.extend(regression_warnings(&input, &result));
            let (choices, scores) = if items_x.is_some() || items_y.is_some() {
                let x = score(
                    &Some(predictors[0].1.clone()),
                    items_x,
                    Setting::Reliabilities,
                    this,
                    s,
                    progress,
                    &mut warnings,
                )?;
                let y = match (outcome_reliability, items_y) {
                    (None, None) => Score {
                        source: ReliabilitySource::Point {
                            value: 1.0,
                            kind: None,
                        },
                        reliability: ScoreReliability {
                            computed: None,
                            given: None,
                            main: 1.0,
                        },
                        items: None,
                    },
                    (spec, items) => {
                        let mut y = score(
                            spec,
                            items,
                            Setting::ReliabilityY,
                            this,
                            s,
                            progress,
                            &mut warnings,
                        )?;
                        // Without an outcome reliability the main correction used none (1):
                        // the table's given row does the same, and nothing was taken from the
                        // items.
                        if spec.is_none() {
                            y.reliability.main = 1.0;
                            if let Some(i) = &mut y.items {
                                i.used = None;
                            }
                        }
                        y
                    }
                };
                let (mut x, mut y) = (x, y);
                trim_bifactor_rows(&mut x, &mut y);
                let rows = slope_choices(&input, &x, &y, *draws, s)?;
                (rows, [x.items, y.items])
            } else {
                (Vec::new(), [None, None])
            };
            Ok(Correction::Regression {
                input: Box::new(input),
                result: Box::new(result),
                choices,
                scores,
                warnings,
            })
        }
    }
}

/// The bifactor rows only when a score has subscales: without them they would repeat omega.
fn trim_bifactor_rows(x: &mut Score, y: &mut Score) {
    let subscales = |sc: &Score| {
        sc.items
            .as_ref()
            .is_some_and(|i| matches!(i.outcome.multidimensional, Some(Ok(_))))
    };
    if subscales(x) || subscales(y) {
        return;
    }
    for sc in [x, y] {
        if let Some(c) = &mut sc.reliability.computed {
            c.retain(|(k, _)| {
                !matches!(
                    k,
                    CoefficientChoice::OmegaTotal | CoefficientChoice::OmegaHierarchical
                )
            });
        }
    }
}

/// The one predictor's slope under each coefficient: the regression corrected again with
/// the row's reliabilities fixed (same draws and seed, so the rows differ only by the
/// coefficient).
fn slope_choices(
    input: &RegressionInput,
    x: &Score,
    y: &Score,
    draws: usize,
    s: &Settings,
) -> Result<Vec<SlopeChoiceRow>> {
    let mut rows = Vec::new();
    for (c, rx, ry, lower_bound) in choices(&x.reliability, &y.reliability) {
        // The given row is the main correction itself (its reliabilities drawn as given);
        // the others fix the row's coefficients.
        let mut fixed = input.clone();
        if c != CoefficientChoice::Given {
            fixed.rel[0] = ReliabilitySource::Point {
                value: rx,
                kind: None,
            };
            fixed.rel_y = Some(ReliabilitySource::Point {
                value: ry,
                kind: None,
            });
        }
        let r = correct_regression(&fixed, draws, s.seed, s.level, 2, &|_| {})?;
        let (slope, standardized) = match &r.estimate.corrected {
            Ok(k) => (Ok(k.slopes[0]), Some(k.standardized[0])),
            Err(why) => (Err(why.clone()), None),
        };
        rows.push(SlopeChoiceRow {
            coefficient: c,
            reliability_x: rx,
            reliability_y: ry,
            slope,
            standardized,
            ci: r
                .intervals_determined
                .then(|| r.corrected_spread[0].as_ref().map(|sp| sp.ci))
                .flatten(),
            lower_bound,
        });
    }
    Ok(rows)
}

fn correlation_warnings(input: &CorrelationInput, c: &CorrelationCorrection) -> Vec<Warning> {
    let mut warnings = Vec::new();
    if !c.admissible {
        warnings.push(Warning::Inadmissible {
            what: "corrected correlation".into(),
            why: format!(
                "r / √(r_xx · r_yy) = {:.3} lies beyond ±1",
                c.corrected_value
            ),
        });
    }
    if c.inadmissible_share > 0.0 {
        warnings.push(Warning::InadmissibleDraws {
            share: c.inadmissible_share,
        });
    }
    for (name, r) in [("x", &input.rel_x), ("y", &input.rel_y)] {
        if let Some(share) = r.lower_bound_share() {
            warnings.push(Warning::LowerBoundReliability {
                which: name.into(),
                share,
            });
        }
    }
    warnings
}

/// The regression's covariance matrix from raw data or a summary.
fn regression_input(
    data: &RegressionData,
    outcome: &str,
    predictors: Vec<String>,
    rel: Vec<ReliabilitySource>,
    rel_y: Option<ReliabilitySource>,
) -> Result<(RegressionInput, Vec<Warning>)> {
    let mut names = predictors.clone();
    names.push(outcome.to_string());
    let mut warnings = Vec::new();
    let mut input = RegressionInput {
        predictors,
        outcome: outcome.to_string(),
        cov: nalgebra::DMatrix::zeros(0, 0),
        n: 0,
        rel,
        rel_y,
        rows: None,
        standardized_only: false,
        data_note: None,
        data_file: None,
        sheet_name: None,
    };
    match data {
        RegressionData::Raw { path, bytes, read } => {
            let (d, missing) = raw_regression_data(path, bytes.as_deref(), read, names)?;
            warnings.extend(d.notes.iter().cloned());
            warnings.extend(missing);
            input.data_file = Some(path.display().to_string());
            input.sheet_name = d.worksheet.clone();
            check_complete_rows(&input.predictors, &d)?;
            input.cov = d.moments.cov.clone();
            input.n = d.complete_rows;
            input.data_note = Some(format!(
                "{}: {} rows read; {} respondents with every variable used{}",
                path.display(),
                d.rows_read,
                d.complete_rows,
                if d.missing_cells > 0 {
                    format!(
                        " ({} left out for {})",
                        d.rows_read - d.complete_rows,
                        crate::format::count(d.missing_cells, "missing cell", "missing cells")
                    )
                } else {
                    String::new()
                }
            ));
            input.rows = d.rows;
        }
        RegressionData::Summary { path, bytes, n } => {
            let sm = match bytes {
                Some(b) => summary_from_bytes(&path.display().to_string(), b)?,
                None => read_summary(path)?,
            };
            let mut idx = Vec::with_capacity(names.len());
            for v in &names {
                let i = sm.names.iter().position(|x| x == v).ok_or_else(|| {
                    Error::setting(
                        Setting::Predictors,
                        format!(
                            "{}: no variable {v} (its variables are: {})",
                            path.display(),
                            sm.names.join(", ")
                        ),
                    )
                })?;
                idx.push(i);
            }
            input.data_file = Some(path.display().to_string());
            input.cov = sm.cov.select_rows(&idx).select_columns(&idx);
            input.n = *n;
            input.standardized_only = sm.standardized_only;
        }
    }
    check_regression_n(&input)?;
    Ok((input, warnings))
}

/// Read the regression's variables from raw data (listwise, rows kept for the bootstrap),
/// with a warning when rows were left out for missing values.
fn raw_regression_data(
    path: &std::path::Path,
    bytes: Option<&Vec<u8>>,
    read: &ItemReadOptions,
    names: Vec<String>,
) -> Result<(ItemData, Option<Warning>)> {
    let mut read = read.clone();
    read.items = Some(names);
    read.missing = Missing::Listwise;
    read.keep_rows = true;
    read.columns_setting = Setting::Predictors;
    let d = match bytes {
        Some(b) => crate::items::read_items_from_bytes(path, b, &read)?,
        None => read_items(path, &read)?,
    };
    let warning = (d.missing_cells > 0).then(|| Warning::RowsWithMissingValues {
        rows: d.rows_read - d.complete_rows,
        cells: d.missing_cells,
    });
    Ok((d, warning))
}

/// Raw data need at least three complete respondents more than the regression has
/// variables (said of the file, which gave the count).
fn check_complete_rows(predictors: &[String], d: &ItemData) -> Result<()> {
    let variables = predictors.len() + 1;
    if d.complete_rows < variables as u64 + 3 {
        return Err(Error::cannot(format!(
            "{}: only {} with every variable ({} read); a regression with {} needs at least {}",
            d.file,
            crate::format::count(d.complete_rows, "respondent", "respondents"),
            crate::format::count(d.rows_read, "row", "rows"),
            crate::format::count(predictors.len() as u64, "predictor", "predictors"),
            variables + 3
        )));
    }
    Ok(())
}

/// A regression needs at least three respondents more than it has variables.
fn check_regression_n(input: &RegressionInput) -> Result<()> {
    let variables = input.predictors.len() + 1;
    if input.n < variables as u64 + 3 {
        return Err(Error::setting(
            Setting::CorrectionN,
            msg![
                given(Setting::CorrectionN, input.n.to_string()),
                format!(
                    " is too small for {variables} variables: a regression with {} needs at \
                     least {} respondents",
                    crate::format::count(input.predictors.len() as u64, "predictor", "predictors"),
                    variables + 3
                )
            ],
        ));
    }
    Ok(())
}

fn regression_warnings(input: &RegressionInput, c: &RegressionCorrection) -> Vec<Warning> {
    let mut warnings = Vec::new();
    if let Ok(k) = &c.estimate.corrected
        && (k.standardized.iter().any(|s| s.abs() > 1.0) || c.inadmissible_share > 0.2)
    {
        warnings.push(Warning::UnstableCorrection);
    }
    if let Err(why) = &c.estimate.corrected {
        warnings.push(Warning::Inadmissible {
            what: "corrected regression".into(),
            why: why.clone(),
        });
    }
    if c.inadmissible_share > 0.0 {
        warnings.push(Warning::InadmissibleDraws {
            share: c.inadmissible_share,
        });
    }
    let outcome_rel = input.rel_y.as_ref().map(|r| (&input.outcome, r));
    for (name, r) in input.predictors.iter().zip(&input.rel).chain(outcome_rel) {
        if let Some(share) = r.lower_bound_share() {
            warnings.push(Warning::LowerBoundReliability {
                which: name.clone(),
                share,
            });
        }
    }
    warnings
}
