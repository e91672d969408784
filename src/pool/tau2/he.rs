//! Hedges' unweighted method of moments.

use super::Tau2Fit;
use crate::error::Result;
use crate::pool::data::MetaData;

/// Hedges' estimate: τ² = max(0, (RSS − Σ vᵢ(1 − hᵢᵢ)) / (k − p)), from the unweighted
/// least-squares fit with hat values hᵢᵢ; for the intercept-only model
/// Σ(yᵢ − ȳ)²/(k − 1) − Σvᵢ/k.
///
/// # References
/// Hedges, L. V., & Olkin, I. (1985). *Statistical Methods for Meta-Analysis*.
/// Orlando, FL: Academic Press.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let fit = d.fit_unweighted()?;
    let x = d.x();
    let p = d.p();
    let mut expected = 0.0;
    for (i, vi) in d.v().iter().enumerate() {
        let mut h = 0.0;
        for a in 0..p {
            for b in 0..p {
                h += x[(i, a)] * fit.xtwx_inv[(a, b)] * x[(i, b)];
            }
        }
        expected += vi * (1.0 - h);
    }
    let df = (d.k() - p) as f64;
    Ok(Tau2Fit::closed_form((fit.q - expected) / df))
}
