//! DerSimonian–Laird.

use super::Tau2Fit;
use crate::error::Result;
use crate::pool::data::MetaData;

/// DerSimonian–Laird estimate: τ² = max(0, (Q − (k − p)) / tr P), with Q and P from the
/// common-effect weights 1/vᵢ (for the intercept-only model tr P = Σw − Σw²/Σw).
///
/// # References
/// DerSimonian, R., & Laird, N. (1986). Meta-analysis in clinical trials. *Controlled
/// Clinical Trials*, 7(3), 177–188.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let fit = d.fit_at(0.0)?;
    let df = (d.k() - d.p()) as f64;
    let tr_p = fit.trace_p(d.design());
    Ok(Tau2Fit::closed_form((fit.q - df) / tr_p))
}
