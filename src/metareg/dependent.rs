//! Meta-regression of dependent coefficients: the moderators' model fitted as the
//! multilevel model (variance between and within clusters, sampling errors of one sample
//! correlated), with cluster-robust tests of each coefficient and the approximate
//! Hotelling test of all moderators together.

use super::design::Design;
use super::{DependentExplanation, Explanation, OmnibusTest, wald_statistic};
use crate::benchmark::Prepared;
use crate::dist::{chi2_sf, f_sf};
use crate::error::{Error, Result};
use crate::pool::dependence::{DependenceOptions, Inference, MultilevelSummary, summarize};
use crate::pool::multilevel::{Grouping, NestedData, hotelling};
use crate::pool::{CiMethod, Coefficient, FitOptions, ModelFit, PoolOptions};

/// The grouping of a design's studies when they are to be fitted by the multilevel model.
pub fn multilevel_grouping(
    p: &Prepared,
    used: &[usize],
    options: &FitOptions,
) -> Option<crate::pool::multilevel::Grouping> {
    use crate::pool::dependence::{DependenceMethod, method_in_force};
    p.grouping_of(used)
        .filter(|g| g.clusters() < g.cluster.len())
        .filter(|_| method_in_force(&options.dependence, true) == DependenceMethod::Multilevel)
}

/// The two-level view of a multilevel fit, for the parts that read a [`ModelFit`]: τ² is
/// the sum of the two components, the covariance and coefficients those of the inference
/// in force, the weights each row's share of the first coefficient.
pub fn model_fit(s: &MultilevelSummary, options: &FitOptions, y: &[f64]) -> ModelFit {
    let f = &s.fit;
    let (i2, h2) = s.shares();
    let x = &s.data.x;
    // The rows in input order: the summary's data are grouped by cluster.
    let mut residuals = vec![0.0; f.k];
    for (i, &row) in s.data.order.iter().enumerate() {
        let fitted: f64 = (0..f.p).map(|j| x[(i, j)] * f.beta[j]).sum();
        residuals[row] = y[row] - fitted;
    }
    let df = match (s.inference, options.ci) {
        (Inference::Model, CiMethod::Wald) => None,
        _ => Some((f.clusters - f.p) as f64),
    };
    ModelFit {
        k: f.k,
        units: f.clusters,
        p: f.p,
        options: *options,
        tau2: s.total_tau2(),
        tau2_ci: None,
        beta: f.beta.clone(),
        cov: s.cov_in_force(),
        cov_wald: f.cov.clone(),
        coefficients: s
            .coefficients
            .iter()
            .map(|c| Coefficient {
                estimate: c.estimate,
                se: c.se,
                statistic: c.statistic,
                p: c.p,
                ci: c.ci,
            })
            .collect(),
        df,
        kh_scale: None,
        heterogeneity: s.heterogeneity,
        i2,
        h2,
        weights: f.weights_percent.iter().map(|w| w.max(0.0)).collect(),
        residuals,
        warnings: s.warnings.clone(),
    }
}

/// Fit a meta-regression of the prepared studies on a design as the multilevel model.
pub fn explain_dependent(
    p: &Prepared,
    design: Design,
    options: &FitOptions,
    dependence: &DependenceOptions,
    grouping: &Grouping,
) -> Result<Explanation> {
    let (y, v) = design.effects(&p.y, &p.v);
    let pool = PoolOptions {
        model: options.model,
        ci: options.ci,
        level: options.level,
    };
    let s = summarize(&y, &v, &design.x, grouping, &pool, dependence)?;
    let fit = model_fit(&s, options, &y);
    if fit.coefficients.iter().any(|c| !c.se.is_finite()) {
        return Err(Error::Numerical(
            "the coefficients' standard errors could not be computed".into(),
        ));
    }
    let ones = nalgebra::DMatrix::from_element(y.len(), 1, 1.0);
    let base =
        crate::pool::multilevel::fit(&NestedData::new(&y, &v, &ones, grouping)?, &s.fit.options)?;
    let tau2_0 = base.tau2_cluster + base.tau2_within;
    let r2 = (tau2_0 > 0.0).then(|| (100.0 * (tau2_0 - fit.tau2.tau2) / tau2_0).max(0.0));
    let columns: Vec<usize> = (1..design.x.ncols()).collect();
    let robust_omnibus = hotelling(&s.data, &s.fit, &s.robust_cov, &columns)?;
    let omnibus = match s.inference {
        Inference::Robust => robust_omnibus.map(|h| OmnibusTest {
            statistic: h.statistic,
            df: h.df_num,
            df2: Some(h.df_den),
            p: h.p,
        }),
        Inference::Model => model_omnibus(&fit, &columns),
    };
    let mut warnings = fit.warnings.clone();
    super::design_warnings(&design, &mut warnings);
    Ok(Explanation {
        design,
        fit,
        tau2_intercept_only: tau2_0,
        r2,
        omnibus,
        warnings,
        dependent: Some(Box::new(DependentExplanation {
            summary: s,
            robust_omnibus,
        })),
    })
}

/// The model-based omnibus test: χ²(q) under Wald, else F(q, clusters − p).
fn model_omnibus(fit: &ModelFit, columns: &[usize]) -> Option<OmnibusTest> {
    let q = columns.len();
    if q == 0 {
        return None;
    }
    let w = wald_statistic(&fit.beta, &fit.cov, columns);
    Some(match fit.df {
        Some(df2) => OmnibusTest {
            statistic: w / q as f64,
            df: q as f64,
            df2: Some(df2),
            p: f_sf(w / q as f64, q as f64, df2),
        },
        None => OmnibusTest {
            statistic: w,
            df: q as f64,
            df2: None,
            p: chi2_sf(w, q as f64),
        },
    })
}

/// Leave each row out in turn from a multilevel fit: each refit warm-started from the full
/// fit's variances (the rows of the same sample and cluster stay in), in parallel.
///
/// rstudentᵢ = (yᵢ − ŷᵢ) / √(Var(yᵢ | its cluster's other rows) + hᵀ Cov(β̂₍₋ᵢ₎) h): ŷᵢ the
/// refit's prediction of row i given the other rows of its cluster,
/// ŷᵢ = xᵢᵀβ̂₍₋ᵢ₎ + V_ic V_cc⁻¹(y_c − X_cβ̂₍₋ᵢ₎), with h = xᵢ − X_cᵀV_cc⁻¹V_ci (V from the refit's
/// variances); Dᵢ = (β̂ − β̂₍₋ᵢ₎)ᵀ M⁻¹ (β̂ − β̂₍₋ᵢ₎) / p with M the full fit's model covariance.
/// A row is flagged as influential when Dᵢ exceeds the median of F(p, m − p), m clusters.
///
/// # References
/// Viechtbauer, W., & Cheung, M. W.-L. (2010). Outlier and influence diagnostics for
/// meta-analysis. *Research Synthesis Methods*, 1(2), 112–125.
pub fn influence_dependent(
    p: &Prepared,
    ex: &Explanation,
    tick: &(dyn Fn(usize) + Sync),
) -> Result<Vec<super::influence::StudyInfluence>> {
    use rayon::prelude::*;
    let d = ex
        .dependent
        .as_ref()
        .ok_or_else(|| Error::cannot("the model is not a multilevel fit"))?;
    let s = &d.summary;
    let (y, v) = ex.design.effects(&p.y, &p.v);
    let x = &ex.design.x;
    let used = &ex.design.used;
    let full = p
        .grouping_of(used)
        .ok_or_else(|| Error::cannot("the rows share no sample or cluster"))?;
    let (k, np) = (y.len(), x.ncols());
    let m_inv = s
        .fit
        .cov
        .clone()
        .try_inverse()
        .unwrap_or_else(|| nalgebra::DMatrix::from_element(np, np, f64::NAN));
    let z = crate::dist::normal_quantile(0.975);
    let cook_cut = if s.fit.clusters > np {
        crate::dist::f_quantile(0.5, np as f64, (s.fit.clusters - np) as f64)
    } else {
        f64::INFINITY
    };
    let one = |i: usize| {
        let keep: Vec<usize> = (0..k).filter(|&j| j != i).collect();
        let refit = leave_out(p, ex, s, &keep, (&y, &v));
        let result = refit.map(|(f, first)| {
            let rs = studentized(&full, (&y, &v, x), &f, i);
            let diff = &s.fit.beta - &f.beta;
            let cooks = (diff.transpose() * &m_inv * &diff)[(0, 0)] / np as f64;
            let total = f.tau2_cluster + f.tau2_within;
            let s2 = s.heterogeneity.typical_variance;
            let loo = super::influence::LeaveOneOut {
                beta: f.beta.iter().copied().collect(),
                ci: first.ci,
                tau2: total,
                i2: 100.0 * total / (total + s2),
            };
            (loo, rs, cooks)
        });
        tick(1);
        let fitted: f64 = (0..np).map(|j| x[(i, j)] * s.fit.beta[j]).sum();
        let (without, rstudent, cooks) = match result {
            Ok((loo, rs, cooks)) => (Some(loo), Some(rs), Some(cooks)),
            Err(_) => (None, None, None),
        };
        super::influence::StudyInfluence::flagged(
            i,
            y[i] - fitted,
            (without, rstudent, cooks),
            (z, cook_cut),
        )
    };
    Ok((0..k).into_par_iter().map(one).collect())
}

/// The multilevel fit of the design's rows at `keep`, warm-started from the full fit, with
/// its first coefficient under the inference in force.
fn leave_out(
    p: &Prepared,
    ex: &Explanation,
    s: &MultilevelSummary,
    keep: &[usize],
    (y, v): (&[f64], &[f64]),
) -> Result<(
    crate::pool::multilevel::MultilevelFit,
    crate::pool::dependence::Inferred,
)> {
    let rows: Vec<usize> = keep.iter().map(|&j| ex.design.used[j]).collect();
    let g = p
        .grouping_of(&rows)
        .ok_or_else(|| Error::cannot("no grouping"))?;
    let yk: Vec<f64> = keep.iter().map(|&j| y[j]).collect();
    let vk: Vec<f64> = keep.iter().map(|&j| v[j]).collect();
    let d = NestedData::new(&yk, &vk, &ex.design.x.select_rows(keep), &g)?;
    let start = Some([s.fit.tau2_cluster, s.fit.tau2_within]);
    let f = crate::pool::multilevel::refit_from(&d, &s.fit.options, start)?;
    let level = ex.fit.options.level;
    let first = match s.inference {
        Inference::Robust => {
            let rc = crate::pool::multilevel::cr2(&d, &f)?;
            crate::pool::dependence::cluster_robust(&f, &rc, level)[0]
        }
        Inference::Model => crate::pool::dependence::model_based(&f, ex.fit.options.ci, level)[0],
    };
    Ok((f, first))
}

/// Row i's externally studentized residual under a refit without it, predicted from the
/// other rows of its cluster.
fn studentized(
    g: &Grouping,
    (y, v, x): (&[f64], &[f64], &nalgebra::DMatrix<f64>),
    f: &crate::pool::multilevel::MultilevelFit,
    i: usize,
) -> f64 {
    use nalgebra::{DMatrix, DVector};
    let np = x.ncols();
    let mates: Vec<usize> = (0..y.len())
        .filter(|&j| j != i && g.cluster[j] == g.cluster[i])
        .collect();
    let r = f.options.sampling_correlation;
    let theta = [f.tau2_cluster, f.tau2_within];
    let cov = |a: usize, b: usize| -> f64 {
        let same = (a == b, g.sample[a] == g.sample[b]);
        crate::pool::multilevel::row_covariance((v[a], v[b]), same, r, theta)
    };
    let xi = DVector::from_fn(np, |j, _| x[(i, j)]);
    let mut mean = xi.dot(&f.beta);
    let mut var = cov(i, i);
    let mut h = xi.clone();
    if !mates.is_empty() {
        let c = mates.len();
        let vcc = DMatrix::from_fn(c, c, |a, b| cov(mates[a], mates[b]));
        let vci = DVector::from_fn(c, |a, _| cov(mates[a], i));
        if let Some(ch) = vcc.cholesky() {
            let w = ch.solve(&vci); // V_cc⁻¹ V_ci
            let xc = DMatrix::from_fn(c, np, |a, j| x[(mates[a], j)]);
            let resid = DVector::from_fn(c, |a, _| y[mates[a]]) - &xc * &f.beta;
            mean += w.dot(&resid);
            var -= w.dot(&vci);
            h -= xc.transpose() * &w;
        }
    }
    var += (h.transpose() * &f.cov * &h)[(0, 0)];
    (y[i] - mean) / var.max(0.0).sqrt()
}
