//! Mixed-effects meta-regression: moderators, the omnibus test, R², permutation tests,
//! influence diagnostics, the score-spread test and subgroup benchmarks.

pub mod at;
pub mod dependent;
pub mod design;
pub mod influence;
pub mod permutation;
pub mod spread;
pub mod subgroups;

pub use design::{
    Centring, Design, ExcludedRow, Moderator, ModeratorKind, ModeratorSpec, build_design,
};

use crate::benchmark::Prepared;
use crate::dist::{chi2_sf, f_sf};
use crate::error::{Error, Result};
use crate::pool::{FitOptions, MetaData, Model, ModelFit, fit_model};
use crate::warning::Warning;
use nalgebra::{DMatrix, DVector};

/// A joint test that every moderator coefficient is zero.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OmnibusTest {
    /// F (Knapp–Hartung) or χ² (Wald) statistic.
    pub statistic: f64,
    /// Numerator degrees of freedom m (moderator coefficients).
    pub df: f64,
    /// Denominator degrees of freedom k − p for F; `None` for χ².
    pub df2: Option<f64>,
    /// p value.
    pub p: f64,
}

/// The omnibus test of the coefficients in `columns` of a fitted model: Wald χ²(m) =
/// bᵀV⁻¹b, or under Knapp–Hartung F = bᵀV⁻¹b / m on (m, k − p) df with V the scaled
/// covariance.
pub fn omnibus(fit: &ModelFit, columns: &[usize]) -> Option<OmnibusTest> {
    let m = columns.len();
    if m == 0 {
        return None;
    }
    let q = wald_statistic(&fit.beta, &fit.cov, columns);
    Some(match fit.df {
        Some(df2) => {
            let f = q / m as f64;
            OmnibusTest {
                statistic: f,
                df: m as f64,
                df2: Some(df2),
                p: f_sf(f, m as f64, df2),
            }
        }
        None => OmnibusTest {
            statistic: q,
            df: m as f64,
            df2: None,
            p: chi2_sf(q, m as f64),
        },
    })
}

/// The Wald statistic bᵀV⁻¹b of the coefficients in `columns` (NaN when their covariance
/// is singular).
pub(crate) fn wald_statistic(beta: &DVector<f64>, cov: &DMatrix<f64>, columns: &[usize]) -> f64 {
    let m = columns.len();
    let b = DVector::from_iterator(m, columns.iter().map(|&j| beta[j]));
    let v = DMatrix::from_fn(m, m, |a, c| cov[(columns[a], columns[c])]);
    match v.cholesky() {
        Some(ch) => b.dot(&ch.solve(&b)),
        None => f64::NAN,
    }
}

/// What a meta-regression of dependent coefficients adds to an [`Explanation`].
#[derive(Debug, Clone)]
pub struct DependentExplanation {
    /// The multilevel fit and its summaries.
    pub summary: crate::pool::dependence::MultilevelSummary,
    /// The approximate Hotelling test of every moderator coefficient (CR2; `None`
    /// without moderators or when it cannot be formed).
    pub robust_omnibus: Option<crate::pool::multilevel::HotellingTest>,
}

/// A fitted meta-regression.
#[derive(Debug, Clone)]
pub struct Explanation {
    /// The design (studies used, moderators, columns).
    pub design: Design,
    /// The fit.
    pub fit: ModelFit,
    /// τ² of the intercept-only model on the same studies with the same estimator.
    pub tau2_intercept_only: f64,
    /// R² = max(0, (τ²₀ − τ²)/τ²₀) in percent; `None` when τ²₀ = 0.
    pub r2: Option<f64>,
    /// Test of all moderators together (`None` without moderators).
    pub omnibus: Option<OmnibusTest>,
    /// Warnings about the fit.
    pub warnings: Vec<Warning>,
    /// The multilevel fit behind it, when the sheet's rows share samples or clusters.
    pub dependent: Option<Box<DependentExplanation>>,
}

impl Explanation {
    /// The data the model was fitted to.
    pub fn data(&self, p: &Prepared) -> Result<MetaData> {
        let (y, v) = self.design.effects(&p.y, &p.v);
        MetaData::with_design(y, v, self.design.x.clone())
    }

    /// Design columns of the moderators (all but the intercept).
    pub fn moderator_columns(&self) -> Vec<usize> {
        (1..self.design.x.ncols()).collect()
    }
}

/// The design's own warnings, and one naming the rows it left out for a missing moderator
/// value (shared by the two-level and the multilevel meta-regression).
pub(crate) fn design_warnings(design: &Design, warnings: &mut Vec<Warning>) {
    warnings.extend(design.warnings.iter().cloned());
    if !design.excluded.is_empty() {
        warnings.push(Warning::RowsLeftOutOfModel {
            rows: design.excluded.iter().map(|e| e.row).collect(),
            why: "a moderator value is missing".into(),
        });
    }
}

/// Fit a meta-regression of the prepared studies on a design.
///
/// # References
/// Thompson, S. G., & Higgins, J. P. T. (2002). How should meta-regression analyses be
/// undertaken and interpreted? *Statistics in Medicine*, 21(11), 1559–1573.
/// Raudenbush, S. W. (2009). Analyzing effect sizes: random-effects models. In H. Cooper,
/// L. V. Hedges, & J. C. Valentine (Eds.), *The handbook of research synthesis and
/// meta-analysis* (2nd ed., pp. 295–315). Russell Sage Foundation.
pub fn explain(p: &Prepared, design: Design, options: &FitOptions) -> Result<Explanation> {
    let (y, v) = design.effects(&p.y, &p.v);
    let data = MetaData::with_design(y.clone(), v.clone(), design.x.clone())?;
    let fit = fit_model(&data, options)?;
    let mut warnings = fit.warnings.clone();
    if let (Some(ci), Model::Random(_)) = (fit.tau2_ci, options.model)
        && (fit.tau2.tau2 < ci.lower || fit.tau2.tau2 > ci.upper)
    {
        warnings.push(Warning::Tau2OutsideInterval {
            tau2: fit.tau2.tau2,
            lower: ci.lower,
            upper: ci.upper,
        });
    }
    let base = MetaData::intercept_only(y, v)?;
    let base_fit = fit_model(
        &base,
        &FitOptions {
            tau2_interval: false,
            ..*options
        },
    )?;
    let tau2_0 = base_fit.tau2.tau2;
    let r2 = match options.model {
        Model::Random(_) if tau2_0 > 0.0 => {
            Some((100.0 * (tau2_0 - fit.tau2.tau2) / tau2_0).max(0.0))
        }
        _ => None,
    };
    let columns: Vec<usize> = (1..design.x.ncols()).collect();
    let omnibus = omnibus(&fit, &columns);
    design_warnings(&design, &mut warnings);
    if fit.coefficients.iter().any(|c| !c.se.is_finite()) {
        return Err(Error::Numerical(
            "the coefficients' standard errors could not be computed".into(),
        ));
    }
    Ok(Explanation {
        design,
        fit,
        tau2_intercept_only: tau2_0,
        r2,
        omnibus,
        warnings,
        dependent: None,
    })
}
