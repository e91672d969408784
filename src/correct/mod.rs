//! What-if correction for measurement error: disattenuated correlations and
//! errors-in-variables regression, with the reliabilities' own uncertainty carried
//! through by Monte Carlo (and bootstrap for raw data).

pub mod correlation;
pub mod regression;
pub mod reliability;
pub mod summary;

pub use reliability::{ReliabilitySource, ReliabilitySpec, resolve};

use rayon::prelude::*;

/// Draws handled between two progress reports.
const CHUNK: usize = 1024;

/// Run `draws` independent draws in parallel, each with its own random stream (seed and
/// index), collecting their results in index order.
pub(crate) fn parallel_draws<T: Send>(
    draws: usize,
    seed: u64,
    progress: &(dyn Fn(usize) + Sync),
    one: impl Fn(&mut rand::rngs::ChaCha8Rng) -> T + Sync,
) -> Vec<T> {
    (0..draws.div_ceil(CHUNK))
        .into_par_iter()
        .flat_map_iter(|c| {
            let start = c * CHUNK;
            let end = (start + CHUNK).min(draws);
            let out: Vec<T> = (start..end)
                .map(|b| one(&mut crate::random::stream(seed, b as u64)))
                .collect();
            progress(end - start);
            out
        })
        .collect()
}

/// The type-7 quantile of sorted values.
pub(crate) fn quantile(sorted: &[f64], p: f64) -> f64 {
    let h = (sorted.len() - 1) as f64 * p;
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// A percentile interval of values at `level`.
pub(crate) fn percentile_interval(values: &mut [f64], level: f64) -> Option<(f64, f64)> {
    if values.len() < 2 {
        return None;
    }
    values.sort_by(|a, b| a.total_cmp(b));
    let a = 1.0 - level;
    Some((quantile(values, a / 2.0), quantile(values, 1.0 - a / 2.0)))
}

/// Grid points spanning [lo, hi].
pub(crate) fn grid(lo: f64, hi: f64, points: usize) -> Vec<f64> {
    if points < 2 || (hi - lo).abs() < 1e-12 {
        return vec![lo];
    }
    (0..points)
        .map(|i| lo + (hi - lo) * i as f64 / (points - 1) as f64)
        .collect()
}

/// The grid of a reliability's values for a sensitivity table: over its range, with its
/// own value included; a value of 1 (no measurement error) stays fixed.
pub fn sensitivity_grid(r: &ReliabilitySource, level: f64, points: usize) -> Vec<f64> {
    let v = r.point();
    if matches!(r, ReliabilitySource::Point { .. }) && v >= 1.0 {
        return vec![1.0];
    }
    let (lo, hi) = sensitivity_range(r, level);
    let mut g = grid(lo, hi, points);
    if !g.iter().any(|x| (x - v).abs() < 1e-9) {
        g.push(v);
        g.sort_by(|a, b| a.total_cmp(b));
    }
    g
}

/// The range a sensitivity grid spans for a reliability: its interval at `level` when it
/// has one (the benchmark's prediction interval, an estimate's interval), else the value
/// ± 0.10, within 0.05 to 0.99.
pub fn sensitivity_range(r: &ReliabilitySource, level: f64) -> (f64, f64) {
    let (lo, hi) = r
        .interval(level)
        .unwrap_or_else(|| (r.point() - 0.10, r.point() + 0.10));
    (lo.max(0.05), hi.min(0.99))
}
