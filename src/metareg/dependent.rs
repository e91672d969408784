//! Meta-regression of dependent coefficients: the moderators' model fitted as the
//! multilevel model (variance between and within clusters, sampling errors of one sample
//! correlated), with cluster-robust tests of each coefficient and the approximate
//! Hotelling test of all moderators together.

use super::design::Design;
use super::{Explanation, OmnibusTest, wald_statistic};
use crate::benchmark::Prepared;
use crate::dist::{chi2_sf, f_sf};
use crate::error::{Error, Result};
use crate::pool::dependence::{DependenceOptions, Inference, MultilevelSummary, summarize};
use crate::pool::multilevel::{Grouping, HotellingTest, NestedData, hotelling};
use crate::pool::{CiMethod, Coefficient, FitOptions, ModelFit, PoolOptions};
use crate::warning::Warning;

/// What a meta-regression of dependent coefficients adds to an [`Explanation`].
#[derive(Debug, Clone)]
pub struct DependentExplanation {
    /// The multilevel fit and its summaries.
    pub summary: MultilevelSummary,
    /// The approximate Hotelling test of every moderator coefficient (CR2; `None`
    /// without moderators or when it cannot be formed).
    pub robust_omnibus: Option<HotellingTest>,
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
    warnings.extend(design.warnings.iter().cloned());
    if !design.excluded.is_empty() {
        warnings.push(Warning::RowsLeftOutOfModel {
            rows: design.excluded.iter().map(|e| e.row).collect(),
            why: "a moderator value is missing".into(),
        });
    }
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
