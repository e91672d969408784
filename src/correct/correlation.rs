//! Spearman's correction of a correlation for unreliability.

use super::reliability::ReliabilitySource;
use super::{parallel_fill, percentile_interval, sensitivity_grid};
use crate::dist::normal_quantile;
use crate::error::{Error, Result};
use crate::level::Level;
use crate::random::draw;
use crate::setting::Setting;
use crate::setting::msg;
use rayon::prelude::*;

/// tanh z as 1 − 2/(e^{2z} + 1): one exponential, about twice as fast as the library
/// tanh in the draw loop, and within 1e-15 of it in absolute terms (the loss of relative
/// precision near z = 0 does not matter for percentiles of corrected correlations).
#[inline]
fn tanh_by_exp(z: f64) -> f64 {
    if z > 20.0 {
        1.0
    } else if z < -20.0 {
        -1.0
    } else {
        1.0 - 2.0 / ((2.0 * z).exp() + 1.0)
    }
}

/// A correlation and the reliabilities of its two scores.
#[derive(Debug, Clone)]
pub struct CorrelationInput {
    /// Observed correlation.
    pub r: f64,
    /// Sample size.
    pub n: u64,
    /// Reliability of x.
    pub rel_x: ReliabilitySource,
    /// Reliability of y.
    pub rel_y: ReliabilitySource,
}

/// A cell of the sensitivity table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SensitivityCell {
    /// Reliability of x.
    pub rel_x: f64,
    /// Reliability of y.
    pub rel_y: f64,
    /// Corrected correlation (`None` beyond ±1).
    pub corrected: Option<f64>,
}

/// The corrected correlation.
#[derive(Debug, Clone)]
pub struct CorrelationCorrection {
    /// Observed r.
    pub observed: f64,
    /// r / √(r_xx r_yy), whatever its size.
    pub corrected_value: f64,
    /// True when |corrected| ≤ 1.
    pub admissible: bool,
    /// Fisher-z interval of r, each end corrected the same way (cut at ±1 and flagged;
    /// `None` when it lies entirely beyond ±1).
    pub ci: Option<(f64, f64)>,
    /// True when an end of `ci` was capped.
    pub ci_capped: bool,
    /// Monte Carlo percentile interval (r and the reliabilities drawn; draws beyond ±1
    /// counted at ±1).
    pub mc_ci: Option<(f64, f64)>,
    /// True for an end of `mc_ci` that is the bound ±1 itself (more than the tail share of
    /// draws beyond it): (lower, upper).
    pub mc_bound: (bool, bool),
    /// Share of draws beyond ±1 (a reliability at or below 0 counts as beyond).
    pub inadmissible_share: f64,
    /// Draws made.
    pub draws: usize,
    /// Seed.
    pub seed: u64,
    /// Corrected r over a grid of reliabilities.
    pub sensitivity: Vec<SensitivityCell>,
}

/// Correct a correlation.
///
/// r_c = r/√(r_xx r_yy) (Spearman 1904); the classical interval corrects the ends of the
/// Fisher-z interval of r (Hunter & Schmidt 2004); the Monte Carlo interval draws
/// z ~ N(atanh r, 1/(n − 3)) and each reliability from its distribution.
///
/// # References
/// Spearman, C. (1904). The proof and measurement of association between two things.
/// *American Journal of Psychology*, 15(1), 72–101.
/// Hunter, J. E., & Schmidt, F. L. (2004). *Methods of meta-analysis: Correcting error and
/// bias in research findings* (2nd ed.). Thousand Oaks, CA: Sage.
pub fn correct_correlation(
    input: &CorrelationInput,
    draws: usize,
    seed: u64,
    level: Level,
    grid_points: usize,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<CorrelationCorrection> {
    check_input(input)?;
    let (rx, ry) = (input.rel_x.point(), input.rel_y.point());
    let corrected_value = input.r / (rx * ry).sqrt();
    let (ci, ci_capped) = classical_interval(input.r, input.n, rx, ry, level);
    let se = 1.0 / (input.n as f64 - 3.0).sqrt();
    let zr = input.r.atanh();
    let mc = monte_carlo(input, zr, se, draws, seed, level, progress);
    Ok(CorrelationCorrection {
        observed: input.r,
        corrected_value,
        admissible: corrected_value.abs() <= 1.0,
        ci,
        ci_capped,
        mc_ci: mc.ci,
        mc_bound: mc.bound,
        inadmissible_share: if draws > 0 {
            mc.inadmissible as f64 / draws as f64
        } else {
            0.0
        },
        draws,
        seed,
        sensitivity: sensitivity(input, level, grid_points),
    })
}

/// The classical interval of a corrected correlation with the reliabilities taken as known:
/// the ends of r's Fisher-z interval divided by √(r_xx r_yy), an end beyond ±1 cut there
/// (the flag says so) and an interval entirely beyond ±1 `None` (Hunter & Schmidt 2004).
pub fn classical_interval(
    r: f64,
    n: u64,
    rx: f64,
    ry: f64,
    level: Level,
) -> (Option<(f64, f64)>, bool) {
    let attenuation = (rx * ry).sqrt();
    let z = normal_quantile(level.upper());
    let se = 1.0 / (n as f64 - 3.0).sqrt();
    let zr = r.atanh();
    let (lo, hi) = (
        (zr - z * se).tanh() / attenuation,
        (zr + z * se).tanh() / attenuation,
    );
    let ci = if lo > 1.0 || hi < -1.0 {
        None
    } else {
        Some((lo.max(-1.0), hi.min(1.0)))
    };
    (ci, lo < -1.0 || hi > 1.0)
}

/// Refuse a correlation not strictly between −1 and 1, or fewer than 4 respondents.
fn check_input(input: &CorrelationInput) -> Result<()> {
    if !(input.r.is_finite() && input.r > -1.0 && input.r < 1.0) {
        return Err(Error::setting(
            Setting::Correlation,
            msg![
                Setting::Correlation,
                format!(" must lie strictly between −1 and 1 (got {})", input.r)
            ],
        ));
    }
    if input.n < 4 {
        return Err(Error::setting(
            Setting::CorrectionN,
            msg![
                Setting::CorrectionN,
                format!(" must be at least 4 (got {})", input.n)
            ],
        ));
    }
    Ok(())
}

/// The Monte Carlo interval of the corrected correlation.
struct MonteCarlo {
    /// Percentile interval (draws beyond ±1 counted at ±1).
    ci: Option<(f64, f64)>,
    /// Whether each end is the bound ±1 itself: (lower, upper).
    bound: (bool, bool),
    /// Draws beyond ±1.
    inadmissible: usize,
}

/// Draw z ~ N(atanh r, se²) and each reliability, and read the percentile interval of
/// the corrected correlations.
fn monte_carlo(
    input: &CorrelationInput,
    zr: f64,
    se: f64,
    draws: usize,
    seed: u64,
    level: Level,
    progress: &(dyn Fn(usize) + Sync),
) -> MonteCarlo {
    let (sx, sy) = (input.rel_x.sampler(), input.rel_y.sampler());
    let mut values = vec![0.0; draws];
    parallel_fill(&mut values, seed, progress, |rng| {
        let r = tanh_by_exp(zr + se * draw::normal(rng));
        let (a, b) = (sx.draw(rng), sy.draw(rng));
        // A reliability at or below 0 makes the correction unbounded: beyond ±1 too.
        if a <= 0.0 || b <= 0.0 {
            return r.signum() * f64::INFINITY;
        }
        r / (a * b).sqrt()
    });
    // Draws beyond ±1 are counted and set at the bound.
    let (below, above) = values
        .par_iter_mut()
        .map(|x| {
            if *x > 1.0 {
                *x = 1.0;
                (0, 1)
            } else if *x < -1.0 {
                *x = -1.0;
                (1, 0)
            } else {
                (0, 0)
            }
        })
        .reduce(|| (0usize, 0usize), |a, b| (a.0 + b.0, a.1 + b.1));
    // Draws beyond a bound sit at the bound; when more than the tail share of draws is
    // there, that end of the interval is the bound itself.
    let tail = level.tail() * draws as f64;
    // When even the interval's far end sits at a bound, the draws say nothing but that
    // the correction is impossible: no interval.
    let ci =
        percentile_interval(&mut values, level.value()).filter(|&(lo, hi)| lo < 1.0 && hi > -1.0);
    MonteCarlo {
        ci,
        bound: (below as f64 > tail, above as f64 > tail),
        inadmissible: below + above,
    }
}

/// The corrected correlation over a grid of both reliabilities.
fn sensitivity(input: &CorrelationInput, level: Level, grid_points: usize) -> Vec<SensitivityCell> {
    let mut sensitivity = Vec::new();
    for a in sensitivity_grid(&input.rel_x, level, grid_points) {
        for b in sensitivity_grid(&input.rel_y, level, grid_points) {
            let c = input.r / (a * b).sqrt();
            sensitivity.push(SensitivityCell {
                rel_x: a,
                rel_y: b,
                corrected: (c.abs() <= 1.0).then_some(c),
            });
        }
    }
    sensitivity
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The draw loop's tanh agrees with the standard library's (libm) to 1e-15.
    #[test]
    fn tanh_by_exp_matches_the_library() {
        for i in -4000..=4000 {
            let z = f64::from(i) / 100.0;
            assert!((tanh_by_exp(z) - z.tanh()).abs() < 1e-15, "{z}");
        }
    }
}
