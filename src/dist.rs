//! Tail areas and quantiles of the reference distributions (normal, t, χ², F).
//!
//! Cumulative distribution functions come from `statrs` (regularized incomplete
//! beta and gamma functions). Quantiles start from `statrs`' inverse (which can be
//! far off in the extreme tails) and are then solved to full precision on the tail area
//! nearest the requested probability; the test suite checks them against scipy
//! (`tests/reference/fixtures/quantiles.json`).

use crate::numeric::brent_root;
use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor, Normal, StudentsT};

fn std_normal() -> Normal {
    Normal::new(0.0, 1.0).expect("the standard normal is valid")
}

/// Accuracy of quantiles: the relative change in x at which the root search stops.
const QUANTILE_XTOL: f64 = 1e-15;

/// The x > 0 at which the tail area nearest `p` equals that of `p`, for a distribution
/// with CDF and survival function given; found by Brent's method on ln x so that tiny
/// and huge quantiles keep full relative accuracy. `x0` is a starting guess.
fn positive_quantile<D: ContinuousCDF<f64, f64>>(d: &D, p: f64, x0: f64) -> f64 {
    if p <= 0.0 {
        return 0.0;
    }
    if p >= 1.0 {
        return f64::INFINITY;
    }
    let lower_tail = p < 0.5;
    let target = if lower_tail { p.ln() } else { (1.0 - p).ln() };
    // Increasing in u for the lower tail, decreasing for the upper: make it increasing.
    let h = |u: f64| {
        let x = u.exp();
        if lower_tail {
            d.cdf(x).ln() - target
        } else {
            target - d.sf(x).ln()
        }
    };
    let u0 = if x0.is_finite() && x0 > 0.0 {
        x0.ln()
    } else {
        0.0
    };
    let (mut lo, mut hi) = (u0 - 0.5, u0 + 0.5);
    let mut step = 1.0;
    while h(lo) > 0.0 && lo > -745.0 {
        lo -= step;
        step *= 2.0;
    }
    step = 1.0;
    while h(hi) < 0.0 && hi < 709.0 {
        hi += step;
        step *= 2.0;
    }
    match brent_root(h, lo, hi, QUANTILE_XTOL, 300) {
        Some(r) => r.x.exp(),
        None => x0,
    }
}

/// Quantile of a distribution symmetric about 0, from its positive quantiles.
fn symmetric_quantile<D: ContinuousCDF<f64, f64>>(d: &D, p: f64) -> f64 {
    if p == 0.5 {
        return 0.0;
    }
    let upper = p.max(1.0 - p);
    let x = positive_quantile(d, upper, d.inverse_cdf(upper));
    if p < 0.5 { -x } else { x }
}

/// Quantile of the standard normal distribution.
pub fn normal_quantile(p: f64) -> f64 {
    symmetric_quantile(&std_normal(), p)
}

/// Upper tail area of the standard normal distribution, P(Z > z).
pub fn normal_sf(z: f64) -> f64 {
    std_normal().sf(z)
}

/// Two-sided p value of a standard normal statistic.
pub fn normal_two_sided_p(z: f64) -> f64 {
    (2.0 * normal_sf(z.abs())).min(1.0)
}

/// Quantile of Student's t distribution with `df` degrees of freedom (df > 0).
pub fn t_quantile(p: f64, df: f64) -> f64 {
    let d = StudentsT::new(0.0, 1.0, df).expect("t with positive df is valid");
    symmetric_quantile(&d, p)
}

/// Upper tail area of Student's t, P(T > t).
pub fn t_sf(t: f64, df: f64) -> f64 {
    StudentsT::new(0.0, 1.0, df)
        .expect("t with positive df is valid")
        .sf(t)
}

/// Two-sided p value of a t statistic.
pub fn t_two_sided_p(t: f64, df: f64) -> f64 {
    (2.0 * t_sf(t.abs(), df)).min(1.0)
}

/// Quantile of the χ² distribution with `df` degrees of freedom (df > 0).
pub fn chi2_quantile(p: f64, df: f64) -> f64 {
    let d = ChiSquared::new(df).expect("chi-squared with positive df is valid");
    positive_quantile(&d, p, d.inverse_cdf(p))
}

/// Upper tail area of the χ² distribution, P(X > x).
pub fn chi2_sf(x: f64, df: f64) -> f64 {
    if x <= 0.0 {
        return 1.0;
    }
    ChiSquared::new(df)
        .expect("chi-squared with positive df is valid")
        .sf(x)
}

/// Quantile of the F distribution with (`d1`, `d2`) degrees of freedom.
pub fn f_quantile(p: f64, d1: f64, d2: f64) -> f64 {
    let d = FisherSnedecor::new(d1, d2).expect("F with positive df is valid");
    positive_quantile(&d, p, d.inverse_cdf(p))
}

/// Lower tail area of the F distribution, P(F ≤ x), computed on its own (not as 1 minus
/// the upper tail) so that tiny lower tails keep their value.
pub fn f_cdf(x: f64, d1: f64, d2: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    FisherSnedecor::new(d1, d2)
        .expect("F with positive df is valid")
        .cdf(x)
}

/// Upper tail area of the F distribution, P(F > x).
pub fn f_sf(x: f64, d1: f64, d2: f64) -> f64 {
    if x <= 0.0 {
        return 1.0;
    }
    FisherSnedecor::new(d1, d2)
        .expect("F with positive df is valid")
        .sf(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Textbook values (any normal/t/χ² table, e.g. Abramowitz & Stegun 1964,
    // Tables 26.1, 26.10 and 26.8), to the digits the tables print.
    #[test]
    fn quantiles_match_printed_tables() {
        assert!((normal_quantile(0.975) - 1.959964).abs() < 1e-6);
        assert!((t_quantile(0.975, 10.0) - 2.228139).abs() < 1e-6);
        assert!((chi2_quantile(0.95, 12.0) - 21.02607).abs() < 1e-5);
        assert!((chi2_quantile(0.025, 12.0) - 4.403789).abs() < 1e-6);
    }

    #[test]
    fn quantile_inverts_cdf() {
        for &df in &[1.0, 2.5, 11.0, 300.0] {
            for &p in &[1e-6f64, 0.025, 0.5, 0.975, 1.0 - 1e-6] {
                // Compare on the smaller tail, relative to its size.
                let tail = p.min(1.0 - p);
                let x = chi2_quantile(p, df);
                let sf = chi2_sf(x, df);
                let back = if p < 0.5 { 1.0 - sf } else { sf };
                let back = if p < 0.5 {
                    ChiSquared::new(df).unwrap().cdf(x)
                } else {
                    back
                };
                assert!((back - tail).abs() < 1e-9 * tail, "df {df} p {p}: {back}");
                let t = t_quantile(p, df);
                let back = if p < 0.5 { t_sf(-t, df) } else { t_sf(t, df) };
                assert!((back - tail).abs() < 1e-9 * tail, "t df {df} p {p}: {back}");
            }
        }
    }
}
