//! Maximum likelihood.

use super::{Tau2Fit, dl, likelihood::fisher_scoring};
use crate::error::Result;
use crate::pool::data::MetaData;

/// ML estimate of τ² by Fisher scoring from the DerSimonian–Laird value, truncated at 0.
/// Biased downwards with few studies (it ignores the degrees of freedom used by the
/// fixed effects).
///
/// # References
/// Hardy, R. J., & Thompson, S. G. (1996). A likelihood approach to meta-analysis with
/// random effects. *Statistics in Medicine*, 15(6), 619–629.
/// Viechtbauer, W. (2005). *Journal of Educational and Behavioral Statistics*, 30(3), 261–293.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let start = dl::estimate(d)?.tau2;
    fisher_scoring(d, start, false)
}
