//! The Q-profile confidence interval for τ².

use super::data::MetaData;
use super::tau2::Termination;
use super::tau2::{bracket_decreasing, root_of_q};
use crate::dist::chi2_quantile;
use crate::error::Result;
use crate::level::Level;
use serde::Serialize;

/// A confidence interval for τ² from the Q-profile method.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Tau2Interval {
    /// Lower end (0 when Q(0) is below the upper χ² quantile).
    pub lower: f64,
    /// Upper end (0 when Q(0) is below the lower χ² quantile).
    pub upper: f64,
    /// True when the lower end was set to the boundary 0 rather than solved for.
    pub lower_at_zero: bool,
    /// True when even the upper end is 0: the studies are more alike than sampling
    /// error predicts.
    pub upper_at_zero: bool,
    /// False when a root search stopped at its iteration limit.
    pub converged: bool,
}

/// Q-profile CI: the set of τ² for which the generalized Q statistic
/// Q(τ²) = Σ (yᵢ − xᵢβ̂(τ²))²/(vᵢ + τ²) lies between the α/2 and 1 − α/2 quantiles of
/// χ² with k − p df. Q(τ²) decreases in τ², so each end is one root.
///
/// # References
/// Viechtbauer, W. (2007). Confidence intervals for the amount of heterogeneity in
/// meta-analysis. *Statistics in Medicine*, 26(1), 37–52.
pub fn q_profile(d: &MetaData, level: Level) -> Result<Tau2Interval> {
    // Work on data rescaled by the median variance (tolerances are relative to it).
    let (scaled, s) = d.rescaled();
    let d = &scaled;
    let df = (d.k() - d.p()) as f64;
    let q_hi = chi2_quantile(level.upper(), df);
    let q_lo = chi2_quantile(level.tail(), df);
    let q0 = d.q_at(0.0)?;
    let mut converged = true;
    let mut solve = |target: f64| -> Result<f64> {
        let hi = bracket_decreasing(d, target)?;
        let (t, _, term) = root_of_q(d, target, 0.0, hi)?;
        if term == Termination::IterationLimit {
            converged = false;
        }
        Ok(t)
    };
    let (lower, lower_at_zero) = if q0 <= q_hi {
        (0.0, true)
    } else {
        (solve(q_hi)?, false)
    };
    let (upper, upper_at_zero) = if q0 <= q_lo {
        (0.0, true)
    } else {
        (solve(q_lo)?, false)
    };
    Ok(Tau2Interval {
        lower: lower * s,
        upper: upper * s,
        lower_at_zero,
        upper_at_zero,
        converged,
    })
}
