//! Profile-likelihood intervals for the two variance components and the likelihood-ratio
//! test of τ²_cluster = 0.

use super::data::{NestedData, evaluate};
use super::{MultilevelFit, maximize, maximize_to};

/// Relative tolerance of the component maximized out at each point of a profile: the
/// profile's error is of the order of its square.
const PROFILE_INNER_TOLERANCE: f64 = 1e-6;
use crate::dist::{chi2_quantile, chi2_sf};
use crate::error::Result;
use crate::level::Level;
use crate::numeric::{RootStop, brent_root};
use serde::Serialize;

/// Doublings allowed while looking for an upper end beyond which the profile falls below
/// its threshold.
const MAX_DOUBLINGS: usize = 60;

/// Root-search iterations for an interval end.
const MAX_ROOT_ITERATIONS: usize = 200;

/// A profile-likelihood interval of a variance component.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ComponentInterval {
    /// Lower end (0 when the profile at 0 lies within the threshold).
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
    /// False when a root search or the search for an upper bracket ran out.
    pub converged: bool,
}

/// A likelihood-ratio test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LikelihoodRatio {
    /// 2 (ℓ_full − ℓ_reduced), at least 0.
    pub statistic: f64,
    /// Degrees of freedom of the χ² part of the reference distribution.
    pub df: f64,
    /// P value from the 50:50 mixture of χ²₀ and χ²₁ (the null value lies on the boundary
    /// of the parameter space).
    pub p: f64,
}

/// The profile-likelihood intervals at `level` of τ²_cluster and (when identified)
/// τ²_within: the values whose profile log-likelihood lies within χ²₁(level)/2 of the
/// maximum, the other component maximized out.
///
/// # References
/// Hardy, R. J., & Thompson, S. G. (1996). A likelihood approach to meta-analysis with
/// random effects. *Statistics in Medicine*, 15(6), 619–629.
pub fn component_intervals(
    d: &NestedData,
    fit: &MultilevelFit,
    level: Level,
) -> Result<[Option<ComponentInterval>; 2]> {
    let (scaled, s) = d.rescaled();
    let theta = [fit.tau2_cluster / s, fit.tau2_within / s];
    let r = fit.options.sampling_correlation;
    let at_top = evaluate(&scaled, r, theta, fit.options.restricted, true)?;
    let top = at_top.log_lik;
    let half_width = chi2_quantile(level.value(), 1.0);
    let threshold = top - 0.5 * half_width;
    // The Wald-type half-widths from the expected information: where the search for each
    // end starts (the profile's ends lie near them when the likelihood is near quadratic).
    let [[a, b], [_, c]] = at_top.info;
    let det = a * c - b * b;
    let steps = if fit.within_identified && det > 0.0 {
        [(c / det).sqrt(), (a / det).sqrt()]
    } else {
        [(1.0 / a).sqrt(), 0.0]
    }
    .map(|se| half_width.sqrt() * se);
    let mut out = [None, None];
    for (i, slot) in out.iter_mut().enumerate() {
        if i == 1 && !fit.within_identified {
            continue;
        }
        // Each point's maximization starts where the last one ended (the root search
        // moves in small steps near its end).
        let mut last = theta;
        let profile = |t: f64| -> f64 {
            let mut fixed = [None, None];
            fixed[i] = Some(t);
            if !fit.within_identified {
                fixed[1] = Some(0.0);
            }
            match maximize_to(&scaled, &fit.options, last, fixed, PROFILE_INNER_TOLERANCE) {
                Ok(m) => {
                    last = m.theta;
                    m.log_lik - threshold
                }
                Err(_) => f64::NAN,
            }
        };
        *slot = Some(interval(profile, theta[i], steps[i]).scaled(s));
    }
    Ok(out)
}

/// The lower end: 0 when the profile at 0 lies within the threshold, else the root in a
/// bracket found by stepping down from the estimate.
fn lower_end(
    f: &mut impl FnMut(f64) -> f64,
    at: f64,
    step: f64,
    xtol: f64,
    converged: &mut bool,
) -> f64 {
    if at <= 0.0 {
        return 0.0;
    }
    let mut hi = at;
    let mut lo = at - step;
    let mut grow = step;
    for _ in 0..MAX_DOUBLINGS {
        if lo <= 0.0 {
            if f(0.0) >= 0.0 {
                return 0.0;
            }
            lo = 0.0;
            break;
        }
        if outside(f(lo)) {
            break;
        }
        hi = lo;
        grow *= 1.5;
        lo -= grow;
    }
    match brent_root(&mut *f, lo, hi, xtol, MAX_ROOT_ITERATIONS) {
        Some(root) => {
            *converged &= root.stop == RootStop::Converged;
            root.x
        }
        None => {
            *converged = false;
            lo.max(0.0)
        }
    }
}

/// True when a profile value (minus its threshold) lies outside the interval, or could not
/// be computed.
fn outside(value: f64) -> bool {
    value.is_nan() || value < 0.0
}

impl ComponentInterval {
    fn scaled(self, s: f64) -> ComponentInterval {
        ComponentInterval {
            lower: self.lower * s,
            upper: self.upper * s,
            ..self
        }
    }
}

/// The interval where `f` (the profile minus its threshold, positive at `at`) is ≥ 0;
/// `step` is a first guess at the distance from `at` to either end.
fn interval(mut f: impl FnMut(f64) -> f64, at: f64, step: f64) -> ComponentInterval {
    let scale = at.max(1e-2);
    // Interval ends are shown to three significant digits: 1e-6 of the scale is ample.
    let xtol = 1e-6 * scale;
    let step = if step.is_finite() && step > 0.0 {
        step
    } else {
        scale
    };
    let mut converged = true;
    let lower = lower_end(&mut f, at, step, xtol, &mut converged);
    // The upper end: step out from the estimate until the profile falls below its
    // threshold, the step growing by half each time.
    let mut lo = at;
    let mut hi = at + step;
    let mut grow = step;
    let mut bracketed = false;
    for _ in 0..MAX_DOUBLINGS {
        // A point whose profile could not be computed ends the search as if outside
        // (the root search then fails and the interval is marked not converged).
        if outside(f(hi)) {
            bracketed = true;
            break;
        }
        lo = hi;
        grow *= 1.5;
        hi += grow;
    }
    let upper = if !bracketed {
        converged = false;
        f64::INFINITY
    } else {
        match brent_root(&mut f, lo, hi, xtol, MAX_ROOT_ITERATIONS) {
            Some(root) => {
                converged &= root.stop == RootStop::Converged;
                root.x
            }
            None => {
                converged = false;
                hi
            }
        }
    };
    ComponentInterval {
        lower,
        upper,
        converged,
    }
}

/// The likelihood-ratio test of τ²_cluster = 0 against τ²_cluster > 0: the model refitted
/// with τ²_cluster held at 0 (its rows then differ only within their clusters); on the
/// boundary, the statistic follows a 50:50 mixture of χ²₀ and χ²₁.
///
/// # References
/// Self, S. G., & Liang, K.-Y. (1987). Asymptotic properties of maximum likelihood
/// estimators and likelihood ratio tests under nonstandard conditions. *Journal of the
/// American Statistical Association*, 82(398), 605–610.
pub fn cluster_test(d: &NestedData, fit: &MultilevelFit) -> Result<LikelihoodRatio> {
    let (scaled, s) = d.rescaled();
    let theta = [fit.tau2_cluster / s, fit.tau2_within / s];
    let r = fit.options.sampling_correlation;
    let full = evaluate(&scaled, r, theta, fit.options.restricted, false)?.log_lik;
    let within = (!fit.within_identified).then_some(0.0);
    let reduced = maximize(&scaled, &fit.options, theta, [Some(0.0), within])?.log_lik;
    // A difference within rounding of the two maxima (they agree to about 1e-12 of the
    // log-likelihood) is no evidence at all: the statistic is then 0.
    let raw = 2.0 * (full - reduced);
    let statistic = if raw <= 1e-9 * full.abs().max(1.0) {
        0.0
    } else {
        raw
    };
    let p = if statistic > 0.0 {
        0.5 * chi2_sf(statistic, 1.0)
    } else {
        1.0
    };
    Ok(LikelihoodRatio {
        statistic,
        df: 1.0,
        p,
    })
}
