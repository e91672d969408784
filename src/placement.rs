//! Where a new study falls: the expected coefficient for a study like it, the ranges for
//! its true and its observed coefficient, its percentile, a verdict, and how much of a
//! shortfall its score spread accounts for.

use crate::benchmark::Prepared;
use crate::error::{Error, Result};
use crate::metareg::at::{FitAt, fit_at};
use crate::metareg::spread::{ScoreSpread, SpreadMetric, harmonize, score_spread};
use crate::metareg::{Centring, Design, ModeratorSpec};
use crate::pool::{FitOptions, Interval, ModelFit, Predictive};
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::sheet::{CoefType, SdMetric};
use crate::transform::{
    BackInterval, CoefficientTransform, StudyInput, TransformKind, Transformed, back_interval,
};
use crate::warning::Warning;
use serde::Serialize;
use std::collections::BTreeMap;

/// The new study.
#[derive(Debug, Clone, PartialEq)]
pub struct NewStudy {
    /// Its observed coefficient.
    pub coef: f64,
    /// Its kind.
    pub coef_type: CoefType,
    /// Its sample size.
    pub n: u64,
    /// Its number of items.
    pub items: Option<u32>,
    /// Its score SD.
    pub sd: Option<f64>,
    /// The SD's metric.
    pub sd_metric: Option<SdMetric>,
    /// Lowest possible item response.
    pub scale_min: Option<f64>,
    /// Highest possible item response.
    pub scale_max: Option<f64>,
}

/// Where the observed coefficient falls.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    /// Below the expected range for an observed coefficient.
    Below,
    /// Within it.
    Within,
    /// Above it.
    Above,
}

impl Verdict {
    /// Where a coefficient falls against the range for an observed coefficient.
    fn of(coef: f64, range: BackInterval) -> Verdict {
        if coef < range.lower {
            Verdict::Below
        } else if coef > range.upper {
            Verdict::Above
        } else {
            Verdict::Within
        }
    }

    /// The word for reports.
    pub fn word(self) -> &'static str {
        match self {
            Verdict::Below => "below",
            Verdict::Within => "within",
            Verdict::Above => "above",
        }
    }
}

/// How much of a shortfall the new study's score spread accounts for.
#[derive(Debug, Clone)]
pub struct SpreadShortfall {
    /// The SD metric.
    pub metric: SpreadMetric,
    /// The new study's SD on that metric.
    pub sd: f64,
    /// The benchmark's typical (median) SD on that metric.
    pub typical_sd: f64,
    /// Expected coefficient at the study's own SD.
    pub expected_at_own_sd: f64,
    /// Expected coefficient at the typical SD.
    pub expected_at_typical_sd: f64,
    /// expected_at_typical_sd − expected_at_own_sd: the shortfall the spread accounts for
    /// (negative when the study's scores spread more than typical).
    pub explained_shortfall: f64,
    /// The same at the ends of the slope's confidence interval (ordered).
    pub explained_shortfall_ci: (f64, f64),
    /// The placement's expected coefficient minus the observed one (positive: a shortfall).
    pub observed_shortfall: f64,
    /// The score-spread model's expectation at the typical SD minus the observed
    /// coefficient: the shortfall that spread may account for, on the same model's
    /// baseline as `explained_shortfall`.
    pub shortfall_from_typical_sd: f64,
    /// The expectation at the study's own SD minus the observed coefficient: what score
    /// spread leaves unexplained.
    pub unexplained_shortfall: f64,
    /// True when the study's SD lies outside the SDs of the benchmark studies.
    pub sd_outside_benchmark: bool,
    /// The score-spread model behind it.
    pub model: Box<ScoreSpread>,
}

/// A placement of a new study against the benchmark.
#[derive(Debug, Clone)]
pub struct Placement {
    /// The transform of the analysis scale.
    pub transform: TransformKind,
    /// The fitted benchmark model.
    pub fit: ModelFit,
    /// The design when moderators were given.
    pub design: Option<Design>,
    /// The moderator values the expectation is conditional on.
    pub at: BTreeMap<String, String>,
    /// Expected value (transformed scale) and its interval quantities.
    pub expected_t: f64,
    /// Its SE under the interval method.
    pub se_t: f64,
    /// CI of the expected value (transformed scale).
    pub ci_t: Interval,
    /// PI for the true value in a new setting (transformed scale).
    pub pi_t: Interval,
    /// PI for an observed value from a study of this size (transformed scale).
    pub pi_observed_t: Interval,
    /// Degrees of freedom of the PIs' t quantile, k − p − 1.
    pub pi_df: f64,
    /// The distribution of the coefficient a study like the new one observes (analysis
    /// scale): what the percentile and the placement figure are read from.
    pub observed_distribution: Predictive,
    /// The new study on the transformed scale.
    pub new_effect: f64,
    /// Its sampling variance there.
    pub new_variance: f64,
    /// Expected coefficient.
    pub expected: f64,
    /// Its CI on the coefficient scale.
    pub ci: BackInterval,
    /// PI for the true coefficient.
    pub pi: BackInterval,
    /// PI for an observed coefficient.
    pub pi_observed: BackInterval,
    /// Percentile of the observed coefficient in the predictive distribution of observed
    /// coefficients (higher coefficient, higher percentile).
    pub percentile: f64,
    /// Below, within or above the observed-coefficient range.
    pub verdict: Verdict,
    /// The share of a shortfall the score spread accounts for (when an SD was given).
    pub spread: Option<SpreadShortfall>,
    /// The new study.
    pub study: NewStudy,
    /// The multilevel fit, when the sheet's rows share samples or clusters.
    pub dependent: Option<Box<crate::metareg::DependentExplanation>>,
    /// The known cluster the ranges are for (`None`: a new sample in a new cluster).
    pub in_cluster: Option<String>,
    /// Warnings.
    pub warnings: Vec<Warning>,
}

/// What a placement is conditional on: the benchmark's moderators and the new study's
/// values of them.
#[derive(Debug, Clone, Copy)]
pub struct Conditions<'a> {
    /// The benchmark's moderators (none: the pooled benchmark).
    pub moderators: &'a [ModeratorSpec],
    /// The new study's moderator values, by name.
    pub at: &'a BTreeMap<String, String>,
    /// Where numeric moderators are measured from.
    pub centring: Centring,
    /// The SD metric of the score-spread comparison (chosen from the sheet when `None`).
    pub spread_metric: Option<SpreadMetric>,
    /// A known cluster of the sheet the new study belongs to (multilevel fits only).
    pub in_cluster: Option<&'a str>,
}

/// Place a new study against the prepared studies, conditional on moderator values when
/// moderators are given.
///
/// PI = μ̂(x₀) ± t(k − p − 1)·√(τ̂² + SE²); for an observed coefficient the new study's own
/// sampling variance is added under the root ([`Predictive`]).
///
/// # References
/// Higgins, J. P. T., Thompson, S. G., & Spiegelhalter, D. J. (2009). *Journal of the
/// Royal Statistical Society, Series A*, 172(1), 137–159.
pub fn place(
    p: &Prepared,
    study: &NewStudy,
    cond: &Conditions,
    options: &FitOptions,
) -> Result<Placement> {
    check_study(p, study)?;
    let tr = p.transform.get();
    let input = study_input(study);
    let new_effect = tr.effect(&input).0;

    let FitAt {
        fit,
        design,
        x0,
        dependent,
    } = fit_at(
        p,
        cond.moderators,
        cond.at,
        cond.centring,
        options,
        Setting::StudyModerators,
    )?;
    let mut warnings = model_warnings(p, &fit, design.as_ref(), &x0)?;
    if p.grouped() && dependent.is_none() {
        warnings.push(Warning::DependenceNotModelled {
            part: "the placement (--dependence aggregate or ignore)".into(),
        });
    }
    let (k, np) = (fit.k, fit.p);
    let (mut expected_t, var_t) = fit.predict(&x0);
    // The new study's sampling variance at the expected coefficient, so that the range
    // does not depend on the coefficient being judged (it would for raw and
    // Hakstian–Whalen, whose variances depend on the coefficient).
    let back1 = |t: f64| tr.back(Transformed(t)).map_or(f64::NAN, |c| c.0);
    let mut se_t = var_t.sqrt();
    let mut ci_t = match &dependent {
        // The pooled benchmark of a multilevel fit: the first coefficient's own interval
        // (its Satterthwaite df under robust inference).
        Some(d) if x0 == [1.0] => d.summary.coefficients[0].ci,
        // At moderator values, under robust inference: the contrast x₀'s own df.
        Some(d) if d.summary.inference == crate::pool::dependence::Inference::Robust => {
            let s = &d.summary;
            let df = crate::pool::multilevel::contrast_df(&s.data, &s.fit, &x0)?;
            Interval::around(
                expected_t,
                crate::dist::t_quantile(options.level.upper(), df) * se_t,
            )
        }
        _ => Interval::around(expected_t, fit.critical_value() * se_t),
    };
    // Under the common-effect model the range is that of the one true value (τ² = 0).
    let mut true_value = Predictive::new_setting(&fit, &x0).unwrap_or(Predictive {
        centre: expected_t,
        scale: se_t,
        df: (k - np - 1) as f64,
    });
    let in_cluster = match (cond.in_cluster, &dependent) {
        (Some(name), Some(d)) => {
            let used: Vec<usize> = match &design {
                Some(ds) => ds.used.clone(),
                None => (0..p.records.len()).collect(),
            };
            let (known, pev, spelled) = known_cluster(p, &used, d, name, &x0, true_value.df)?;
            // The expected value is the cluster's own, with its prediction error.
            expected_t = known.centre;
            se_t = pev.sqrt();
            ci_t = Interval::around(
                expected_t,
                crate::dist::t_quantile(options.level.upper(), known.df) * se_t,
            );
            true_value = known;
            Some(spelled)
        }
        (Some(name), None) => {
            return Err(Error::setting(
                Setting::InCluster,
                msg![
                    given(Setting::InCluster, name),
                    ": the benchmark's rows do not share clusters (the sheet has no sample or \
                     cluster column whose values repeat, or dependence is not modelled), so \
                     there is no cluster to place the study in"
                ],
            ));
        }
        (None, _) => None,
    };
    let expected = back1(expected_t);
    let new_variance = tr.variance(&StudyInput {
        coef: expected.min(1.0 - 1e-12),
        ..input
    });
    let observed = true_value.observed(new_variance);
    let (pi_t, pi_observed_t) = (
        true_value.interval(options.level),
        observed.interval(options.level),
    );
    let [ci, pi, pi_observed] = back_intervals(tr, [ci_t, pi_t, pi_observed_t], &mut warnings);
    let percentile = percentile(&observed, new_effect, tr.increasing());
    let verdict = Verdict::of(study.coef, pi_observed);
    let spread = match study.sd {
        None => None,
        Some(sd) => spread_part(p, study, sd, cond, options, expected, &mut warnings)?,
    };

    let at = design
        .as_ref()
        .map(|d| d.canonical_values(cond.at))
        .unwrap_or_else(|| cond.at.clone());
    Ok(Placement {
        transform: p.transform,
        fit,
        design,
        at,
        expected_t,
        se_t,
        ci_t,
        pi_t,
        pi_observed_t,
        pi_df: observed.df,
        observed_distribution: observed,
        new_effect,
        new_variance,
        expected,
        ci,
        pi,
        pi_observed,
        percentile,
        verdict,
        spread,
        study: study.clone(),
        dependent,
        in_cluster,
        warnings,
    })
}

/// The true value of a new sample in the known cluster `name`: the cluster's predicted
/// value with the prediction-error variance and τ²_within, on the benchmark's df.
fn known_cluster(
    p: &Prepared,
    used: &[usize],
    d: &crate::metareg::DependentExplanation,
    name: &str,
    x0: &[f64],
    df: f64,
) -> Result<(Predictive, f64, String)> {
    let wanted = name.trim().to_lowercase();
    let s = &d.summary;
    // The cluster index of the first row whose cluster (or, without one, sample) is named.
    let grouping = p
        .grouping_of(used)
        .ok_or_else(|| Error::cannot("the sheet has no clusters"))?;
    let records: Vec<&crate::sheet::StudyRecord> = used.iter().map(|&i| &p.records[i]).collect();
    // A cluster of that name first; else a sample of that name that is its own cluster.
    let named = |s: Option<&str>| s.is_some_and(|c| c.trim().to_lowercase() == wanted);
    let hit = records
        .iter()
        .position(|r| named(r.cluster.as_deref()))
        .or_else(|| {
            records
                .iter()
                .position(|r| r.cluster.is_none() && named(r.sample.as_deref()))
        });
    let Some(row) = hit else {
        let mut names: Vec<String> = records
            .iter()
            .filter_map(|r| r.cluster.clone().or_else(|| r.sample.clone()))
            .collect();
        names.sort();
        names.dedup();
        names.truncate(12);
        return Err(Error::setting(
            Setting::InCluster,
            msg![
                given(Setting::InCluster, name),
                format!(
                    ": no cluster of the sheet has this name (clusters include: {})",
                    names.join(", ")
                )
            ],
        ));
    };
    let (centre, pev) =
        crate::pool::multilevel::in_cluster(&s.data, &s.fit, grouping.cluster[row], x0)?;
    let spelled = records[row]
        .cluster
        .clone()
        .or_else(|| records[row].sample.clone())
        .unwrap_or_default();
    Ok((
        Predictive {
            centre,
            scale: (pev + s.fit.tau2_within).sqrt(),
            df,
        },
        pev,
        spelled,
    ))
}

/// The percentile of the new study's value in the distribution of observed values
/// (higher coefficient, higher percentile, whichever way the transform runs).
fn percentile(observed: &Predictive, new_effect: f64, increasing: bool) -> f64 {
    let below_share = observed.cdf(new_effect);
    100.0
        * if increasing {
            below_share
        } else {
            1.0 - below_share
        }
}

/// The new study as the transform takes it.
fn study_input(study: &NewStudy) -> StudyInput {
    StudyInput {
        coef: study.coef,
        n: Some(study.n as f64),
        items: study.items.map(f64::from),
        var: None,
    }
}

/// The warnings of the sheet, the design and the fit, and of a model with few studies
/// or a new study outside the moderators' range; fails when the model leaves no degrees
/// of freedom for an expected range.
fn model_warnings(
    p: &Prepared,
    fit: &ModelFit,
    design: Option<&Design>,
    x0: &[f64],
) -> Result<Vec<Warning>> {
    let mut warnings = p.warnings.clone();
    if let Some(d) = design {
        warnings.extend(d.warnings.iter().cloned());
        if !d.excluded.is_empty() {
            warnings.push(Warning::RowsLeftOutOfModel {
                rows: d.excluded.iter().map(|e| e.row).collect(),
                why: "a moderator value is missing".into(),
            });
        }
    }
    warnings.extend(fit.warnings.iter().cloned());
    let (k, np) = (fit.units, fit.p);
    if crate::pool::prediction_df(k, np).is_none() {
        return Err(Error::cannot(format!(
            "{k} studies leave no degrees of freedom for an expected range (k − p − 1 = {}); \
             code more studies",
            k as i64 - np as i64 - 1
        )));
    }
    if k < crate::pool::FEW_STUDIES + np - 1 {
        warnings.push(Warning::FewStudies { k });
    }
    if let Some(d) = design {
        extrapolation_warnings(d, x0, &mut warnings);
    }
    Ok(warnings)
}

/// The confidence interval, the prediction interval and the range for an observed
/// coefficient on the coefficient scale (NaN where they cannot be turned back), with
/// warnings for capped ones and for a range reaching below 0.
fn back_intervals(
    tr: &dyn CoefficientTransform,
    intervals: [Interval; 3],
    warnings: &mut Vec<Warning>,
) -> [BackInterval; 3] {
    let back = |i: Interval| {
        back_interval(tr, Transformed(i.lower), Transformed(i.upper)).unwrap_or(BackInterval {
            lower: f64::NAN,
            upper: f64::NAN,
            capped: false,
        })
    };
    let [ci, pi, pi_observed] = intervals.map(back);
    for (name, i) in [
        ("confidence interval", ci),
        ("prediction interval", pi),
        ("range for an observed coefficient", pi_observed),
    ] {
        if i.capped {
            warnings.push(Warning::IntervalCapped {
                interval: name.into(),
            });
        }
    }
    if pi_observed.lower < 0.0 {
        warnings.push(Warning::RangeBelowZero {
            lower: pi_observed.lower,
        });
    }
    [ci, pi, pi_observed]
}

/// Refuse a new study the benchmark cannot judge.
fn check_study(p: &Prepared, study: &NewStudy) -> Result<()> {
    if p.transform == TransformKind::None {
        return Err(Error::setting(
            Setting::Transform,
            msg![
                "placing a new study needs reliability coefficients; with ",
                given(Setting::Transform, "none"),
                " the sheet holds effects of unknown kind"
            ],
        ));
    }
    let family = p.records.first().map(|r| r.coef_type.family());
    if let Some(f) = family
        && study.coef_type.family() != f
        && p.records.iter().all(|r| r.coef_type.family() == f)
    {
        return Err(Error::setting(
            Setting::StudyCoefType,
            msg![
                given(Setting::StudyCoefType, study.coef_type.name()),
                format!(
                    " is a {} but the benchmark holds {}; compare like with like",
                    study.coef_type.family().describe().trim_end_matches('s'),
                    f.describe()
                )
            ],
        ));
    }
    if let Some(u) = p.transform.get().check(&study_input(study)).first() {
        let setting = match u.field {
            crate::transform::InputField::Coef | crate::transform::InputField::Var => {
                Setting::StudyCoef
            }
            crate::transform::InputField::N => Setting::StudyN,
            crate::transform::InputField::Items => Setting::StudyItems,
        };
        return Err(Error::setting(
            setting,
            msg![setting, format!(": {}", u.reason)],
        ));
    }
    Ok(())
}

/// Warnings for moderator values outside the range the benchmark studies cover.
fn extrapolation_warnings(d: &Design, x0: &[f64], warnings: &mut Vec<Warning>) {
    for m in &d.moderators {
        if let crate::metareg::Moderator::Numeric {
            name,
            column,
            centre,
        } = m
        {
            let col = d.x.column(*column);
            let (lo, hi) = (col.min() + centre, col.max() + centre);
            let v = x0[*column] + centre;
            if v < lo || v > hi {
                warnings.push(Warning::Extrapolation {
                    what: format!("{name} = {}", crate::format::trimmed(v, 6)),
                    lower: lo,
                    upper: hi,
                });
            }
        }
    }
}

/// The score-spread comparison; a model that cannot be fitted leaves the placement
/// standing with a note, unless the fault lies in the new study's own SD settings.
fn spread_part(
    p: &Prepared,
    study: &NewStudy,
    sd: f64,
    cond: &Conditions,
    options: &FitOptions,
    expected: f64,
    warnings: &mut Vec<Warning>,
) -> Result<Option<SpreadShortfall>> {
    match spread_shortfall(p, study, sd, cond, options, expected) {
        Ok(s) => {
            if s.sd_outside_benchmark {
                let (lo, hi) = min_max(&s.model.sds);
                warnings.push(Warning::Extrapolation {
                    what: format!(
                        "the SD {} ({} metric)",
                        crate::format::significant(s.sd, 3),
                        s.metric
                    ),
                    lower: lo,
                    upper: hi,
                });
            }
            Ok(Some(s))
        }
        Err(e) if e.is_bad_input() && !e.at_fault().is_some_and(is_study_sd_setting) => {
            warnings.push(Warning::PartFailed {
                what: "the score-spread comparison".into(),
                why: e.into_message(),
            });
            Ok(None)
        }
        Err(e) => Err(e),
    }
}

/// The settings that describe the new study's SD: an error about one of them is the
/// user's to fix, not a failing part.
fn is_study_sd_setting(s: Setting) -> bool {
    matches!(
        s,
        Setting::StudySd
            | Setting::StudySdMetric
            | Setting::StudyScaleMin
            | Setting::StudyScaleMax
            | Setting::StudyItems
    )
}

fn spread_shortfall(
    p: &Prepared,
    study: &NewStudy,
    sd: f64,
    cond: &Conditions,
    options: &FitOptions,
    expected: f64,
) -> Result<SpreadShortfall> {
    let model = score_spread(
        p,
        cond.spread_metric,
        cond.moderators,
        cond.centring,
        options,
    )?;
    let own = own_sd(&model, study, sd)?;
    let others: Vec<f64> = if cond.moderators.is_empty() {
        Vec::new()
    } else {
        model
            .others
            .row_for(cond.at, p.source.format, Setting::StudyModerators)?[1..]
            .to_vec()
    };
    let back = |t: f64| -(t.exp_m1());
    let (t_own, _) = model.predict(own, study.items, &others)?;
    let (t_typ, _) = model.predict(model.typical_sd, study.items, &others)?;
    let (at_own, at_typical) = (back(t_own), back(t_typ));
    // The difference on the Bonett scale is slope × (ln own − ln typical); its interval
    // follows from the slope's.
    let dl = own.ln() - model.typical_sd.ln();
    let ends =
        [model.slope.ci.lower, model.slope.ci.upper].map(|b| at_typical - back(t_typ + b * dl));
    let lo = ends[0].min(ends[1]);
    let hi = ends[0].max(ends[1]);
    let (min_sd, max_sd) = min_max(&model.sds);
    Ok(SpreadShortfall {
        metric: model.metric,
        sd: own,
        typical_sd: model.typical_sd,
        expected_at_own_sd: at_own,
        expected_at_typical_sd: at_typical,
        explained_shortfall: at_typical - at_own,
        explained_shortfall_ci: (lo, hi),
        observed_shortfall: expected - study.coef,
        shortfall_from_typical_sd: at_typical - study.coef,
        unexplained_shortfall: at_own - study.coef,
        sd_outside_benchmark: own < min_sd || own > max_sd,
        model: Box::new(model),
    })
}

/// The smallest and largest of the values.
fn min_max(xs: &[f64]) -> (f64, f64) {
    xs.iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        })
}

/// The new study's SD on the score-spread model's metric, or the setting to add or check.
fn own_sd(model: &ScoreSpread, study: &NewStudy, sd: f64) -> Result<f64> {
    let h = harmonize(
        Some(sd),
        study.sd_metric,
        study.items,
        study.scale_min,
        study.scale_max,
    );
    let own = match model.metric {
        SpreadMetric::PerItem => h.per_item,
        SpreadMetric::Pomp => h.pomp,
    };
    own.ok_or_else(|| {
        let (setting, need) = match (study.sd_metric, model.metric) {
            (None, _) => (
                Setting::StudySdMetric,
                msg!["add ", Setting::StudySdMetric, " (sum or mean)"],
            ),
            (Some(SdMetric::Sum), _) if study.items.is_none() => {
                (Setting::StudyItems, msg!["add ", Setting::StudyItems])
            }
            (_, SpreadMetric::Pomp) if study.scale_min.is_none() || study.scale_max.is_none() => (
                Setting::StudyScaleMin,
                msg![
                    "add ",
                    Setting::StudyScaleMin,
                    " and ",
                    Setting::StudyScaleMax,
                    " (the benchmark's SDs are on the POMP metric)"
                ],
            ),
            _ => (
                Setting::StudySd,
                match &h.problem {
                    Some(p) => msg![p.clone()],
                    None => msg!["check ", Setting::StudySdMetric],
                },
            ),
        };
        Error::setting(
            setting,
            msg![
                given(Setting::StudySd, format!("{sd}")),
                format!(
                    ": the SD cannot be put on the benchmark's {} metric: ",
                    model.metric
                )
            ]
            .then(need),
        )
    })
}
