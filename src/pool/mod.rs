//! Common- and random-effects pooling: τ², the pooled value with its confidence
//! interval, heterogeneity, and the prediction interval for a new setting.

mod data;
pub mod dependence;
mod heterogeneity;
mod model;
pub mod multilevel;
pub mod prediction;
mod qprofile;
pub mod tau2;

pub use data::MetaData;
pub use heterogeneity::Heterogeneity;
pub(crate) use model::fit_coefficients;
pub(crate) use model::fit_light;
pub use model::{Coefficient, FitOptions, ModelFit, fit_model};
pub use prediction::{Predictive, prediction_df};
pub use qprofile::{Tau2Interval, q_profile};
pub use tau2::{Tau2Estimator, Tau2Fit, Termination};

use crate::error::{Error, Result};
use crate::level::Level;
use crate::warning::Warning;
use serde::Serialize;
use std::fmt;
use std::str::FromStr;

/// Fewer studies than this draw a warning that τ² is imprecise (common practice, no
/// source: a handful of studies says little about between-study variance).
pub const FEW_STUDIES: usize = 5;

/// Below this p value of Cochran's Q a common-effect run draws a warning (the
/// conventional 0.05; common practice, no source).
pub const COMMON_EFFECT_REJECTED: f64 = 0.05;

/// Common-effect or random-effects model.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Model {
    /// Every study estimates one true value (τ² = 0 by assumption).
    Common,
    /// True values vary between studies; τ² estimated by the given method.
    Random(Tau2Estimator),
}

impl Model {
    /// Command-line name (`common` or the estimator's name).
    pub fn name(self) -> &'static str {
        match self {
            Model::Common => "common",
            Model::Random(e) => e.name(),
        }
    }
}

impl FromStr for Model {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        if s.trim().eq_ignore_ascii_case("common") {
            return Ok(Model::Common);
        }
        s.parse::<Tau2Estimator>().map(Model::Random).map_err(|_| {
            format!("unknown τ² method \"{s}\" (choose one of: reml, ml, dl, pm, sj, he, common)")
        })
    }
}

/// How the confidence interval of the pooled value is formed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CiMethod {
    /// Normal quantiles with the model-based standard error.
    Wald,
    /// t quantiles with k − p df and the standard error scaled by the weighted residual
    /// mean square q.
    KnappHartung,
    /// As Knapp–Hartung, with the scale factor not allowed below 1 (max(1, q)), so that
    /// the interval is never narrower than the Wald interval with t quantiles.
    KnappHartungFloor,
}

impl CiMethod {
    /// Command-line name.
    pub fn name(self) -> &'static str {
        match self {
            CiMethod::Wald => "wald",
            CiMethod::KnappHartung => "knapp-hartung",
            CiMethod::KnappHartungFloor => "knapp-hartung-floor",
        }
    }
}

impl fmt::Display for CiMethod {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for CiMethod {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "wald" => Ok(CiMethod::Wald),
            "knapp-hartung" | "knapp_hartung" => Ok(CiMethod::KnappHartung),
            "knapp-hartung-floor" | "knapp_hartung_floor" => Ok(CiMethod::KnappHartungFloor),
            _ => Err(format!(
                "unknown interval method \"{s}\" (choose knapp-hartung, knapp-hartung-floor or \
                 wald)"
            )),
        }
    }
}

/// Options of a pooling run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoolOptions {
    /// Common-effect or random-effects (with its τ² estimator).
    pub model: Model,
    /// Confidence interval method.
    pub ci: CiMethod,
    /// Confidence level.
    pub level: Level,
}

impl Default for PoolOptions {
    fn default() -> Self {
        PoolOptions {
            model: Model::Random(Tau2Estimator::Reml),
            ci: CiMethod::KnappHartung,
            level: Level::NINETY_FIVE,
        }
    }
}

/// A two-sided interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Interval {
    /// Lower end.
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
}

impl Interval {
    /// The interval centre ± half-width.
    pub fn around(centre: f64, half_width: f64) -> Self {
        Interval {
            lower: centre - half_width,
            upper: centre + half_width,
        }
    }
}

/// A test of the pooled value against zero on the analysis scale.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ZeroTest {
    /// z or t statistic.
    pub statistic: f64,
    /// Degrees of freedom (t only).
    pub df: Option<f64>,
    /// Two-sided p value.
    pub p: f64,
}

/// The prediction interval, or why there is none.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Prediction {
    /// μ̂ ± t(df) · sqrt(τ² + SE²).
    Available {
        /// The interval.
        interval: Interval,
        /// Degrees of freedom of the t quantile.
        df: f64,
    },
    /// k = 2: the t quantile would have no degrees of freedom.
    TooFewStudies,
    /// The common-effect model assumes one true value: it states no range for a new
    /// setting beyond the confidence interval.
    CommonEffect,
}

impl Prediction {
    /// The interval when there is one.
    pub fn interval(&self) -> Option<Interval> {
        match self {
            Prediction::Available { interval, .. } => Some(*interval),
            Prediction::TooFewStudies | Prediction::CommonEffect => None,
        }
    }
}

/// Everything a pooling run estimates, on the analysis scale.
#[derive(Debug, Clone, PartialEq)]
pub struct PoolResult {
    /// Number of studies.
    pub k: usize,
    /// The options used.
    pub options: PoolOptions,
    /// Pooled value.
    pub estimate: f64,
    /// Its standard error under the chosen CI method.
    pub se: f64,
    /// Model-based (Wald) standard error, 1/sqrt(Σw).
    pub se_wald: f64,
    /// Knapp–Hartung scale factor q = Σw(y − μ̂)²/(k − 1), when that method is used.
    pub kh_scale: Option<f64>,
    /// Confidence interval of the pooled value.
    pub ci: Interval,
    /// Test of the pooled value against 0.
    pub test: ZeroTest,
    /// τ² and how it was reached (zero by assumption under the common-effect model).
    pub tau2: Tau2Fit,
    /// Q-profile confidence interval of τ² (random-effects model only).
    pub tau2_ci: Option<Tau2Interval>,
    /// Q test and typical within-study variance.
    pub heterogeneity: Heterogeneity,
    /// I² in percent.
    pub i2: f64,
    /// H².
    pub h2: f64,
    /// I² at the ends of the τ² interval.
    pub i2_ci: Option<Interval>,
    /// Prediction interval for the true value in a new setting.
    pub prediction: Prediction,
    /// When τ² is estimated at 0: the prediction interval at the upper end of τ²'s CI.
    pub prediction_at_tau2_upper: Option<Interval>,
    /// Relative weight of each study, in percent, in input order.
    pub weights_percent: Vec<f64>,
    /// Warnings about the result.
    pub warnings: Vec<Warning>,
    /// How rows that share a sample or cluster were pooled (`None` when the sheet does not
    /// group its rows).
    pub dependence: Option<dependence::DependenceResult>,
    /// The inference in force for a multilevel fit.
    pub inference: Option<dependence::Inference>,
    /// Cluster-robust inference for the pooled value of a multilevel fit.
    pub robust: Option<dependence::RobustTest>,
}

/// Pool effects `y` with sampling variances `v`.
///
/// k = 1 is refused; k = 2 is pooled without a prediction interval.
///
/// # References
/// DerSimonian, R., & Laird, N. (1986). *Controlled Clinical Trials*, 7, 177–188.
/// Knapp, G., & Hartung, J. (2003). Improved tests for a random effects meta-regression
/// with a single covariate. *Statistics in Medicine*, 22(17), 2693–2710.
/// Higgins, J. P. T., Thompson, S. G., & Spiegelhalter, D. J. (2009). A re-evaluation of
/// random-effects meta-analysis. *Journal of the Royal Statistical Society, Series A*,
/// 172(1), 137–159.
pub fn pool(y: &[f64], v: &[f64], options: &PoolOptions) -> Result<PoolResult> {
    let k = y.len();
    if k == 0 {
        return Err(Error::cannot("there are no studies to pool"));
    }
    if k == 1 {
        return Err(Error::cannot(
            "only one study is available: a benchmark needs at least two (and at least three \
             for an expected range), so there is nothing to pool",
        ));
    }
    let data = MetaData::intercept_only(y.to_vec(), v.to_vec())?;
    let fit = fit_model(
        &data,
        &FitOptions {
            model: options.model,
            ci: options.ci,
            level: options.level,
            tau2_interval: true,
            dependence: Default::default(),
        },
    )?;
    let mut warnings = fit_warnings(&fit, options);
    let het = fit.heterogeneity;
    let c = fit.coefficients[0];
    let test = ZeroTest {
        statistic: c.statistic,
        df: fit.df,
        p: c.p,
    };
    let i2_ci = fit.tau2_ci.map(|t| Interval {
        lower: het.i2(t.lower),
        upper: het.i2(t.upper),
    });
    let (prediction, prediction_at_tau2_upper) = predictions(&fit, options, k, &mut warnings);
    if k < FEW_STUDIES {
        warnings.push(Warning::FewStudies { k });
    }
    let total_w: f64 = fit.weights.iter().sum();
    let weights_percent = fit.weights.iter().map(|w| 100.0 * w / total_w).collect();
    Ok(PoolResult {
        k,
        options: *options,
        estimate: c.estimate,
        se: c.se,
        se_wald: fit.cov_wald[(0, 0)].sqrt(),
        kh_scale: fit.kh_scale,
        ci: c.ci,
        test,
        tau2: fit.tau2,
        tau2_ci: fit.tau2_ci,
        heterogeneity: het,
        i2: fit.i2,
        h2: fit.h2,
        i2_ci,
        prediction,
        prediction_at_tau2_upper,
        weights_percent,
        warnings,
        dependence: None,
        inference: None,
        robust: None,
    })
}

/// The fit's warnings, with those of a τ² outside its own interval and of an assumed
/// common effect (and the heterogeneity test that contradicts it).
fn fit_warnings(fit: &ModelFit, options: &PoolOptions) -> Vec<Warning> {
    let mut warnings = fit.warnings.clone();
    let het = fit.heterogeneity;
    if let Some(ci) = fit.tau2_ci
        && (fit.tau2.tau2 < ci.lower || fit.tau2.tau2 > ci.upper)
    {
        warnings.push(Warning::Tau2OutsideInterval {
            tau2: fit.tau2.tau2,
            lower: ci.lower,
            upper: ci.upper,
        });
    }
    if options.model == Model::Common {
        warnings.push(Warning::CommonEffectAssumed);
        if het.p < COMMON_EFFECT_REJECTED {
            warnings.push(Warning::CommonEffectContradicted {
                q: het.q,
                df: het.df,
                p: het.p,
            });
        }
    }
    warnings
}

/// The prediction interval for the true value in a new setting (of `k` studies) and,
/// when τ² is estimated at 0, the one at the upper end of τ²'s interval.
fn predictions(
    fit: &ModelFit,
    options: &PoolOptions,
    k: usize,
    warnings: &mut Vec<Warning>,
) -> (Prediction, Option<Interval>) {
    let prediction = if options.model == Model::Common {
        Prediction::CommonEffect
    } else {
        match Predictive::new_setting(fit, &[1.0]) {
            Some(p) => Prediction::Available {
                interval: p.interval(options.level),
                df: p.df,
            },
            None => {
                warnings.push(Warning::NoPredictionInterval { k });
                Prediction::TooFewStudies
            }
        }
    };
    // With τ² at zero the PI shrinks to about the CI; show what the upper end of τ²'s
    // interval would imply.
    let at_tau2_upper = match (&prediction, fit.tau2_ci) {
        (Prediction::Available { .. }, Some(ci)) if fit.tau2.at_zero && ci.upper > 0.0 => {
            Predictive::with_tau2(fit, &[1.0], ci.upper).map(|p| p.interval(options.level))
        }
        _ => None,
    };
    (prediction, at_tau2_upper)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_study_is_refused_and_two_have_no_prediction_interval() {
        let opts = PoolOptions::default();
        let e = pool(&[0.1], &[0.01], &opts).unwrap_err();
        assert!(e.is_bad_input());
        let r = pool(&[0.1, 0.3], &[0.01, 0.02], &opts).unwrap();
        assert_eq!(r.prediction, Prediction::TooFewStudies);
        assert!(
            r.warnings
                .iter()
                .any(|w| matches!(w, Warning::NoPredictionInterval { k: 2 }))
        );
    }

    #[test]
    fn ci_lies_inside_prediction_interval() {
        let y = [0.1, 0.5, 0.2, 0.8, 0.4];
        let v = [0.01, 0.02, 0.015, 0.03, 0.01];
        let r = pool(&y, &v, &PoolOptions::default()).unwrap();
        let pi = r.prediction.interval().unwrap();
        assert!(pi.lower <= r.ci.lower && r.ci.upper <= pi.upper);
        assert!(r.i2 >= 0.0 && r.i2 <= 100.0);
    }
}
