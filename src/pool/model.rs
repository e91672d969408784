//! The general fit behind pooling and meta-regression: τ² by the chosen estimator,
//! coefficients with standard errors under the chosen interval method, residual
//! heterogeneity, and the Q-profile interval for τ².

use super::data::MetaData;
use super::heterogeneity::Heterogeneity;
use super::qprofile::{Tau2Interval, q_profile};
use super::tau2::{TAU2_MAX_ITERATIONS, Tau2Fit, Termination};
use super::{CiMethod, Interval, Model};
use crate::dist::{normal_quantile, normal_two_sided_p, t_quantile, t_two_sided_p};
use crate::error::{Error, Result};
use crate::level::Level;
use crate::warning::Warning;
use nalgebra::{DMatrix, DVector};

/// A Knapp–Hartung scale factor below this draws a warning (its intervals are then
/// noticeably narrower than Wald's; common practice, no source).
pub const KH_WARN_BELOW: f64 = 0.95;

/// Options of a model fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitOptions {
    /// Common-effect or random-effects with an estimator.
    pub model: Model,
    /// Interval method.
    pub ci: CiMethod,
    /// Confidence level.
    pub level: Level,
    /// Compute the Q-profile interval for τ² (skipped inside permutation loops).
    pub tau2_interval: bool,
    /// How the rows of a coding sheet that share samples or clusters are fitted (read by
    /// the fits of prepared studies; a fit of bare effects has no grouping).
    pub dependence: super::dependence::DependenceOptions,
}

/// One coefficient of a fitted model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coefficient {
    /// Estimate.
    pub estimate: f64,
    /// Standard error under the interval method.
    pub se: f64,
    /// z or t statistic for the coefficient = 0.
    pub statistic: f64,
    /// Two-sided p value.
    pub p: f64,
    /// Confidence interval.
    pub ci: Interval,
}

/// A fitted (mixed-effects) model.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelFit {
    /// Studies.
    pub k: usize,
    /// The independent units the prediction interval's df counts: the studies, or the
    /// clusters of a multilevel fit.
    pub units: usize,
    /// Coefficients, intercept included.
    pub p: usize,
    /// The options used.
    pub options: FitOptions,
    /// τ² and how it was reached.
    pub tau2: Tau2Fit,
    /// Q-profile interval for τ² (random-effects model, when asked for).
    pub tau2_ci: Option<Tau2Interval>,
    /// The coefficients.
    pub beta: DVector<f64>,
    /// Their covariance under the interval method (Knapp–Hartung scaled when chosen).
    pub cov: DMatrix<f64>,
    /// Their model-based covariance, (XᵀWX)⁻¹.
    pub cov_wald: DMatrix<f64>,
    /// Each coefficient with SE, test and CI.
    pub coefficients: Vec<Coefficient>,
    /// Degrees of freedom of t quantiles (Knapp–Hartung: k − p); `None` for z.
    pub df: Option<f64>,
    /// Knapp–Hartung scale factor Σw e²/(k − p).
    pub kh_scale: Option<f64>,
    /// Residual heterogeneity (Q_E with k − p df) and s².
    pub heterogeneity: Heterogeneity,
    /// (Residual) I² in percent.
    pub i2: f64,
    /// (Residual) H².
    pub h2: f64,
    /// Weights 1/(vᵢ + τ²).
    pub weights: Vec<f64>,
    /// Residuals yᵢ − xᵢβ̂.
    pub residuals: Vec<f64>,
    /// Warnings about the fit.
    pub warnings: Vec<Warning>,
}

impl ModelFit {
    /// The quantile multiplying standard errors for a two-sided interval.
    pub fn critical_value(&self) -> f64 {
        critical_value(self.options.level, self.df)
    }

    /// Two-sided p value of a statistic under the fit's reference distribution.
    pub fn two_sided_p(&self, statistic: f64) -> f64 {
        match self.df {
            Some(df) => t_two_sided_p(statistic, df),
            None => normal_two_sided_p(statistic),
        }
    }

    /// The fitted value at a row of the design and its variance (under the interval method).
    pub fn predict(&self, x0: &[f64]) -> (f64, f64) {
        let x = DVector::from_column_slice(x0);
        let value = x.dot(&self.beta);
        let var = (x.transpose() * &self.cov * &x)[(0, 0)];
        (value, var.max(0.0))
    }
}

/// τ², the weighted fit at τ² and the coefficients' covariance under the interval method:
/// what every fit needs, shared by [`fit_model`] and the resampling loops.
pub(crate) struct CoreFit {
    pub tau2: Tau2Fit,
    pub fit: super::data::WeightedFit,
    pub cov: DMatrix<f64>,
    pub df: Option<f64>,
    pub kh_scale: Option<f64>,
    pub warnings: Vec<Warning>,
}

pub(crate) fn core_fit(d: &MetaData, options: &FitOptions) -> Result<CoreFit> {
    core_fit_from(d, options, None)
}

/// [`core_fit`], with τ² estimated from `start` when given (see
/// [`super::Tau2Estimator::estimate_from`]).
pub(crate) fn core_fit_from(
    d: &MetaData,
    options: &FitOptions,
    start: Option<f64>,
) -> Result<CoreFit> {
    let mut warnings = Vec::new();
    let tau2 = match options.model {
        Model::Common => Tau2Fit {
            tau2: 0.0,
            iterations: 0,
            termination: Termination::ClosedForm,
            at_zero: true,
        },
        Model::Random(est) => {
            let fit = match start {
                Some(s) => est.estimate_from(d, s)?,
                None => est.estimate(d)?,
            };
            if !fit.converged() {
                warnings.push(Warning::NotConverged {
                    what: format!("the {} estimate of τ²", est.name()),
                    iterations: fit.iterations,
                });
            }
            if fit.at_zero {
                warnings.push(Warning::Tau2AtZero {
                    estimator: est.label().to_string(),
                });
            }
            fit
        }
    };
    let fit = d.fit_at(tau2.tau2)?;
    let df_resid = (d.k() - d.p()) as f64;
    let (cov, df, kh_scale) = match options.ci {
        CiMethod::Wald => (fit.xtwx_inv.clone(), None, None),
        CiMethod::KnappHartung | CiMethod::KnappHartungFloor => {
            let mut scale = fit.q / df_resid;
            if options.ci == CiMethod::KnappHartungFloor {
                scale = scale.max(1.0);
            } else if scale < KH_WARN_BELOW {
                warnings.push(Warning::KnappHartungBelowOne { scale });
            }
            (&fit.xtwx_inv * scale, Some(df_resid), Some(scale))
        }
    };
    Ok(CoreFit {
        tau2,
        fit,
        cov,
        df,
        kh_scale,
        warnings,
    })
}

/// The coefficients and their covariance under the interval method, without the rest of
/// a [`ModelFit`] (heterogeneity, p values, intervals): for permutation loops, where
/// only the test statistics are compared.
pub(crate) fn fit_coefficients(
    d: &MetaData,
    options: &FitOptions,
) -> Result<(DVector<f64>, DMatrix<f64>)> {
    if d.k() <= d.p() {
        return Err(Error::cannot("too few studies for the model"));
    }
    let core = core_fit(d, options)?;
    Ok((core.fit.beta, core.cov))
}

/// The quantile multiplying standard errors for a two-sided interval at `level`: t with
/// `df` degrees of freedom (Knapp–Hartung), else normal.
fn critical_value(level: Level, df: Option<f64>) -> f64 {
    match df {
        Some(df) => t_quantile(level.upper(), df),
        None => normal_quantile(level.upper()),
    }
}

/// I² and H² of a model: from Q for the common-effect model, from τ² otherwise.
fn shares(model: Model, heterogeneity: &Heterogeneity, tau2: f64) -> (f64, f64) {
    match model {
        Model::Common => (heterogeneity.i2_from_q(), heterogeneity.h2_from_q()),
        Model::Random(_) => (heterogeneity.i2(tau2), heterogeneity.h2(tau2)),
    }
}

/// What a leave-one-out refit needs of a model: the coefficients, the interval of the
/// first, τ² and I² — none of the tables, tests or τ² interval of a [`ModelFit`].
#[derive(Debug, Clone)]
pub(crate) struct LightFit {
    pub beta: DVector<f64>,
    pub cov_wald: DMatrix<f64>,
    pub first_ci: Interval,
    pub tau2: f64,
    pub i2: f64,
}

/// Fit the model as [`fit_model`] does (the same estimate, covariance and intervals),
/// keeping only a [`LightFit`]; τ² is estimated from `start` when given.
pub(crate) fn fit_light(
    d: &MetaData,
    options: &FitOptions,
    start: Option<f64>,
) -> Result<LightFit> {
    if d.k() <= d.p() {
        return Err(Error::cannot("too few studies for the model"));
    }
    let heterogeneity = Heterogeneity::of(d)?;
    let core = core_fit_from(d, options, start)?;
    let (i2, _) = shares(options.model, &heterogeneity, core.tau2.tau2);
    let crit = critical_value(options.level, core.df);
    let b0 = core.fit.beta[0];
    Ok(LightFit {
        first_ci: Interval::around(b0, crit * core.cov[(0, 0)].max(0.0).sqrt()),
        beta: core.fit.beta,
        cov_wald: core.fit.xtwx_inv,
        tau2: core.tau2.tau2,
        i2,
    })
}

/// Fit the model to the data.
///
/// # References
/// Knapp, G., & Hartung, J. (2003). Improved tests for a random effects meta-regression
/// with a single covariate. *Statistics in Medicine*, 22(17), 2693–2710.
/// Viechtbauer, W. (2005). *Journal of Educational and Behavioral Statistics*, 30(3), 261–293.
pub fn fit_model(d: &MetaData, options: &FitOptions) -> Result<ModelFit> {
    let (k, p) = (d.k(), d.p());
    if k <= p {
        return Err(Error::cannot(format!(
            "{} cannot support a model with {}: at least {} are needed",
            crate::format::count(k as u64, "study", "studies"),
            crate::format::count(p as u64, "coefficient", "coefficients"),
            p + 1
        )));
    }
    let heterogeneity = Heterogeneity::of(d)?;
    let CoreFit {
        tau2,
        fit,
        cov,
        df,
        kh_scale,
        mut warnings,
    } = core_fit(d, options)?;
    let tau2_ci = match options.model {
        Model::Random(_) if options.tau2_interval => {
            let ci = q_profile(d, options.level)?;
            if !ci.converged {
                warnings.push(Warning::NotConverged {
                    what: "the Q-profile interval for τ²".into(),
                    iterations: TAU2_MAX_ITERATIONS,
                });
            }
            Some(ci)
        }
        _ => None,
    };
    let (i2, h2) = shares(options.model, &heterogeneity, tau2.tau2);
    let mut out = ModelFit {
        k,
        units: k,
        p,
        options: *options,
        tau2,
        tau2_ci,
        beta: fit.beta.clone(),
        cov,
        cov_wald: fit.xtwx_inv.clone(),
        coefficients: Vec::with_capacity(p),
        df,
        kh_scale,
        heterogeneity,
        i2,
        h2,
        weights: fit.w,
        residuals: fit.resid,
        warnings,
    };
    let crit = out.critical_value();
    for j in 0..p {
        let estimate = out.beta[j];
        let se = out.cov[(j, j)].max(0.0).sqrt();
        let statistic = estimate / se;
        out.coefficients.push(Coefficient {
            estimate,
            se,
            statistic,
            p: out.two_sided_p(statistic),
            ci: Interval::around(estimate, crit * se),
        });
    }
    Ok(out)
}
