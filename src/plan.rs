//! Sample sizes for coefficient alpha: for an interval of a desired width, and for a
//! test with a desired power (Bonett 2002).
//!
//! Both follow from the large-sample variance of ln(1 − α̂), 2k/((k − 1)(n − 2)): an
//! interval [L, U] around a planning value has (1 − L)/(1 − U) = e = exp(2z·SE), so
//! n − 2 = (8k/(k − 1))(z/ln e)²; a test of α₀ against α₁ has power 1 − β when
//! |ln δ| = (z_a + z_b)·SE, δ = (1 − α₀)/(1 − α₁), so n − 2 = (2k/(k − 1))(z_a + z_b)²/(ln δ)².

use crate::dist::normal_quantile;
use crate::error::{Error, Result};

/// A required sample size.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SampleSize {
    /// The smallest whole n that meets the requirement.
    pub n: u64,
    /// The formula's value before rounding up.
    pub exact: f64,
}

fn whole(exact: f64) -> SampleSize {
    SampleSize {
        n: exact.ceil().max(3.0) as u64,
        exact,
    }
}

fn check_items(k: u32) -> Result<()> {
    if k < 2 {
        return Err(Error::InvalidOption("--items must be at least 2".into()));
    }
    Ok(())
}

fn check_coefficient(name: &str, x: f64) -> Result<()> {
    if !(x.is_finite() && x > -1.0 && x < 1.0) {
        return Err(Error::InvalidOption(format!(
            "{name} must lie above −1 and below 1 (got {x})"
        )));
    }
    Ok(())
}

/// n for a confidence interval of width `width` centred on the planning value `alpha`:
/// n = (8k/(k − 1))·(z/ln e)² + 2 with e = (1 − L)/(1 − U), L and U = alpha ∓ width/2.
///
/// # References
/// Bonett, D. G. (2002). Sample size requirements for testing and estimating coefficient
/// alpha. *Journal of Educational and Behavioral Statistics*, 27(4), 335–340.
pub fn n_for_width(alpha: f64, width: f64, k: u32, level: f64) -> Result<SampleSize> {
    check_items(k)?;
    check_coefficient("--planning", alpha)?;
    crate::pool::check_level(level)?;
    let (lo, hi) = (alpha - width / 2.0, alpha + width / 2.0);
    if width.is_nan() || width <= 0.0 || hi >= 1.0 {
        return Err(Error::InvalidOption(format!(
            "--width {width} around {alpha} reaches 1 or more (the interval would be {lo} to {hi}); \
             choose a narrower width"
        )));
    }
    let e = (1.0 - lo) / (1.0 - hi);
    let z = normal_quantile(1.0 - (1.0 - level) / 2.0);
    let kf = f64::from(k);
    Ok(whole(8.0 * kf / (kf - 1.0) * (z / e.ln()).powi(2) + 2.0))
}

/// n for testing α = `null` against the planning value `alternative` with the given
/// power: n = (2k/(k − 1))·(z_a + z_b)²/(ln δ)² + 2, δ = (1 − α₀)/(1 − α₁); z_a is the
/// two-sided (or one-sided) critical value at `significance`.
pub fn n_for_test(
    null: f64,
    alternative: f64,
    k: u32,
    significance: f64,
    power: f64,
    one_sided: bool,
) -> Result<SampleSize> {
    check_items(k)?;
    check_coefficient("--null", null)?;
    check_coefficient("--planning", alternative)?;
    if !(significance > 0.0 && significance < 1.0) {
        return Err(Error::InvalidOption(format!(
            "--significance must lie between 0 and 1 (got {significance})"
        )));
    }
    if !(power > 0.0 && power < 1.0) {
        return Err(Error::InvalidOption(format!(
            "--power must lie between 0 and 1 (got {power})"
        )));
    }
    if null == alternative {
        return Err(Error::InvalidOption(
            "--null and --planning must differ".into(),
        ));
    }
    let za = normal_quantile(
        1.0 - if one_sided {
            significance
        } else {
            significance / 2.0
        },
    );
    let zb = normal_quantile(power);
    let delta = (1.0 - null) / (1.0 - alternative);
    let kf = f64::from(k);
    Ok(whole(
        2.0 * kf / (kf - 1.0) * (za + zb).powi(2) / delta.ln().powi(2) + 2.0,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// ρ = .85, width .10, k = 4 needs n = 88 (issue 4; confirmed with scipy in the fixture).
    #[test]
    fn width_example() {
        assert_eq!(n_for_width(0.85, 0.10, 4, 0.95).unwrap().n, 88);
    }

    #[test]
    fn refuses_impossible_plans() {
        assert!(n_for_width(0.95, 0.2, 4, 0.95).is_err());
        assert!(n_for_test(0.7, 0.7, 10, 0.05, 0.8, false).is_err());
        assert!(n_for_width(0.8, 0.1, 1, 0.95).is_err());
    }
}
