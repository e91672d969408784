//! Maximum likelihood.

use super::{Tau2Fit, dl, likelihood::maximize, sj};
use crate::error::Result;
use crate::pool::data::MetaData;

/// ML estimate of τ² by Fisher scoring (truncated at 0) from the DerSimonian–Laird and the
/// Sidik–Jonkman values, keeping the higher maximum.
/// Biased downwards with few studies (it ignores the degrees of freedom used by the
/// fixed effects).
///
/// # References
/// Hardy, R. J., & Thompson, S. G. (1996). A likelihood approach to meta-analysis with
/// random effects. *Statistics in Medicine*, 15(6), 619–629.
/// Viechtbauer, W. (2005). *Journal of Educational and Behavioral Statistics*, 30(3), 261–293.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let starts = [dl::estimate(d)?.tau2, sj::estimate(d)?.tau2];
    maximize(d, &starts, false)
}
