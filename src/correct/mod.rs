//! What-if correction for measurement error: disattenuated correlations and
//! errors-in-variables regression, with the reliabilities' own uncertainty carried
//! through by Monte Carlo (and bootstrap for raw data).

pub mod choice;
pub mod correlation;
pub mod regression;
pub mod reliability;
pub mod summary;

pub use reliability::{ReliabilitySource, ReliabilitySpec, resolve};

use crate::level::Level;
use rayon::prelude::*;

pub(crate) use crate::numeric::percentile_interval;

/// Draws in one block: the draws of a block share one random stream (seed and block
/// index), and blocks are the unit of parallel work and of progress reports. The block
/// size is fixed, so results depend on the seed alone, never on the number of threads.
const BLOCK: usize = 1024;

/// Run `draws` independent draws in parallel, block by block (each block with its own
/// random stream), collecting their results in draw order.
pub(crate) fn parallel_draws<T: Send>(
    draws: usize,
    seed: u64,
    progress: &(dyn Fn(usize) + Sync),
    one: impl Fn(&mut rand::rngs::ChaCha8Rng) -> T + Sync,
) -> Vec<T> {
    let blocks: Vec<Vec<T>> = (0..draws.div_ceil(BLOCK))
        .into_par_iter()
        .map(|c| {
            let start = c * BLOCK;
            let end = (start + BLOCK).min(draws);
            let mut rng = crate::random::stream(seed, c as u64);
            let out: Vec<T> = (start..end).map(|_| one(&mut rng)).collect();
            progress(end - start);
            out
        })
        .collect();
    let mut all = Vec::with_capacity(draws);
    for b in blocks {
        all.extend(b);
    }
    all
}

/// Fill `values` with one draw each, in parallel block by block, exactly as
/// [`parallel_draws`] would return them (the same blocks and streams), without the
/// intermediate vectors.
pub(crate) fn parallel_fill(
    values: &mut [f64],
    seed: u64,
    progress: &(dyn Fn(usize) + Sync),
    one: impl Fn(&mut rand::rngs::ChaCha8Rng) -> f64 + Sync,
) {
    values
        .par_chunks_mut(BLOCK)
        .enumerate()
        .for_each(|(c, chunk)| {
            let mut rng = crate::random::stream(seed, c as u64);
            for v in chunk.iter_mut() {
                *v = one(&mut rng);
            }
            progress(chunk.len());
        });
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
pub fn sensitivity_grid(r: &ReliabilitySource, level: Level, points: usize) -> Vec<f64> {
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
pub fn sensitivity_range(r: &ReliabilitySource, level: Level) -> (f64, f64) {
    let (lo, hi) = r
        .interval(level)
        .unwrap_or_else(|| (r.point() - 0.10, r.point() + 0.10));
    (lo.max(0.05), hi.min(0.99))
}
