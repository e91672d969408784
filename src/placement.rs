//! Where a new study falls: the expected coefficient for a study like it, the ranges for
//! its true and its observed coefficient, its percentile, a verdict, and how much of a
//! shortfall its score spread accounts for.

use crate::benchmark::Prepared;
use crate::dist::{t_quantile, t_sf};
use crate::error::{Error, Result};
use crate::metareg::spread::{ScoreSpread, SpreadMetric, harmonize, score_spread};
use crate::metareg::{Design, ModeratorSpec, build_design};
use crate::pool::{FitOptions, Interval, MetaData, ModelFit, fit_model};
use crate::sheet::{CoefType, SdMetric};
use crate::transform::{BackInterval, StudyInput, TransformKind, Transformed, back_interval};
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
    /// Warnings.
    pub warnings: Vec<Warning>,
}

/// Place a new study against the prepared studies, conditional on moderator values when
/// moderators are given.
///
/// PI = μ̂(x₀) ± t(k − p − 1)·√(τ̂² + SE²); for an observed coefficient the new study's own
/// sampling variance is added under the root.
///
/// # References
/// Higgins, J. P. T., Thompson, S. G., & Spiegelhalter, D. J. (2009). *Journal of the
/// Royal Statistical Society, Series A*, 172(1), 137–159.
pub fn place(
    p: &Prepared,
    study: &NewStudy,
    moderators: &[ModeratorSpec],
    at: &BTreeMap<String, String>,
    spread_metric: Option<SpreadMetric>,
    options: &FitOptions,
) -> Result<Placement> {
    if p.transform == TransformKind::None {
        return Err(Error::InvalidOption(
            "relyard check places a reliability coefficient; with --transform none the sheet holds \
             effects of unknown kind"
                .into(),
        ));
    }
    let family = p.records.first().map(|r| r.coef_type.family());
    if let Some(f) = family
        && study.coef_type.family() != f
        && p.records.iter().all(|r| r.coef_type.family() == f)
    {
        return Err(Error::InvalidOption(format!(
            "--coef-type {} is a {} but the benchmark holds {}; compare like with like",
            study.coef_type.name(),
            study.coef_type.family().describe().trim_end_matches('s'),
            f.describe()
        )));
    }
    let tr = p.transform.get();
    let input = StudyInput {
        coef: study.coef,
        n: Some(study.n as f64),
        items: study.items.map(f64::from),
        var: None,
    };
    let unmet = tr.check(&input);
    if let Some(u) = unmet.first() {
        let opt = match u.field {
            crate::transform::InputField::Coef => "--coef",
            crate::transform::InputField::N => "--n",
            crate::transform::InputField::Items => "--items",
            crate::transform::InputField::Var => "--coef",
        };
        return Err(Error::InvalidOption(format!("{opt}: {}", u.reason)));
    }
    let new_effect = tr.effect(&input).0;

    let mut warnings = p.warnings.clone();
    let (fit, design, x0) = if moderators.is_empty() {
        if !at.is_empty() {
            return Err(Error::InvalidOption(
                "--at sets moderator values, but no --moderator was given".into(),
            ));
        }
        let data = MetaData::intercept_only(p.y.clone(), p.v.clone())?;
        (fit_model(&data, options)?, None, vec![1.0])
    } else {
        let design = build_design(p, moderators)?;
        let x0 = design.row_for(at, p.delimiter != b',')?;
        let (y, v) = design.effects(&p.y, &p.v);
        let data = MetaData::with_design(y, v, design.x.clone())?;
        if !design.excluded.is_empty() {
            warnings.push(Warning::RowsLeftOutOfModel {
                rows: design.excluded.iter().map(|e| e.row).collect(),
                why: "a moderator value is missing".into(),
            });
        }
        (fit_model(&data, options)?, Some(design), x0)
    };
    warnings.extend(fit.warnings.iter().cloned());
    let (k, np) = (fit.k, fit.p);
    if k < np + 2 {
        return Err(Error::CannotAnalyse(format!(
            "{k} studies leave no degrees of freedom for an expected range (k − p − 1 = {}); \
             code more studies",
            k as i64 - np as i64 - 1
        )));
    }
    if k < crate::pool::FEW_STUDIES + np - 1 {
        warnings.push(Warning::FewStudies { k });
    }
    // Moderator values outside the range the benchmark studies cover.
    if let Some(d) = &design {
        for m in &d.moderators {
            if let crate::metareg::Moderator::Numeric { name, column } = m {
                let col = d.x.column(*column);
                let (lo, hi) = (col.min(), col.max());
                let v = x0[*column];
                if v < lo || v > hi {
                    warnings.push(Warning::Extrapolation {
                        what: format!("{name} = {v}"),
                        lower: lo,
                        upper: hi,
                    });
                }
            }
        }
    }
    let (expected_t, var_t) = fit.predict(&x0);
    // The new study's sampling variance at the expected coefficient, so that the range
    // does not depend on the coefficient being judged (it would for raw and
    // Hakstian–Whalen, whose variances depend on the coefficient).
    let expected_coef = tr
        .back(Transformed(expected_t))
        .expect("a coefficient scale")
        .0;
    let new_variance = tr.variance(&StudyInput {
        coef: expected_coef.min(1.0 - 1e-12),
        ..input
    });
    let se_t = var_t.sqrt();
    let ci_t = Interval::around(expected_t, fit.critical_value() * se_t);
    let pi_df = (k - np - 1) as f64;
    let a = 1.0 - options.level;
    let tq = t_quantile(1.0 - a / 2.0, pi_df);
    let tau2 = fit.tau2.tau2;
    let sd_true = (tau2 + var_t).sqrt();
    let sd_obs = (tau2 + var_t + new_variance).sqrt();
    let pi_t = Interval::around(expected_t, tq * sd_true);
    let pi_observed_t = Interval::around(expected_t, tq * sd_obs);

    let back = |i: Interval| {
        back_interval(tr, Transformed(i.lower), Transformed(i.upper))
            .expect("coefficient transforms have a coefficient scale")
    };
    let expected = tr
        .back(Transformed(expected_t))
        .expect("a coefficient scale")
        .0;
    let (ci, pi, pi_observed) = (back(ci_t), back(pi_t), back(pi_observed_t));
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
    let z = (new_effect - expected_t) / sd_obs;
    let below_share = 1.0 - t_sf(z, pi_df);
    let percentile = 100.0
        * if tr.increasing() {
            below_share
        } else {
            1.0 - below_share
        };
    let verdict = if study.coef < pi_observed.lower {
        Verdict::Below
    } else if study.coef > pi_observed.upper {
        Verdict::Above
    } else {
        Verdict::Within
    };

    // A failing score-spread model leaves the placement standing, with a note.
    let spread = match study.sd {
        None => None,
        Some(sd) => {
            match spread_shortfall(
                p,
                study,
                sd,
                &SpreadConditions {
                    moderators,
                    at,
                    metric: spread_metric,
                    options,
                },
                expected,
            ) {
                Ok(s) => {
                    if s.sd_outside_benchmark {
                        let (lo, hi) = s
                            .model
                            .sds
                            .iter()
                            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                                (a.min(x), b.max(x))
                            });
                        warnings.push(Warning::Extrapolation {
                            what: format!(
                                "the SD {} ({} metric)",
                                crate::report::format::significant(s.sd, 3),
                                s.metric
                            ),
                            lower: lo,
                            upper: hi,
                        });
                    }
                    Some(s)
                }
                Err(e)
                    if e.is_bad_input()
                        && !matches!(e, Error::InvalidOption(ref m) if m.starts_with("--sd")) =>
                {
                    warnings.push(Warning::PartFailed {
                        what: "the score-spread comparison".into(),
                        why: e.to_string(),
                    });
                    None
                }
                Err(e) => return Err(e),
            }
        }
    };

    Ok(Placement {
        transform: p.transform,
        fit,
        design,
        at: at.clone(),
        expected_t,
        se_t,
        ci_t,
        pi_t,
        pi_observed_t,
        pi_df,
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
        warnings,
    })
}

/// What the score-spread comparison is conditional on.
struct SpreadConditions<'a> {
    moderators: &'a [ModeratorSpec],
    at: &'a BTreeMap<String, String>,
    metric: Option<SpreadMetric>,
    options: &'a FitOptions,
}

fn spread_shortfall(
    p: &Prepared,
    study: &NewStudy,
    sd: f64,
    cond: &SpreadConditions,
    expected: f64,
) -> Result<SpreadShortfall> {
    let (moderators, at, metric, options) = (cond.moderators, cond.at, cond.metric, cond.options);
    let model = score_spread(p, metric, moderators, options)?;
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
    let own = own.ok_or_else(|| {
        let need = match (study.sd_metric, model.metric) {
            (None, _) => "add --sd-metric (sum or mean)".to_string(),
            (Some(SdMetric::Sum), _) if study.items.is_none() => "add --items".to_string(),
            (_, SpreadMetric::Pomp) if study.scale_min.is_none() || study.scale_max.is_none() => {
                "add --scale-min and --scale-max (the benchmark's SDs are on the POMP metric)"
                    .into()
            }
            _ => h
                .problem
                .clone()
                .unwrap_or_else(|| "check --sd-metric".into()),
        };
        Error::InvalidOption(format!(
            "--sd {sd}: the SD cannot be put on the benchmark's {} metric: {need}",
            model.metric
        ))
    })?;
    let others: Vec<f64> = if moderators.is_empty() {
        Vec::new()
    } else {
        model.others.row_for(at, p.delimiter != b',')?[1..].to_vec()
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
    let (min_sd, max_sd) = model
        .sds
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    Ok(SpreadShortfall {
        metric: model.metric,
        sd: own,
        typical_sd: model.typical_sd,
        expected_at_own_sd: at_own,
        expected_at_typical_sd: at_typical,
        explained_shortfall: at_typical - at_own,
        explained_shortfall_ci: (lo, hi),
        observed_shortfall: expected - study.coef,
        sd_outside_benchmark: own < min_sd || own > max_sd,
        model: Box::new(model),
    })
}
