//! Sidik–Jonkman.

use super::Tau2Fit;
use crate::error::Result;
use crate::pool::data::MetaData;

/// Sidik–Jonkman estimate: from a crude start τ₀² = RSS_OLS / k, τ² = τ₀² · Q(τ₀²) / (k − p)
/// with Q(τ₀²) the weighted residual sum of squares under weights 1/(vᵢ + τ₀²). Always
/// positive unless the effects fit the model exactly.
///
/// # References
/// Sidik, K., & Jonkman, J. N. (2005). Simple heterogeneity variance estimation for
/// meta-analysis. *Journal of the Royal Statistical Society, Series C*, 54(2), 367–384.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let ols = d.fit_unweighted()?;
    let start = ols.q / d.k() as f64;
    // Exact fit (e.g. identical effects): the start is zero and so is the estimate.
    let scale: f64 = d.y().iter().map(|y| y.abs()).fold(0.0, f64::max).max(1.0);
    if start <= (f64::EPSILON * scale).powi(2) * d.k() as f64 {
        return Ok(Tau2Fit::closed_form(0.0));
    }
    let q = d.q_at(start)?;
    let df = (d.k() - d.p()) as f64;
    Ok(Tau2Fit::closed_form(start * q / df))
}
