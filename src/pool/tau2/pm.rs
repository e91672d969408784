//! Paule–Mandel.

use super::{TAU2_FLOOR, TAU2_MAX_ITERATIONS, TAU2_TOLERANCE, Tau2Fit, Termination};
use crate::error::{Error, Result};
use crate::numeric::{RootStop, brent_root};
use crate::pool::data::MetaData;

/// Paule–Mandel estimate: the τ² at which the generalized Q statistic,
/// Σ (yᵢ − xᵢβ̂)²/(vᵢ + τ²), equals its expectation k − p; 0 when Q(0) ≤ k − p. Q is
/// decreasing in τ², so the root is bracketed and found by Brent's method.
///
/// # References
/// Paule, R. C., & Mandel, J. (1982). Consensus values and weighting factors. *Journal
/// of Research of the National Bureau of Standards*, 87(5), 377–385.
pub(super) fn estimate(d: &MetaData) -> Result<Tau2Fit> {
    let df = (d.k() - d.p()) as f64;
    let q0 = d.q_at(0.0)?;
    if q0 <= df {
        return Ok(Tau2Fit {
            tau2: 0.0,
            iterations: 1,
            termination: Termination::Converged,
            at_zero: true,
        });
    }
    let upper = bracket_decreasing(d, df)?;
    let root = root_of_q(d, df, 0.0, upper)?;
    Ok(Tau2Fit {
        tau2: root.0,
        iterations: root.1,
        termination: root.2,
        at_zero: root.0 == 0.0,
    })
}

/// An upper τ² at which Q(τ²) < target (Q decreasing to 0 as τ² grows).
pub(crate) fn bracket_decreasing(d: &MetaData, target: f64) -> Result<f64> {
    let spread = {
        let n = d.k() as f64;
        let mean = d.y().iter().sum::<f64>() / n;
        d.y().iter().map(|y| (y - mean).powi(2)).sum::<f64>() / n
    };
    let vmax = d.v().iter().copied().fold(0.0, f64::max);
    let mut hi = spread.max(vmax).max(1e-8);
    for _ in 0..200 {
        if d.q_at(hi)? < target {
            return Ok(hi);
        }
        hi *= 4.0;
    }
    Err(Error::Numerical(
        "could not bracket τ²: the generalized Q statistic did not fall below its target".into(),
    ))
}

/// τ² in [lo, hi] at which Q(τ²) = target, with its evaluation count and termination.
pub(crate) fn root_of_q(
    d: &MetaData,
    target: f64,
    lo: f64,
    hi: f64,
) -> Result<(f64, usize, Termination)> {
    let mut failure = None;
    let f = |t: f64| match d.q_at(t) {
        Ok(q) => q - target,
        Err(e) => {
            failure.get_or_insert(e);
            f64::NAN
        }
    };
    // Brent adds a relative tolerance of 2ε|τ²| to this absolute one (rescaled units).
    let xtol = TAU2_TOLERANCE * TAU2_FLOOR;
    let root = brent_root(f, lo, hi, xtol, TAU2_MAX_ITERATIONS);
    if let Some(e) = failure {
        return Err(e);
    }
    let root = root.ok_or_else(|| {
        Error::Numerical("the generalized Q statistic did not change sign over its bracket".into())
    })?;
    let termination = match root.stop {
        RootStop::Converged => Termination::Converged,
        RootStop::IterationLimit => Termination::IterationLimit,
    };
    Ok((root.x.max(0.0), root.iterations, termination))
}
