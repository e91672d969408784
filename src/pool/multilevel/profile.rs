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
    // The two components' intervals are searched side by side.
    let one = |i: usize| -> Option<ComponentInterval> {
        if i == 1 && !fit.within_identified {
            return None;
        }
        // Each point's maximization starts where the last one ended (the root search
        // moves in small steps near its end).
        let mut last = theta;
        // The profile minus its threshold, and its slope: at the maximum over the other
        // component, the score of this one (the other's score is 0 there, or it is held on
        // its boundary).
        let profile = |t: f64| -> (f64, f64) {
            let mut fixed = [None, None];
            fixed[i] = Some(t);
            if !fit.within_identified {
                fixed[1] = Some(0.0);
            }
            match maximize_to(&scaled, &fit.options, last, fixed, PROFILE_INNER_TOLERANCE) {
                Ok(m) => {
                    last = m.theta;
                    (m.log_lik - threshold, m.score[i])
                }
                Err(_) => (f64::NAN, f64::NAN),
            }
        };
        Some(interval(profile, theta[i], steps[i]).scaled(s))
    };
    let (cluster, within) = rayon::join(|| one(0), || one(1));
    let out = [cluster, within];
    Ok(out)
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

/// The interval where `f` (the profile minus its threshold, positive at `at`, with its
/// slope) is ≥ 0; `step` is a first guess at the distance from `at` to either end.
fn interval(mut f: impl FnMut(f64) -> (f64, f64), at: f64, step: f64) -> ComponentInterval {
    let scale = at.max(1e-2);
    // Interval ends are shown to three significant digits: 1e-6 of the scale is ample.
    let xtol = 1e-6 * scale;
    let step = if step.is_finite() && step > 0.0 {
        step
    } else {
        scale
    };
    let mut converged = true;
    let lower = if at <= 0.0 {
        0.0
    } else {
        end(&mut f, at, -step, xtol, &mut converged)
    };
    let upper = end(&mut f, at, step, xtol, &mut converged);
    ComponentInterval {
        lower,
        upper,
        converged,
    }
}

/// One end of the interval, searched from `at` in the direction of `step`: Newton steps on
/// the profile (its slope is known at every point), kept within the bracket once a point
/// outside is found and bisecting when a step would leave it; before that, a step may move
/// at most a growing distance beyond the last point inside. The lower end stops at 0 when
/// the profile at 0 lies within the threshold; an upper end never bracketed is infinite
/// (and marked not converged).
fn end(
    f: &mut impl FnMut(f64) -> (f64, f64),
    at: f64,
    step: f64,
    xtol: f64,
    converged: &mut bool,
) -> f64 {
    let down = step < 0.0;
    let mut inside = at;
    let mut out: Option<f64> = None;
    let mut reach = step.abs();
    let mut t = if down {
        (at + step).max(0.0)
    } else {
        at + step
    };
    for _ in 0..MAX_ROOT_ITERATIONS {
        let (value, slope) = f(t);
        // An end set by a point whose profile could not be computed is not a root.
        if value.is_nan() {
            *converged = false;
        }
        if outside(value) {
            out = Some(t);
        } else {
            if down && t <= 0.0 {
                return 0.0;
            }
            inside = t;
        }
        let newton = t - value / slope;
        let next = match out {
            Some(o) => {
                let (a, b) = (inside.min(o), inside.max(o));
                if newton.is_finite() && newton > a && newton < b {
                    newton
                } else {
                    0.5 * (a + b)
                }
            }
            None => {
                let limit = if down {
                    (inside - reach).max(0.0)
                } else {
                    inside + reach
                };
                let outward = if down {
                    newton < inside
                } else {
                    newton > inside
                };
                let within = if down {
                    newton >= limit
                } else {
                    newton <= limit
                };
                if newton.is_finite() && outward && within {
                    newton
                } else {
                    reach *= 2.0;
                    limit
                }
            }
        };
        if (next - t).abs() <= xtol {
            return next;
        }
        if !down && out.is_none() && reach > step.abs() * 2f64.powi(MAX_DOUBLINGS as i32) {
            *converged = false;
            return f64::INFINITY;
        }
        t = next;
    }
    *converged = false;
    t
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
    // Held at τ²_cluster = 0, the within-cluster component takes up about what both
    // components held: the search starts there.
    let start = [0.0, theta[0] + theta[1]];
    let reduced = maximize(&scaled, &fit.options, start, [Some(0.0), within])?.log_lik;
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

#[cfg(test)]
mod tests {
    use super::*;

    /// A skewed profile with known ends: ℓ(t) = 2 ln t − t (maximum at t = 2), threshold
    /// ℓ(2) − 1, so the ends solve 2 ln t − t = 2 ln 2 − 3.
    #[test]
    fn newton_ends_match_the_roots_of_a_skewed_profile() {
        let threshold = 2.0 * 2f64.ln() - 2.0 - 1.0;
        let f = |t: f64| (2.0 * t.ln() - t - threshold, 2.0 / t - 1.0);
        let i = interval(f, 2.0, 0.5);
        assert!(i.converged);
        for end in [i.lower, i.upper] {
            assert!((2.0 * end.ln() - end - threshold).abs() < 1e-9, "{end}");
        }
        assert!(i.lower < 2.0 && i.upper > 2.0);
    }

    #[test]
    fn a_profile_within_the_threshold_at_zero_gives_a_lower_end_of_zero() {
        // ℓ(t) = −(t − 0.1)², threshold −1: the profile at 0 lies within it.
        let f = |t: f64| (1.0 - (t - 0.1) * (t - 0.1), -2.0 * (t - 0.1));
        let i = interval(f, 0.1, 0.3);
        assert_eq!(i.lower, 0.0);
        assert!((i.upper - 1.1).abs() < 1e-9 && i.converged);
    }

    #[test]
    fn a_profile_that_never_falls_below_its_threshold_has_an_infinite_upper_end() {
        let f = |t: f64| (1.0 / (1.0 + t), -1.0 / (1.0 + t).powi(2));
        let i = interval(f, 1.0, 0.5);
        assert!(i.upper.is_infinite() && !i.converged);
    }

    #[test]
    fn an_uncomputable_point_is_treated_as_outside() {
        // NaN beyond 3: the search bisects back into the computable part and ends at 3.
        let f = |t: f64| {
            if t > 3.0 {
                (f64::NAN, f64::NAN)
            } else {
                (1.0, 0.0)
            }
        };
        let i = interval(f, 1.0, 0.5);
        assert!((i.upper - 3.0).abs() < 1e-5, "{}", i.upper);
        assert!(
            !i.converged,
            "an end found only by failures is not converged"
        );
    }
}
