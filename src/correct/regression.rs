//! Errors-in-variables regression: the slopes a regression would have if the
//! predictors were measured without error.

use super::reliability::ReliabilitySource;
use super::{parallel_draws, percentile_interval, sensitivity_grid};
use crate::error::{Error, Result};
use crate::items::moments::Listwise;
use crate::level::Level;
use crate::random::draw;
use nalgebra::{DMatrix, DVector};
use rand::RngExt;

/// A regression and the reliabilities of its variables.
#[derive(Debug, Clone)]
pub struct RegressionInput {
    /// Predictor names.
    pub predictors: Vec<String>,
    /// Outcome name.
    pub outcome: String,
    /// Covariance matrix, predictors first and the outcome last.
    pub cov: DMatrix<f64>,
    /// Sample size.
    pub n: u64,
    /// Reliability of each predictor.
    pub rel: Vec<ReliabilitySource>,
    /// Reliability of the outcome (it changes the standardized slopes and R², not the slopes).
    pub rel_y: Option<ReliabilitySource>,
    /// Complete raw rows (predictors then outcome), for the bootstrap; `None` for a summary.
    pub rows: Option<Vec<f64>>,
    /// True when only correlations are known (slopes are then standardized).
    pub standardized_only: bool,
    /// What happened to the raw data's rows (e.g. respondents left out for missing values).
    pub data_note: Option<String>,
    /// The file the data came from (raw data or a summary).
    pub data_file: Option<String>,
    /// The worksheet read, when the raw data are in a workbook.
    pub sheet_name: Option<String>,
}

/// One fit of the model.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// OLS slopes.
    pub ols: Vec<f64>,
    /// OLS standardized slopes.
    pub ols_standardized: Vec<f64>,
    /// OLS R².
    pub r2_observed: f64,
    /// Corrected slopes, or why there are none.
    pub corrected: std::result::Result<Corrected, String>,
}

/// The corrected part of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct Corrected {
    /// Slopes.
    pub slopes: Vec<f64>,
    /// Standardized on the true-score SDs.
    pub standardized: Vec<f64>,
    /// Share of the outcome's true-score variance explained.
    pub r2: f64,
}

/// β = (S_xx − Λ)⁻¹ s_xy with Λ = diag((1 − ρᵢ) s_ii); standardized slopes on true-score
/// SDs, βⱼ √(ρⱼ s_jj)/√(ρ_y s_yy); R² = βᵀ(S_xx − Λ)β/(ρ_y s_yy).
///
/// # References
/// Fuller, W. A. (1987). *Measurement error models*, section 2.2. New York: Wiley.
pub fn eiv(cov: &DMatrix<f64>, rel: &[f64], rel_y: f64) -> Result<Estimate> {
    let p = rel.len();
    let sxx = cov.view((0, 0), (p, p)).into_owned();
    let sxy = DVector::from_iterator(p, (0..p).map(|i| cov[(i, p)]));
    let syy = cov[(p, p)];
    let chol = sxx.clone().cholesky().ok_or_else(|| {
        Error::cannot("the predictors' covariance matrix is singular (a predictor is constant or a combination of others)")
    })?;
    let b_ols = chol.solve(&sxy);
    let r2_observed = sxy.dot(&b_ols) / syy;
    let ols_standardized = (0..p)
        .map(|j| b_ols[j] * sxx[(j, j)].sqrt() / syy.sqrt())
        .collect();
    let mut m = sxx.clone();
    for j in 0..p {
        m[(j, j)] -= (1.0 - rel[j]) * sxx[(j, j)];
    }
    let corrected = if rel.iter().chain([&rel_y]).any(|r| !(*r > 0.0 && *r <= 1.0)) {
        Err("a reliability is at or below 0".to_string())
    } else {
        match m.clone().cholesky() {
            None => Err(
                "S_xx − Λ is not positive definite: the predictors' true-score covariance matrix \
                 would be impossible"
                    .to_string(),
            ),
            Some(c) => {
                let b = c.solve(&sxy);
                let r2 = b.dot(&(&m * &b)) / (rel_y * syy);
                let standardized: Vec<f64> = (0..p)
                    .map(|j| b[j] * (rel[j] * sxx[(j, j)]).sqrt() / (rel_y * syy).sqrt())
                    .collect();
                if r2 > 1.0 + 1e-12 {
                    Err(format!(
                        "the corrected R² would be {} (above 1)",
                        crate::format::fixed(r2, 3)
                    ))
                } else if standardized.iter().any(|s| s.abs() > 1.0 + 1e-12) && p == 1 {
                    Err("the corrected correlation would exceed 1".to_string())
                } else {
                    Ok(Corrected {
                        slopes: b.iter().copied().collect(),
                        standardized,
                        r2,
                    })
                }
            }
        }
    };
    Ok(Estimate {
        ols: b_ols.iter().copied().collect(),
        ols_standardized,
        r2_observed,
        corrected,
    })
}

/// Intervals for one coefficient.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// SD of the draws.
    pub se: f64,
    /// Percentile interval.
    pub ci: (f64, f64),
}

/// The corrected regression.
#[derive(Debug, Clone)]
pub struct RegressionCorrection {
    /// The point fit.
    pub estimate: Estimate,
    /// For each predictor: the OLS slope's spread over the draws.
    pub ols_spread: Vec<Option<Spread>>,
    /// For each predictor: the corrected slope's spread over the admissible draws.
    pub corrected_spread: Vec<Option<Spread>>,
    /// The same for the standardized corrected slopes.
    pub corrected_standardized_spread: Vec<Option<Spread>>,
    /// Spread of the corrected R².
    pub r2_spread: Option<Spread>,
    /// Share of draws without an admissible correction.
    pub inadmissible_share: f64,
    /// False when the corrected intervals are left out: the point correction is impossible,
    /// or more than the tail share (1 − level)/2 of the draws was.
    pub intervals_determined: bool,
    /// How the intervals were drawn.
    pub method: DrawMethod,
    /// Draws.
    pub draws: usize,
    /// Seed.
    pub seed: u64,
    /// For each predictor, corrected slopes over a grid of its reliability (others at their
    /// point values): (reliability, slopes or None when inadmissible).
    pub sensitivity: Vec<Vec<(f64, Option<Vec<f64>>)>>,
}

/// How a regression correction's intervals were drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum DrawMethod {
    /// Bootstrap samples of the respondents (raw data).
    Bootstrap,
    /// Monte Carlo draws of the covariance matrix (a summary).
    MonteCarlo,
}

impl DrawMethod {
    /// The draws in words.
    pub fn words(self) -> &'static str {
        match self {
            DrawMethod::Bootstrap => "bootstrap samples of the respondents",
            DrawMethod::MonteCarlo => "Monte Carlo draws of the covariance matrix",
        }
    }
}

fn spread(values: &mut [f64], level: Level) -> Option<Spread> {
    if values.len() < 2 {
        return None;
    }
    let n = values.len() as f64;
    let mean = values.iter().sum::<f64>() / n;
    let se = (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    percentile_interval(values, level.value()).map(|ci| Spread { se, ci })
}

/// The exact t intervals of the OLS slopes from a covariance (or correlation) matrix of
/// n respondents: bⱼ ± t(n − p − 1)·SEⱼ, SE² the diagonal of s²(S_xx(n − 1))⁻¹ with the
/// residual variance s² = (S_yy − bᵀS_xy)(n − 1)/(n − p − 1).
///
/// # References
/// Draper, N. R., & Smith, H. (1998). *Applied regression analysis* (3rd ed.). New York:
/// Wiley (chapter 5).
fn ols_t_intervals(cov: &DMatrix<f64>, n: u64, level: Level) -> Vec<Option<Spread>> {
    let m = cov.nrows();
    let p = m - 1;
    let sxx = cov.view((0, 0), (p, p)).into_owned();
    let sxy = cov.view((0, p), (p, 1)).into_owned();
    let syy = cov[(p, p)];
    let (Some(inv), true) = (sxx.clone().try_inverse(), n as usize > p + 1) else {
        return vec![None; p];
    };
    let b = &inv * &sxy;
    let nf = n as f64;
    let df = nf - p as f64 - 1.0;
    let s2 = ((syy - (b.transpose() * &sxy)[(0, 0)]) * (nf - 1.0) / df).max(0.0);
    let t = crate::dist::t_quantile(level.upper(), df);
    (0..p)
        .map(|j| {
            let se = (s2 * inv[(j, j)] / (nf - 1.0)).sqrt();
            se.is_finite().then(|| Spread {
                se,
                ci: (b[j] - t * se, b[j] + t * se),
            })
        })
        .collect()
}

/// Correct a regression, with intervals from `draws` bootstrap samples (raw data) or Monte
/// Carlo draws of the covariance matrix (a summary), the reliabilities drawn too.
pub fn correct_regression(
    input: &RegressionInput,
    draws: usize,
    seed: u64,
    level: Level,
    grid_points: usize,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<RegressionCorrection> {
    let p = input.predictors.len();
    let rel_point: Vec<f64> = input.rel.iter().map(ReliabilitySource::point).collect();
    let rel_y_point = input
        .rel_y
        .as_ref()
        .map(ReliabilitySource::point)
        .unwrap_or(1.0);
    let estimate = eiv(&input.cov, &rel_point, rel_y_point)?;
    let results = draw_estimates(input, draws, seed, progress);
    let mut d = DrawnValues::collect(results, p);
    let sensitivity = (0..p)
        .map(|j| sensitivity_row(input, j, &rel_point, rel_y_point, level, grid_points))
        .collect();
    // Intervals for the correction only when the point correction is possible and no more
    // than the tail share of draws was impossible (else the interval's ends are not
    // determined by the admissible draws).
    let tail = level.tail();
    let share = if draws > 0 {
        d.inadmissible as f64 / draws as f64
    } else {
        0.0
    };
    let determined = estimate.corrected.is_ok() && share <= tail;
    let spreads = |v: &mut Vec<Vec<f64>>| -> Vec<Option<Spread>> {
        v.iter_mut()
            .map(|x| if determined { spread(x, level) } else { None })
            .collect()
    };
    Ok(RegressionCorrection {
        // From a summary the OLS slopes have their exact t intervals; from raw data they
        // are bootstrapped like the corrected ones.
        ols_spread: if input.rows.is_some() {
            d.ols.iter_mut().map(|v| spread(v, level)).collect()
        } else {
            ols_t_intervals(&input.cov, input.n, level)
        },
        corrected_spread: spreads(&mut d.corrected),
        corrected_standardized_spread: spreads(&mut d.standardized),
        r2_spread: if determined {
            spread(&mut d.r2, level)
        } else {
            None
        },
        intervals_determined: determined,
        estimate,
        inadmissible_share: share,
        method: if input.rows.is_some() {
            DrawMethod::Bootstrap
        } else {
            DrawMethod::MonteCarlo
        },
        draws,
        seed,
        sensitivity,
    })
}

/// Refit the model on `draws` bootstrap samples (raw data) or Monte Carlo draws of the
/// covariance matrix (a summary), with the reliabilities drawn too; `None` for a draw
/// that cannot be fitted.
fn draw_estimates(
    input: &RegressionInput,
    draws: usize,
    seed: u64,
    progress: &(dyn Fn(usize) + Sync),
) -> Vec<Option<Estimate>> {
    let n = input.n as f64;
    let chol = input.cov.clone().cholesky().map(|c| c.l());
    let width = input.predictors.len() + 1;
    let samplers: Vec<_> = input.rel.iter().map(ReliabilitySource::sampler).collect();
    let sampler_y = input.rel_y.as_ref().map(ReliabilitySource::sampler);
    parallel_draws(draws, seed, progress, |rng| {
        let cov = match &input.rows {
            Some(rows) => {
                let m = rows.len() / width;
                let mut acc = Listwise::new(width);
                for _ in 0..m {
                    let i = rng.random_range(0..m);
                    acc.add(&rows[i * width..(i + 1) * width]);
                }
                acc.finish()?.cov
            }
            None => draw::sample_covariance(rng, chol.as_ref()?, n),
        };
        // With correlations only, each draw is refitted as a correlation matrix, like the
        // point estimate.
        let cov = if input.standardized_only {
            crate::items::alpha::correlation(&cov)
        } else {
            cov
        };
        let rel: Vec<f64> = samplers.iter().map(|s| s.draw(rng)).collect();
        let ry = sampler_y.map(|s| s.draw(rng)).unwrap_or(1.0);
        eiv(&cov, &rel, ry).ok()
    })
}

/// The drawn fits' values, by predictor, and how many draws had no admissible correction.
struct DrawnValues {
    ols: Vec<Vec<f64>>,
    corrected: Vec<Vec<f64>>,
    standardized: Vec<Vec<f64>>,
    r2: Vec<f64>,
    inadmissible: usize,
}

impl DrawnValues {
    /// Gather the values of the drawn fits of a model with `p` predictors.
    fn collect(results: Vec<Option<Estimate>>, p: usize) -> DrawnValues {
        let mut d = DrawnValues {
            ols: vec![Vec::new(); p],
            corrected: vec![Vec::new(); p],
            standardized: vec![Vec::new(); p],
            r2: Vec::new(),
            inadmissible: 0,
        };
        for e in results.into_iter() {
            let Some(e) = e else {
                d.inadmissible += 1;
                continue;
            };
            for (acc, v) in d.ols.iter_mut().zip(&e.ols) {
                acc.push(*v);
            }
            match e.corrected {
                Ok(c) => {
                    for (acc, v) in d.corrected.iter_mut().zip(&c.slopes) {
                        acc.push(*v);
                    }
                    for (acc, v) in d.standardized.iter_mut().zip(&c.standardized) {
                        acc.push(*v);
                    }
                    d.r2.push(c.r2);
                }
                Err(_) => d.inadmissible += 1,
            }
        }
        d
    }
}

/// The corrected slopes over a grid of predictor `j`'s reliability, the others at their
/// point values (`None` where the correction is inadmissible).
fn sensitivity_row(
    input: &RegressionInput,
    j: usize,
    rel_point: &[f64],
    rel_y_point: f64,
    level: Level,
    grid_points: usize,
) -> Vec<(f64, Option<Vec<f64>>)> {
    sensitivity_grid(&input.rel[j], level, grid_points)
        .into_iter()
        .map(|g| {
            let mut rel = rel_point.to_vec();
            rel[j] = g;
            let slopes = eiv(&input.cov, &rel, rel_y_point)
                .ok()
                .and_then(|e| e.corrected.ok())
                .map(|c| c.slopes);
            (g, slopes)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// With one predictor, the corrected standardized slope is Spearman's corrected
    /// correlation, and the slope is the OLS slope divided by the reliability.
    #[test]
    fn one_predictor_reduces_to_spearman() {
        let cov = DMatrix::from_row_slice(2, 2, &[4.0, 1.2, 1.2, 2.25]);
        let e = eiv(&cov, &[0.8], 0.9).unwrap();
        let r = 1.2 / (2.0 * 1.5);
        let c = e.corrected.unwrap();
        assert!((c.standardized[0] - r / (0.8f64 * 0.9).sqrt()).abs() < 1e-12);
        assert!((c.slopes[0] - e.ols[0] / 0.8).abs() < 1e-12);
    }

    #[test]
    fn impossible_corrections_are_flagged() {
        let cov = DMatrix::from_row_slice(2, 2, &[1.0, 0.6, 0.6, 1.0]);
        let e = eiv(&cov, &[0.5], 0.5).unwrap();
        assert!(
            e.corrected.is_err(),
            "r = 0.6 with reliabilities 0.5 gives 1.2"
        );
        let cov3 = DMatrix::from_row_slice(3, 3, &[1.0, 0.9, 0.3, 0.9, 1.0, 0.3, 0.3, 0.3, 1.0]);
        let e = eiv(&cov3, &[0.8, 0.8], 1.0).unwrap();
        assert!(e.corrected.is_err(), "S_xx − Λ is not positive definite");
    }
}
