//! Restricted maximum likelihood.

use super::{Tau2Fit, dl, likelihood::maximize, sj};
use crate::error::Result;
use crate::pool::data::MetaData;

/// REML estimate of τ²: maximizes the likelihood of the residuals after the fixed
/// effects are removed, by Fisher scoring (truncated at 0) from the DerSimonian–Laird and
/// the Sidik–Jonkman values, keeping the higher maximum (the likelihood can have two).
///
/// # References
/// Viechtbauer, W. (2005). Bias and efficiency of meta-analytic variance estimators in
/// the random-effects model. *Journal of Educational and Behavioral Statistics*, 30(3),
/// 261–293.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let starts = [dl::estimate(d)?.tau2, sj::estimate(d)?.tau2];
    maximize(d, &starts, true)
}
