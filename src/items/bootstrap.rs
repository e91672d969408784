//! A bootstrap percentile interval for omega: respondents resampled with replacement,
//! the one-factor model refitted each time. Needs the rows in memory.

use super::factor::{FactorModel, fit_one_factor};
use super::moments::Listwise;
use crate::error::{Error, Result};
use crate::level::Level;
use crate::random::stream;
use crate::setting::Setting;
use crate::setting::msg;
use rand::RngExt;
use rayon::prelude::*;

/// Replicates handled between two progress reports.
const CHUNK: usize = 16;

/// What the bootstrap found.
#[derive(Debug, Clone, PartialEq)]
pub struct OmegaBootstrap {
    /// Replicates requested.
    pub replicates: usize,
    /// The seed.
    pub seed: u64,
    /// Percentile interval.
    pub interval: (f64, f64),
    /// Replicates whose fit did not converge or was singular (left out).
    pub failed: usize,
    /// Replicates with a Heywood case (kept).
    pub heywood: usize,
}

/// Bootstrap omega from complete rows (row-major, k per row).
///
/// # References
/// Efron, B., & Tibshirani, R. J. (1993). *An introduction to the bootstrap*, chapter 13.
/// New York: Chapman & Hall.
pub fn bootstrap_omega(
    rows: &[f64],
    k: usize,
    replicates: usize,
    seed: u64,
    level: Level,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<OmegaBootstrap> {
    let n = rows.len() / k;
    if n < 3 {
        return Err(Error::cannot(
            "the bootstrap needs at least 3 complete respondents",
        ));
    }
    if replicates < 2 {
        return Err(Error::setting(
            Setting::Bootstrap,
            msg![Setting::Bootstrap, " needs at least 2 replicates"],
        ));
    }
    let chunks = replicates.div_ceil(CHUNK);
    let results: Vec<(Option<f64>, bool)> = (0..chunks)
        .into_par_iter()
        .flat_map_iter(|c| {
            let start = c * CHUNK;
            let end = (start + CHUNK).min(replicates);
            let out: Vec<(Option<f64>, bool)> = (start..end)
                .map(|b| {
                    let mut rng = stream(seed, b as u64);
                    let mut acc = Listwise::new(k);
                    for _ in 0..n {
                        let i = rng.random_range(0..n);
                        acc.add(&rows[i * k..(i + 1) * k]);
                    }
                    match acc
                        .finish()
                        .map(|m| fit_one_factor(&m.cov, FactorModel::Congeneric))
                    {
                        Some(Ok(f)) if f.stop.converged() => {
                            (Some(f.omega()), !f.heywood.is_empty())
                        }
                        _ => (None, false),
                    }
                })
                .collect();
            progress(end - start);
            out
        })
        .collect();
    let mut omegas: Vec<f64> = results
        .iter()
        .filter_map(|r| r.0)
        .filter(|o| o.is_finite())
        .collect();
    let failed = replicates - omegas.len();
    let heywood = results.iter().filter(|r| r.1).count();
    if omegas.len() < 2 {
        return Err(Error::Numerical(
            "too few bootstrap replicates could be fitted for an interval".into(),
        ));
    }
    let interval = crate::numeric::percentile_interval(&mut omegas, level.value())
        .ok_or_else(|| Error::Numerical("too few bootstrap replicates".into()))?;
    Ok(OmegaBootstrap {
        replicates,
        seed,
        interval,
        failed,
        heywood,
    })
}
