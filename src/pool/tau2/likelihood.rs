//! Fisher scoring for the (restricted) likelihood of the random-effects model, shared
//! by the ML and REML estimators.

use super::{TAU2_FLOOR, TAU2_MAX_ITERATIONS, TAU2_TOLERANCE, Tau2Fit, Termination};
use crate::error::{Error, Result};
use crate::pool::data::{MetaData, WeightedFit, cross_products};

/// Step halvings allowed when a scoring step lowers the likelihood.
const MAX_HALVINGS: usize = 60;

/// The (restricted) log-likelihood without its constant.
fn log_lik(d: &MetaData, fit: &WeightedFit, tau2: f64, restricted: bool) -> f64 {
    let sum_log: f64 = d.v().iter().map(|vi| (vi + tau2).ln()).sum();
    let mut ll = -0.5 * (sum_log + fit.q);
    if restricted {
        ll -= 0.5 * fit.log_det_xtwx;
    }
    ll
}

/// The derivatives of the (restricted) log-likelihood in τ² at the current fit.
struct Derivatives {
    /// The score, dℓ/dτ².
    score: f64,
    /// The expected (Fisher) information, E[−d²ℓ/dτ²].
    expected: f64,
    /// The observed information, −d²ℓ/dτ² (negative away from a maximum).
    observed: f64,
}

/// Score, expected and observed information for τ² at the current fit.
///
/// With u = Py = W e (e the weighted fit's residuals) and, for ML, P = W − WX A XᵀW
/// replaced by W in the traces:
/// ML: score = ½(Σw²e² − Σw), expected = ½Σw², observed = yᵀPPPy − ½Σw².
/// REML: score = ½(yᵀPPy − tr P), expected = ½ tr(PP), observed = yᵀPPPy − ½ tr(PP),
/// with tr P = Σw − tr(A·XᵀW²X), tr(PP) = Σw² − 2tr(A·XᵀW³X) + tr((A·XᵀW²X)²),
/// A = (XᵀWX)⁻¹, yᵀPPy = Σw²e² and yᵀPPPy = uᵀPu = Σw³e² − bᵀAb with b = XᵀWu —
/// all O(k·p²). (dP/dτ² = −PP gives the second derivatives.)
fn derivatives(d: &MetaData, fit: &WeightedFit, restricted: bool) -> Derivatives {
    let (mut ypp_y, mut sum_w, mut sum_w2, mut w3e2) = (0.0, 0.0, 0.0, 0.0);
    for (w, e) in fit.w.iter().zip(&fit.resid) {
        let w2 = w * w;
        ypp_y += w2 * e * e;
        w3e2 += w2 * w * e * e;
        sum_w += w;
        sum_w2 += w2;
    }
    // b = XᵀW u = Σ xᵢ wᵢ² eᵢ.
    let x = d.x();
    let b = nalgebra::DVector::from_fn(x.ncols(), |j, _| {
        x.column(j)
            .iter()
            .zip(fit.w.iter().zip(&fit.resid))
            .map(|(xi, (w, e))| xi * w * w * e)
            .sum::<f64>()
    });
    let a = &fit.xtwx_inv;
    let ypppy = w3e2 - (b.transpose() * a * &b)[(0, 0)];
    if !restricted {
        let expected = 0.5 * sum_w2;
        return Derivatives {
            score: 0.5 * (ypp_y - sum_w),
            expected,
            observed: ypppy - expected,
        };
    }
    let w2: Vec<f64> = fit.w.iter().map(|w| w * w).collect();
    let w3: Vec<f64> = fit.w.iter().zip(&w2).map(|(w, w2)| w * w2).collect();
    let [b2, b3] = cross_products(d.design(), [&w2, &w3]);
    let ab2 = a * b2;
    let ab3 = a * b3;
    let tr_p = sum_w - ab2.trace();
    let tr_pp = sum_w2 - 2.0 * ab3.trace() + (&ab2 * &ab2).trace();
    Derivatives {
        score: 0.5 * (ypp_y - tr_p),
        expected: 0.5 * tr_pp,
        observed: ypppy - 0.5 * tr_pp,
    }
}

/// Maximize the (restricted) likelihood over τ² ≥ 0 by Fisher scoring from several
/// starting values (the likelihood can have more than one local maximum), keeping the
/// highest maximum found.
pub(crate) fn maximize(d: &MetaData, starts: &[f64], restricted: bool) -> Result<Tau2Fit> {
    let mut best: Option<(Tau2Fit, f64)> = None;
    let mut tried: Vec<f64> = Vec::new();
    for &s in starts {
        let s = s.max(0.0);
        if !s.is_finite()
            || tried
                .iter()
                .any(|t| (t - s).abs() <= TAU2_TOLERANCE * t.max(1.0))
        {
            continue;
        }
        tried.push(s);
        let (fit, ll) = fisher_scoring(d, s, restricted)?;
        let better = match &best {
            None => true,
            Some((b, bll)) => {
                ll > *bll + 1e-12 * bll.abs().max(1.0) || (!b.converged() && fit.converged())
            }
        };
        if better {
            let iterations = best.map(|(b, _)| b.iterations).unwrap_or(0) + fit.iterations;
            best = Some((Tau2Fit { iterations, ..fit }, ll));
        } else if let Some((b, _)) = &mut best {
            b.iterations += fit.iterations;
        }
    }
    best.map(|(f, _)| f)
        .ok_or_else(|| Error::Numerical("no starting value for τ² could be used".into()))
}

/// Maximize the (restricted) likelihood over τ² ≥ 0 by Newton steps where the
/// likelihood is concave (observed information positive: quadratic convergence) and
/// Fisher-scoring steps elsewhere, each with step halving so that the likelihood never
/// falls; returns the fit and the log-likelihood reached. (Fisher scoring alone converges
/// only linearly, and very slowly when a few precise studies disagree with many imprecise
/// ones.)
fn fisher_scoring(d: &MetaData, start: f64, restricted: bool) -> Result<(Tau2Fit, f64)> {
    let mut tau2 = start.max(0.0);
    let mut fit = d.fit_at(tau2)?;
    let mut ll = log_lik(d, &fit, tau2, restricted);
    for it in 1..=TAU2_MAX_ITERATIONS {
        let Derivatives {
            score,
            expected,
            observed,
        } = derivatives(d, &fit, restricted);
        if expected.is_nan() || expected <= 0.0 || !score.is_finite() {
            return Err(Error::Numerical(format!(
                "the τ² likelihood could not be evaluated at τ² = {tau2} (information {expected})"
            )));
        }
        let info = if observed.is_finite() && observed > 0.0 {
            observed
        } else {
            expected
        };
        let mut step = score / info;
        let mut next = (tau2 + step).max(0.0);
        let mut next_fit = d.fit_at(next)?;
        let mut next_ll = log_lik(d, &next_fit, next, restricted);
        let mut halvings = 0;
        while next_ll < ll - 1e-12 * ll.abs().max(1.0) && halvings < MAX_HALVINGS {
            step *= 0.5;
            next = (tau2 + step).max(0.0);
            next_fit = d.fit_at(next)?;
            next_ll = log_lik(d, &next_fit, next, restricted);
            halvings += 1;
        }
        let change = (next - tau2).abs();
        tau2 = next;
        fit = next_fit;
        ll = next_ll;
        if change < TAU2_TOLERANCE * tau2.max(TAU2_FLOOR) {
            let fit = Tau2Fit {
                tau2,
                iterations: it,
                termination: Termination::Converged,
                at_zero: tau2 == 0.0,
            };
            return Ok((fit, ll));
        }
    }
    let fit = Tau2Fit {
        tau2,
        iterations: TAU2_MAX_ITERATIONS,
        termination: Termination::IterationLimit,
        at_zero: tau2 == 0.0,
    };
    Ok((fit, ll))
}
