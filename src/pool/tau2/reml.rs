//! Restricted maximum likelihood.

use super::{Tau2Fit, dl, likelihood::fisher_scoring};
use crate::error::Result;
use crate::pool::data::MetaData;

/// REML estimate of τ²: maximizes the likelihood of the residuals after the fixed
/// effects are removed, by Fisher scoring from the DerSimonian–Laird value, truncated
/// at 0.
///
/// # References
/// Viechtbauer, W. (2005). Bias and efficiency of meta-analytic variance estimators in
/// the random-effects model. *Journal of Educational and Behavioral Statistics*, 30(3),
/// 261–293.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let start = dl::estimate(d)?.tau2;
    fisher_scoring(d, start, true)
}
