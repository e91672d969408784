//! Reliability from raw item data: alpha and its relatives, omega from the one-factor
//! model, the test of tau-equivalence, intervals, and a plain reading of which coefficient
//! to report.

pub mod alpha;
pub mod bootstrap;
pub mod factor;
pub mod moments;
pub mod read;

pub use read::{ItemData, ItemReadOptions, Missing, read_items};

use crate::error::Result;
use crate::warning::Warning;
use alpha::{
    ItemStatistic, alpha, alpha_standardized, bonett_interval, feldt_interval, item_statistics,
    lambda2,
};
use factor::{
    FactorFit, FactorModel, ModelFitIndices, TauEquivalenceTest, fit_indices, fit_one_factor,
    tau_equivalence_test,
};

/// Significance level of the tau-equivalence test for the reading (common practice).
pub const TAU_TEST_LEVEL: f64 = 0.05;
/// Fit limits for "one factor fits": CFI ≥ 0.95 and RMSEA ≤ 0.06 (Hu & Bentler 1999).
pub const CFI_GOOD: f64 = 0.95;
/// See [`CFI_GOOD`].
pub const RMSEA_GOOD: f64 = 0.06;

/// Which coefficient the reading recommends.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Recommendation {
    /// Alpha and omega agree; either serves.
    Either,
    /// Omega: alpha is a lower bound here.
    Omega,
    /// Neither: one factor does not describe the items.
    CheckDimensionality,
    /// Only alpha is available (two items).
    AlphaOnly,
    /// The one-factor solution is improper (Heywood case); alpha, with caution.
    AlphaWithCaution,
}

/// The one-factor part of an analysis.
#[derive(Debug, Clone)]
pub struct FactorPart {
    /// Congeneric fit.
    pub congeneric: FactorFit,
    /// Tau-equivalent fit.
    pub tau_equivalent: FactorFit,
    /// Test of tau-equivalence.
    pub tau_test: TauEquivalenceTest,
    /// Fit of the one-factor model.
    pub fit: ModelFitIndices,
}

/// Everything `relyard items` reports.
#[derive(Debug, Clone)]
pub struct ItemAnalysis {
    /// Respondents behind the statistics.
    pub n_used: u64,
    /// Number of items.
    pub k: usize,
    /// Coefficient alpha.
    pub alpha: f64,
    /// Standardized alpha.
    pub alpha_standardized: f64,
    /// Guttman's λ2.
    pub lambda2: f64,
    /// Feldt's interval.
    pub alpha_ci_feldt: (f64, f64),
    /// Bonett's interval.
    pub alpha_ci_bonett: (f64, f64),
    /// Confidence level.
    pub level: f64,
    /// Per-item statistics.
    pub item_statistics: Vec<ItemStatistic>,
    /// The one-factor models, or why there are none.
    pub factor: std::result::Result<FactorPart, String>,
    /// Which coefficient to carry forward.
    pub recommendation: Recommendation,
    /// The reading in words.
    pub reading: String,
    /// Warnings.
    pub warnings: Vec<Warning>,
}

impl ItemAnalysis {
    /// Omega, when the one-factor model could be fitted.
    pub fn omega(&self) -> Option<f64> {
        self.factor.as_ref().ok().map(|f| f.congeneric.omega())
    }
}

/// Analyze item data at a confidence level.
pub fn analyze(data: &ItemData, level: f64) -> Result<ItemAnalysis> {
    crate::pool::check_level(level)?;
    let cov = &data.moments.cov;
    let k = data.moments.k();
    let n_used = data.n_used();
    let n = n_used as f64;
    let mut warnings = Vec::new();
    if let Some(i) = (0..k).find(|&i| cov[(i, i)].is_nan() || cov[(i, i)] <= 0.0) {
        return Err(crate::Error::CannotAnalyse(format!(
            "item {} has no variance (every respondent gave the same answer), so reliability \
             cannot be computed; leave it out with --items",
            data.names[i]
        )));
    }
    let a = alpha(cov);
    if a < 0.0 {
        warnings.push(Warning::NegativeAlpha { alpha: a });
    }
    let mean: Vec<f64> = data.moments.mean.iter().copied().collect();
    let stats = item_statistics(&mean, cov);
    let factor = fit_factor(cov, n, &mut warnings);
    let (recommendation, reading) = read(a, factor.as_ref().ok(), &data.names, k);
    Ok(ItemAnalysis {
        n_used,
        k,
        alpha: a,
        alpha_standardized: alpha_standardized(cov),
        lambda2: lambda2(cov),
        alpha_ci_feldt: feldt_interval(a, n, k as f64, level),
        alpha_ci_bonett: bonett_interval(a, n, k as f64, level),
        level,
        item_statistics: stats,
        factor,
        recommendation,
        reading,
        warnings,
    })
}

fn fit_factor(
    cov: &nalgebra::DMatrix<f64>,
    n: f64,
    warnings: &mut Vec<Warning>,
) -> std::result::Result<FactorPart, String> {
    let cong = fit_one_factor(cov, FactorModel::Congeneric).map_err(|e| e.to_string())?;
    let tau = fit_one_factor(cov, FactorModel::TauEquivalent).map_err(|e| e.to_string())?;
    for (name, f) in [
        ("the congeneric one-factor model", &cong),
        ("the tau-equivalent model", &tau),
    ] {
        if !f.stop.converged() {
            warnings.push(Warning::NotConverged {
                what: name.into(),
                iterations: f.iterations,
            });
        }
    }
    if cong.loadings.iter().any(|l| *l < 0.0) {
        warnings.push(Warning::NegativeLoading);
    }
    let k = cov.nrows();
    Ok(FactorPart {
        tau_test: tau_equivalence_test(&cong, &tau, n, k),
        fit: fit_indices(cov, &cong, n),
        congeneric: cong,
        tau_equivalent: tau,
    })
}

fn read(a: f64, f: Option<&FactorPart>, names: &[String], k: usize) -> (Recommendation, String) {
    let Some(f) = f else {
        return (
            Recommendation::AlphaOnly,
            format!(
                "with {k} items the one-factor model is not identified, so only alpha ({}) is \
                 available; it is a lower bound to reliability unless the items are \
                 tau-equivalent",
                crate::report::format::fixed(a, 3)
            ),
        );
    };
    let omega = f.congeneric.omega();
    let fx = |x: f64| crate::report::format::fixed(x, 3);
    if !f.congeneric.heywood.is_empty() {
        let items: Vec<&str> = f
            .congeneric
            .heywood
            .iter()
            .map(|&i| names[i].as_str())
            .collect();
        return (
            Recommendation::AlphaWithCaution,
            format!(
                "the one-factor solution is improper: the uniqueness of {} is at zero (a Heywood \
                 case), so omega ({}) is not trustworthy; report alpha ({}) as a lower bound \
                 and examine those items",
                items.join(", "),
                fx(omega),
                fx(a)
            ),
        );
    }
    let fits = match (f.fit.cfi, f.fit.rmsea) {
        (Some(cfi), Some(rmsea)) => cfi >= CFI_GOOD && rmsea <= RMSEA_GOOD,
        _ => true, // three items: the model fits exactly (0 df)
    };
    if !fits {
        return (
            Recommendation::CheckDimensionality,
            format!(
                "one factor does not describe these items well (CFI {}, RMSEA {}; common limits \
                 CFI ≥ 0.95, RMSEA ≤ 0.06): neither alpha ({}) nor omega ({}) is then the \
                 reliability of a single trait; examine the items' dimensionality before \
                 carrying either into a benchmark or a correction",
                f.fit.cfi.map(fx).unwrap_or_default(),
                f.fit.rmsea.map(fx).unwrap_or_default(),
                fx(a),
                fx(omega)
            ),
        );
    }
    if f.tau_test.p < TAU_TEST_LEVEL {
        let size = if omega - a < 0.01 {
            " — though here the two differ by less than 0.01, so the choice matters little"
        } else {
            ""
        };
        (
            Recommendation::Omega,
            format!(
                "the items are not tau-equivalent (χ²({}) = {}, p {}): their loadings differ, so \
                 alpha ({}) is a lower bound here; report omega ({}) and carry omega into a \
                 benchmark or a correction for measurement error (alpha would over-correct){size}",
                f.tau_test.df,
                crate::report::format::fixed(f.tau_test.chi2, 2),
                crate::report::format::p_value(f.tau_test.p),
                fx(a),
                fx(omega)
            ),
        )
    } else {
        (
            Recommendation::Either,
            format!(
                "tau-equivalence is not rejected (χ²({}) = {}, p {}) and one factor fits: alpha \
                 ({}) and omega ({}) estimate the same reliability; either may be carried into a \
                 benchmark or a correction",
                f.tau_test.df,
                crate::report::format::fixed(f.tau_test.chi2, 2),
                crate::report::format::p_value(f.tau_test.p),
                fx(a),
                fx(omega)
            ),
        )
    }
}
