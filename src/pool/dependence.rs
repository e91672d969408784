//! Pooling dependent coefficients: several rows per sample, several samples per cluster.
//! Three ways, each stated in the result: the multilevel model (the default when the
//! sheet says which rows belong together), composites of each sample's rows, or today's
//! model with every row taken as independent (and a loud warning).

use super::heterogeneity::Heterogeneity;
use super::multilevel::{
    ComponentInterval, Grouping, LikelihoodRatio, MultilevelFit, MultilevelOptions, NestedData,
    RobustCovariance, SENSITIVITY_CORRELATIONS, cluster_test, component_intervals, cr2, fit,
};
use super::prediction::prediction_df;
use super::tau2::Tau2Fit;
use super::{
    CiMethod, FEW_STUDIES, Interval, Model, PoolOptions, PoolResult, Prediction, Tau2Estimator,
    ZeroTest, pool,
};
use crate::dist::{normal_quantile, normal_two_sided_p, t_quantile, t_two_sided_p};
use crate::error::{Error, Result};
use crate::level::Level;
use crate::warning::Warning;
use nalgebra::DMatrix;
use serde::Serialize;

/// A Satterthwaite degrees of freedom below this draws a warning: the robust test's type I
/// error is then no longer near its nominal level (Tipton 2015, Psychological Methods 20,
/// 375–393).
pub const FEW_ROBUST_DF: f64 = 4.0;

/// How rows that share a sample or a cluster are pooled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum DependenceMethod {
    /// The multilevel model with correlated sampling errors.
    Multilevel,
    /// One composite per sample, pooled as independent.
    Aggregate,
    /// Every row taken as independent (intervals too narrow).
    Ignore,
}

impl DependenceMethod {
    /// Command-line and JSON name.
    pub fn name(self) -> &'static str {
        match self {
            DependenceMethod::Multilevel => "multilevel",
            DependenceMethod::Aggregate => "aggregate",
            DependenceMethod::Ignore => "ignore",
        }
    }
}

/// Where the standard errors and intervals of a multilevel fit come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Inference {
    /// Cluster-robust (CR2) standard errors with Satterthwaite degrees of freedom.
    Robust,
    /// The model's own covariance, (XᵀV⁻¹X)⁻¹.
    Model,
}

impl Inference {
    /// Command-line and JSON name.
    pub fn name(self) -> &'static str {
        match self {
            Inference::Robust => "robust",
            Inference::Model => "model",
        }
    }
}

/// How dependence is handled.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DependenceOptions {
    /// The method; multilevel when the sheet groups rows and none is chosen.
    pub method: Option<DependenceMethod>,
    /// The assumed correlation of sampling errors within a sample.
    pub sampling_correlation: f64,
    /// The inference of a multilevel fit; robust when none is chosen.
    pub inference: Option<Inference>,
}

impl Default for DependenceOptions {
    fn default() -> Self {
        DependenceOptions {
            method: None,
            sampling_correlation: super::multilevel::DEFAULT_SAMPLING_CORRELATION,
            inference: None,
        }
    }
}

/// The pooled value, its interval and the prediction interval at one sampling correlation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SensitivityRow {
    /// The sampling correlation assumed.
    pub sampling_correlation: f64,
    /// The pooled value.
    pub estimate: f64,
    /// Its confidence interval (inference in force).
    pub ci: Interval,
    /// The prediction interval, when there is one.
    pub pi: Option<Interval>,
}

/// What a dependent pooling found beyond the usual result.
#[derive(Debug, Clone, PartialEq)]
pub struct DependenceResult {
    /// The method in force.
    pub method: DependenceMethod,
    /// The sampling correlation assumed.
    pub sampling_correlation: f64,
    /// Rows.
    pub k_rows: usize,
    /// Samples.
    pub k_samples: usize,
    /// Clusters.
    pub k_clusters: usize,
    /// Variance between clusters (multilevel only).
    pub tau2_cluster: Option<f64>,
    /// Variance within clusters (multilevel only).
    pub tau2_within: Option<f64>,
    /// False when no cluster has two rows (τ²_within held at 0).
    pub within_identified: bool,
    /// Profile-likelihood interval of τ²_cluster.
    pub tau2_cluster_ci: Option<ComponentInterval>,
    /// Profile-likelihood interval of τ²_within.
    pub tau2_within_ci: Option<ComponentInterval>,
    /// Share of the total variance between clusters, percent.
    pub i2_cluster: Option<f64>,
    /// Share of the total variance within clusters, percent.
    pub i2_within: Option<f64>,
    /// Likelihood-ratio test of τ²_cluster = 0.
    pub lrt: Option<LikelihoodRatio>,
    /// The results at other sampling correlations.
    pub sensitivity: Vec<SensitivityRow>,
}

/// Cluster-robust inference for the pooled value.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RobustTest {
    /// CR2 standard error.
    pub se: f64,
    /// Satterthwaite degrees of freedom.
    pub df: f64,
    /// Confidence interval, estimate ± t(df)·se.
    pub ci: Interval,
    /// t statistic against 0.
    pub statistic: f64,
    /// Two-sided p value.
    pub p: f64,
}

/// The method in force for a sheet that groups rows (`grouped`) or not.
pub fn method_in_force(options: &DependenceOptions, grouped: bool) -> DependenceMethod {
    match (options.method, grouped) {
        (Some(m), true) => m,
        (_, false) => DependenceMethod::Ignore,
        (None, true) => DependenceMethod::Multilevel,
    }
}

/// Pool rows that the sheet groups into samples and clusters.
pub fn pool_dependent(
    y: &[f64],
    v: &[f64],
    grouping: &Grouping,
    options: &PoolOptions,
    dependence: &DependenceOptions,
) -> Result<PoolResult> {
    let method = method_in_force(dependence, true);
    let counts = (y.len(), grouping.samples(), grouping.clusters());
    let result = match method {
        DependenceMethod::Multilevel => multilevel(y, v, grouping, options, dependence)?,
        DependenceMethod::Aggregate => aggregated(y, v, grouping, options, dependence)?,
        DependenceMethod::Ignore => {
            let mut r = pool(y, v, options)?;
            r.warnings.push(Warning::DependenceIgnored {
                rows: counts.0,
                samples: counts.1,
                clusters: counts.2,
            });
            r.dependence = Some(DependenceResult::counts_only(
                method,
                dependence.sampling_correlation,
                counts,
            ));
            r
        }
    };
    Ok(result)
}

impl DependenceResult {
    fn counts_only(
        method: DependenceMethod,
        sampling_correlation: f64,
        (k_rows, k_samples, k_clusters): (usize, usize, usize),
    ) -> DependenceResult {
        DependenceResult {
            method,
            sampling_correlation,
            k_rows,
            k_samples,
            k_clusters,
            tau2_cluster: None,
            tau2_within: None,
            within_identified: false,
            tau2_cluster_ci: None,
            tau2_within_ci: None,
            i2_cluster: None,
            i2_within: None,
            lrt: None,
            sensitivity: Vec::new(),
        }
    }
}

/// One composite per sample: the mean of its rows on the analysis scale, with the variance
/// of a mean of correlated estimates, (Σᵢ vᵢ + Σᵢ≠ⱼ r√(vᵢvⱼ)) / m² (Borenstein, Hedges,
/// Higgins & Rothstein 2009, *Introduction to Meta-Analysis*, ch. 24). Returns the
/// composites and, for each, its sample's rows (in input order), samples in order of
/// first appearance.
pub fn composites(
    y: &[f64],
    v: &[f64],
    sample: &[usize],
    r: f64,
) -> (Vec<f64>, Vec<f64>, Vec<Vec<usize>>) {
    let mut order: Vec<usize> = Vec::new();
    let mut rows: Vec<Vec<usize>> = Vec::new();
    let mut slot = std::collections::HashMap::new();
    for (i, &s) in sample.iter().enumerate() {
        let j = *slot.entry(s).or_insert_with(|| {
            order.push(s);
            rows.push(Vec::new());
            rows.len() - 1
        });
        rows[j].push(i);
    }
    let mut ys = Vec::with_capacity(rows.len());
    let mut vs = Vec::with_capacity(rows.len());
    for members in &rows {
        let m = members.len() as f64;
        ys.push(members.iter().map(|&i| y[i]).sum::<f64>() / m);
        let mut var = 0.0;
        for &a in members {
            for &b in members {
                var += if a == b {
                    v[a]
                } else {
                    r * (v[a] * v[b]).sqrt()
                };
            }
        }
        vs.push(var / (m * m));
    }
    (ys, vs, rows)
}

fn aggregated(
    y: &[f64],
    v: &[f64],
    grouping: &Grouping,
    options: &PoolOptions,
    dependence: &DependenceOptions,
) -> Result<PoolResult> {
    let r = dependence.sampling_correlation;
    let (ys, vs, rows) = composites(y, v, &grouping.sample, r);
    let mut result = pool(&ys, &vs, options)?;
    let clusters = grouping.clusters();
    if clusters < rows.len() {
        result.warnings.push(Warning::ClusterDependenceRemains {
            samples: rows.len(),
            clusters,
        });
    }
    let mut sensitivity = Vec::new();
    for rr in SENSITIVITY_CORRELATIONS {
        let (ys, vs, _) = composites(y, v, &grouping.sample, rr);
        let p = pool(&ys, &vs, options)?;
        sensitivity.push(SensitivityRow {
            sampling_correlation: rr,
            estimate: p.estimate,
            ci: p.ci,
            pi: p.prediction.interval(),
        });
    }
    let mut d = DependenceResult::counts_only(
        DependenceMethod::Aggregate,
        r,
        (y.len(), rows.len(), clusters),
    );
    d.sensitivity = sensitivity;
    result.dependence = Some(d);
    Ok(result)
}

/// One coefficient's interval and test under an inference.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Inferred {
    /// Estimate.
    pub estimate: f64,
    /// Standard error.
    pub se: f64,
    /// Degrees of freedom of the t quantile (`None` for normal quantiles).
    pub df: Option<f64>,
    /// Confidence interval.
    pub ci: Interval,
    /// z or t statistic against 0.
    pub statistic: f64,
    /// Two-sided p value.
    pub p: f64,
}

impl Inferred {
    fn of(estimate: f64, se: f64, df: Option<f64>, level: Level) -> Inferred {
        let statistic = estimate / se;
        let (crit, p) = match df {
            Some(df) => (t_quantile(level.upper(), df), t_two_sided_p(statistic, df)),
            None => (
                normal_quantile(level.upper()),
                normal_two_sided_p(statistic),
            ),
        };
        Inferred {
            estimate,
            se,
            df,
            ci: Interval::around(estimate, crit * se),
            statistic,
            p,
        }
    }

    /// The cluster-robust test record.
    pub fn robust_test(&self) -> RobustTest {
        RobustTest {
            se: self.se,
            df: self.df.unwrap_or(f64::NAN),
            ci: self.ci,
            statistic: self.statistic,
            p: self.p,
        }
    }
}

/// Each coefficient under the model's own covariance: normal quantiles for the Wald
/// method, else t with clusters − p df (the independent units; common practice, no
/// source).
pub fn model_based(fit: &MultilevelFit, ci: CiMethod, level: Level) -> Vec<Inferred> {
    let df = (ci != CiMethod::Wald).then(|| (fit.clusters - fit.p) as f64);
    (0..fit.p)
        .map(|j| Inferred::of(fit.beta[j], fit.cov[(j, j)].max(0.0).sqrt(), df, level))
        .collect()
}

/// Each coefficient under CR2 with its Satterthwaite df.
pub fn cluster_robust(fit: &MultilevelFit, rc: &RobustCovariance, level: Level) -> Vec<Inferred> {
    (0..fit.p)
        .map(|j| {
            Inferred::of(
                fit.beta[j],
                rc.cov[(j, j)].max(0.0).sqrt(),
                Some(rc.df[j]),
                level,
            )
        })
        .collect()
}

/// The CR2 test of the pooled value (the first coefficient) against 0.
pub fn robust_test(d: &NestedData, fit: &MultilevelFit, level: Level) -> Result<RobustTest> {
    let rc = cr2(d, fit)?;
    Ok(cluster_robust(fit, &rc, level)[0].robust_test())
}

/// The prediction interval for the true value in a new sample of a new cluster:
/// μ̂ ± t(m − p − 1)·√(τ²_cluster + τ²_within + SE²), m the clusters, SE the first
/// coefficient's standard error under the inference in force; with its df. `None` when
/// m < p + 2.
///
/// The df rule is that of the two-level benchmark (Higgins, Thompson & Spiegelhalter 2009)
/// with clusters as the independent units: one df more than the coefficients' is spent
/// because the variances are estimated too.
pub fn new_cluster_interval(fit: &MultilevelFit, se: f64, level: Level) -> Option<(Interval, f64)> {
    let df = prediction_df(fit.clusters, fit.p)?;
    let scale = (fit.tau2_cluster + fit.tau2_within + se * se).sqrt();
    Some((
        Interval::around(fit.beta[0], t_quantile(level.upper(), df) * scale),
        df,
    ))
}

fn estimator_is_likelihood(model: Model) -> Result<bool> {
    match model {
        Model::Random(Tau2Estimator::Reml) => Ok(true),
        Model::Random(Tau2Estimator::Ml) => Ok(false),
        _ => Err(Error::cannot(format!(
            "the multilevel model is fitted by REML or ML, not by {}; choose reml or ml, or \
             pool one composite per sample (dependence aggregate)",
            match model {
                Model::Common => "the common-effect model".to_string(),
                Model::Random(e) => e.label().to_string(),
            }
        ))),
    }
}

/// A multilevel fit with everything its faces show: the coefficients under the inference
/// in force and under CR2, the variance components with their intervals and test, the
/// heterogeneity statistics and the sensitivity to the sampling correlation.
#[derive(Debug, Clone)]
pub struct MultilevelSummary {
    /// The data, grouped by cluster.
    pub data: NestedData,
    /// The fit.
    pub fit: MultilevelFit,
    /// The CR2 covariance and df.
    pub robust_cov: RobustCovariance,
    /// Each coefficient under CR2.
    pub robust: Vec<Inferred>,
    /// Each coefficient under the inference in force.
    pub coefficients: Vec<Inferred>,
    /// The inference in force.
    pub inference: Inference,
    /// Components, intervals, shares, test, counts, sensitivity.
    pub dependence: DependenceResult,
    /// Q from the sampling covariance (k − p df) and the typical within-study variance.
    pub heterogeneity: Heterogeneity,
    /// Warnings.
    pub warnings: Vec<Warning>,
}

/// Fit the multilevel model with design `x` and summarise it.
pub fn summarize(
    y: &[f64],
    v: &[f64],
    x: &DMatrix<f64>,
    grouping: &Grouping,
    options: &PoolOptions,
    dependence: &DependenceOptions,
) -> Result<MultilevelSummary> {
    let restricted = estimator_is_likelihood(options.model)?;
    let data = NestedData::new(y, v, x, grouping)?;
    let ml = MultilevelOptions {
        restricted,
        sampling_correlation: dependence.sampling_correlation,
    };
    let f = fit(&data, &ml)?;
    let inference = dependence.inference.unwrap_or(Inference::Robust);
    // The main fit's robust covariance, the profile intervals, the likelihood-ratio test
    // and the refits of the sensitivity table depend on the main fit only: they run side by
    // side (each is itself parallel over clusters; each gives the same result however it
    // is scheduled).
    let start = Some([f.tau2_cluster, f.tau2_within]);
    let ((robust_cov, others), (intervals, lrt)) = rayon::join(
        || {
            rayon::join(
                || cr2(&data, &f),
                || sensitivity(&data, &ml, (inference, start), options),
            )
        },
        || {
            rayon::join(
                || component_intervals(&data, &f, options.level),
                || cluster_test(&data, &f),
            )
        },
    );
    let (robust_cov, (others, refits_converged)) = (robust_cov?, others?);
    let ([ci_c, ci_w], lrt) = (intervals?, lrt?);
    let robust = cluster_robust(&f, &robust_cov, options.level);
    let coefficients = match inference {
        Inference::Robust => robust.clone(),
        Inference::Model => model_based(&f, options.ci, options.level),
    };
    let mut warnings = fit_warnings(&f, &robust, inference);
    if [ci_c, ci_w].iter().flatten().any(|c| !c.converged) {
        warnings.push(Warning::NotConverged {
            what: "a profile-likelihood interval of a variance component".into(),
            iterations: super::tau2::TAU2_MAX_ITERATIONS,
        });
    }
    let heterogeneity = typical(y, v, x, &f)?;
    let s2 = heterogeneity.typical_variance;
    let total = f.tau2_cluster + f.tau2_within;
    let share = |t: f64| 100.0 * t / (total + s2);
    let first = coefficients[0];
    let in_force = SensitivityRow {
        sampling_correlation: ml.sampling_correlation,
        estimate: first.estimate,
        ci: first.ci,
        pi: new_cluster_interval(&f, first.se, options.level).map(|(i, _)| i),
    };
    let mut sensitivity = others;
    if SENSITIVITY_CORRELATIONS.contains(&ml.sampling_correlation) {
        sensitivity.push(in_force);
        sensitivity.sort_by(|a, b| a.sampling_correlation.total_cmp(&b.sampling_correlation));
    }
    if !refits_converged {
        warnings.push(Warning::NotConverged {
            what: "a refit at another sampling correlation (the sensitivity table)".into(),
            iterations: super::tau2::TAU2_MAX_ITERATIONS,
        });
    }
    if f.clusters < FEW_STUDIES {
        warnings.push(Warning::FewClusters {
            clusters: f.clusters,
        });
    }
    let dependence_result = DependenceResult {
        method: DependenceMethod::Multilevel,
        sampling_correlation: ml.sampling_correlation,
        k_rows: f.k,
        k_samples: f.samples,
        k_clusters: f.clusters,
        tau2_cluster: Some(f.tau2_cluster),
        tau2_within: Some(f.tau2_within),
        within_identified: f.within_identified,
        tau2_cluster_ci: ci_c,
        tau2_within_ci: ci_w,
        i2_cluster: Some(share(f.tau2_cluster)),
        i2_within: Some(share(f.tau2_within)),
        lrt: Some(lrt),
        sensitivity,
    };
    Ok(MultilevelSummary {
        data,
        fit: f,
        robust_cov,
        robust,
        coefficients,
        inference,
        dependence: dependence_result,
        heterogeneity,
        warnings,
    })
}

impl MultilevelSummary {
    /// τ²_cluster + τ²_within, as the two-level fits report τ².
    pub fn total_tau2(&self) -> Tau2Fit {
        let total = self.fit.tau2_cluster + self.fit.tau2_within;
        Tau2Fit {
            tau2: total,
            iterations: self.fit.iterations,
            termination: self.fit.termination,
            at_zero: total == 0.0,
        }
    }

    /// I² and H² of the total variance.
    pub fn shares(&self) -> (f64, f64) {
        let s2 = self.heterogeneity.typical_variance;
        let total = self.fit.tau2_cluster + self.fit.tau2_within;
        (100.0 * total / (total + s2), (total + s2) / s2)
    }

    /// The covariance of the coefficients under the inference in force.
    pub fn cov_in_force(&self) -> DMatrix<f64> {
        match self.inference {
            Inference::Robust => self.robust_cov.cov.clone(),
            Inference::Model => self.fit.cov.clone(),
        }
    }
}

fn multilevel(
    y: &[f64],
    v: &[f64],
    grouping: &Grouping,
    options: &PoolOptions,
    dependence: &DependenceOptions,
) -> Result<PoolResult> {
    let x = DMatrix::from_element(y.len(), 1, 1.0);
    let s = summarize(y, v, &x, grouping, options, dependence)?;
    let mut warnings = s.warnings.clone();
    let first = s.coefficients[0];
    let prediction = match new_cluster_interval(&s.fit, first.se, options.level) {
        Some((interval, df)) => Prediction::Available { interval, df },
        None => {
            warnings.push(Warning::NoClusterPrediction {
                clusters: s.fit.clusters,
            });
            Prediction::TooFewStudies
        }
    };
    let (i2, h2) = s.shares();
    Ok(PoolResult {
        k: s.fit.k,
        options: *options,
        estimate: first.estimate,
        se: first.se,
        se_wald: s.fit.cov[(0, 0)].max(0.0).sqrt(),
        kh_scale: None,
        ci: first.ci,
        test: ZeroTest {
            statistic: first.statistic,
            df: first.df,
            p: first.p,
        },
        tau2: s.total_tau2(),
        tau2_ci: None,
        heterogeneity: s.heterogeneity,
        i2,
        h2,
        i2_ci: None,
        prediction,
        prediction_at_tau2_upper: None,
        weights_percent: s.fit.weights_percent.clone(),
        warnings,
        dependence: Some(s.dependence.clone()),
        inference: Some(s.inference),
        robust: Some(s.robust[0].robust_test()),
    })
}

/// The heterogeneity statistics of a multilevel fit: Q from the sampling covariance with
/// k − p df, and the typical within-study variance of the rows (Higgins & Thompson 2002),
/// which the shares of variance at each level are taken against (Cheung 2014).
fn typical(y: &[f64], v: &[f64], x: &DMatrix<f64>, f: &MultilevelFit) -> Result<Heterogeneity> {
    let base = Heterogeneity::of(&super::MetaData::with_design(
        y.to_vec(),
        v.to_vec(),
        x.clone(),
    )?)?;
    let df = (f.k - f.p) as f64;
    Ok(Heterogeneity {
        q: f.q,
        df,
        p: crate::dist::chi2_sf(f.q, df),
        typical_variance: base.typical_variance,
    })
}

fn fit_warnings(f: &MultilevelFit, robust: &[Inferred], inference: Inference) -> Vec<Warning> {
    let mut w = Vec::new();
    if !f.converged() {
        w.push(Warning::NotConverged {
            what: "the multilevel fit".into(),
            iterations: f.iterations,
        });
    }
    if !f.within_identified {
        w.push(Warning::WithinVarianceNotIdentified {
            clusters: f.clusters,
        });
    }
    if f.tau2_cluster == 0.0 {
        w.push(Warning::Tau2AtZero {
            estimator: "between clusters".into(),
        });
    }
    if f.within_identified && f.tau2_within == 0.0 {
        w.push(Warning::Tau2AtZero {
            estimator: "within clusters".into(),
        });
    }
    if inference == Inference::Robust
        && let Some(df) = robust
            .iter()
            .filter_map(|r| r.df)
            .filter(|df| *df < FEW_ROBUST_DF)
            .reduce(f64::min)
    {
        w.push(Warning::FewRobustDf { df });
    }
    w
}

/// The rows of the sensitivity table at the sampling correlations other than the one in
/// force (whose row is the main fit's own), each refitted from `start`, in order; and
/// whether every refit converged.
fn sensitivity(
    data: &NestedData,
    ml: &MultilevelOptions,
    (inference, start): (Inference, Option<[f64; 2]>),
    options: &PoolOptions,
) -> Result<(Vec<SensitivityRow>, bool)> {
    use rayon::prelude::*;
    let rows: Vec<Result<(SensitivityRow, bool)>> = SENSITIVITY_CORRELATIONS
        .par_iter()
        .filter(|&&r| r != ml.sampling_correlation)
        .map(|&r| {
            let f = super::multilevel::refit_from(
                data,
                &MultilevelOptions {
                    sampling_correlation: r,
                    ..*ml
                },
                start,
            )?;
            let first = match inference {
                Inference::Robust => cluster_robust(&f, &cr2(data, &f)?, options.level)[0],
                Inference::Model => model_based(&f, options.ci, options.level)[0],
            };
            let row = SensitivityRow {
                sampling_correlation: r,
                estimate: first.estimate,
                ci: first.ci,
                pi: new_cluster_interval(&f, first.se, options.level).map(|(i, _)| i),
            };
            Ok((row, f.converged()))
        })
        .collect();
    let mut out = Vec::with_capacity(SENSITIVITY_CORRELATIONS.len());
    let mut converged = true;
    for row in rows {
        let (row, ok) = row?;
        converged &= ok;
        out.push(row);
    }
    Ok((out, converged))
}
