//! Polychoric correlations of ordinal items, by the two-step method: each item's thresholds
//! from its margins, then for each pair the correlation of the underlying bivariate normal
//! that maximizes the likelihood of the pair's contingency table; and ordinal alpha, alpha
//! of the polychoric correlation matrix.
//!
//! # References
//! Olsson, U. (1979). Maximum likelihood estimation of the polychoric correlation
//! coefficient. *Psychometrika*, 44(4), 443–460.
//! Genz, A. (2004). Numerical computation of rectangular bivariate and trivariate normal and
//! t probabilities. *Statistics and Computing*, 14(3), 251–260.

use crate::dist::normal_quantile;
use crate::error::{Error, Result};
use nalgebra::DMatrix;
use std::f64::consts::PI;

/// Most categories an item may have for polychoric correlations (more: treat it as
/// continuous).
pub const MAX_CATEGORIES: usize = 10;

/// Φ(x), the standard normal distribution function, from erfc to double precision.
fn phi(x: f64) -> f64 {
    0.5 * libm::erfc(-x / std::f64::consts::SQRT_2)
}

/// Gauss–Legendre nodes and weights of `n` points on (−1, 1), by Newton's method on the
/// Legendre polynomial from the usual starting values.
fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
    (1..=n)
        .map(|i| {
            let mut x = (PI * (i as f64 - 0.25) / (n as f64 + 0.5)).cos();
            let mut dp = 1.0;
            for _ in 0..100 {
                let (mut p0, mut p1) = (1.0, x);
                for j in 2..=n {
                    let jf = j as f64;
                    let p2 = ((2.0 * jf - 1.0) * x * p1 - (jf - 1.0) * p0) / jf;
                    p0 = p1;
                    p1 = p2;
                }
                dp = n as f64 * (x * p1 - p0) / (x * x - 1.0);
                let step = p1 / dp;
                x -= step;
                if step.abs() < 1e-16 {
                    break;
                }
            }
            (x, 2.0 / ((1.0 - x * x) * dp * dp))
        })
        .collect()
}

/// The Gauss–Legendre rule of 12, 24 or 40 points, computed once.
fn rule_of(points: usize) -> &'static [(f64, f64)] {
    use std::sync::OnceLock;
    static RULES: [OnceLock<Vec<(f64, f64)>>; 3] =
        [OnceLock::new(), OnceLock::new(), OnceLock::new()];
    let slot = match points {
        12 => 0,
        24 => 1,
        _ => 2,
    };
    RULES[slot].get_or_init(|| gauss_legendre(points))
}

/// P(X > h, Y > k) for a standard bivariate normal with correlation r (Genz 2004: the
/// Drezner–Wesolowsky integral of the density over the correlation for |r| < 0.925, and for
/// larger |r| the expansion about r = ±1), with Gauss–Legendre rules of 12, 24 or 40 points.
fn upper_orthant(h: f64, k: f64, r: f64) -> f64 {
    if h == f64::INFINITY || k == f64::INFINITY {
        return 0.0;
    }
    if h == f64::NEG_INFINITY {
        return if k == f64::NEG_INFINITY { 1.0 } else { phi(-k) };
    }
    if k == f64::NEG_INFINITY {
        return phi(-h);
    }
    if r == 0.0 {
        return phi(-h) * phi(-k);
    }
    let points = if r.abs() < 0.3 {
        12
    } else if r.abs() < 0.75 {
        24
    } else {
        40
    };
    let rule = rule_of(points);
    let tp = 2.0 * PI;
    let hk = h * k;
    if r.abs() < 0.925 {
        // ∫₀^asin(r) exp(−(h² + k² − 2hk sin θ)/(2cos²θ)) dθ / 2π, θ = asin(r)(1 + x)/2.
        let hs = (h * h + k * k) / 2.0;
        let asr = r.asin() / 2.0;
        let sum: f64 = rule
            .iter()
            .map(|&(x, w)| {
                let sn = (asr * (1.0 + x)).sin();
                w * ((sn * hk - hs) / (1.0 - sn * sn)).exp()
            })
            .sum();
        return (sum * asr / tp + phi(-h) * phi(-k)).clamp(0.0, 1.0);
    }
    let (mut k, mut hk) = (k, hk);
    if r < 0.0 {
        k = -k;
        hk = -hk;
    }
    let mut bvn = 0.0;
    if r.abs() < 1.0 {
        let as_ = 1.0 - r * r;
        let mut a = as_.sqrt();
        let bs = (h - k).powi(2);
        let c = (4.0 - hk) / 8.0;
        let d = (12.0 - hk) / 80.0;
        let asr = -(bs / as_ + hk) / 2.0;
        if asr > -100.0 {
            bvn = a * asr.exp() * (1.0 - c * (bs - as_) * (1.0 - d * bs) / 3.0 + c * d * as_ * as_);
        }
        if hk > -100.0 {
            let b = bs.sqrt();
            let sp = tp.sqrt() * phi(-b / a);
            bvn -= (-hk / 2.0).exp() * sp * b * (1.0 - c * bs * (1.0 - d * bs) / 3.0);
        }
        a /= 2.0;
        for &(x, w) in rule {
            let xs = (a * (1.0 + x)).powi(2);
            let asr = -(bs / xs + hk) / 2.0;
            if asr > -100.0 {
                let sp = 1.0 + c * xs * (1.0 + 5.0 * d * xs);
                let rs = (1.0 - xs).sqrt();
                let ep = (-(hk / 2.0) * xs / (1.0 + rs).powi(2)).exp() / rs;
                bvn += a * w * asr.exp() * (ep - sp);
            }
        }
        bvn = -bvn / tp;
    }
    if r > 0.0 {
        bvn += phi(-h.max(k));
    } else if h >= k {
        bvn = -bvn;
    } else {
        let l = if h < 0.0 {
            phi(k) - phi(h)
        } else {
            phi(-h) - phi(-k)
        };
        bvn = l - bvn;
    }
    bvn.clamp(0.0, 1.0)
}

/// Φ₂(h, k; r) = P(X ≤ h, Y ≤ k) for a standard bivariate normal with correlation r.
pub fn bivariate_normal_cdf(h: f64, k: f64, r: f64) -> f64 {
    upper_orthant(-h, -k, r)
}

/// The standard bivariate normal density at (h, k) with correlation r (0 at an infinite
/// argument): the derivative of Φ₂ in r.
fn bivariate_density(h: f64, k: f64, r: f64) -> f64 {
    if !h.is_finite() || !k.is_finite() {
        return 0.0;
    }
    let s = 1.0 - r * r;
    (-(h * h - 2.0 * r * h * k + k * k) / (2.0 * s)).exp() / (2.0 * PI * s.sqrt())
}

/// An item's thresholds from its category counts (in category order): Φ⁻¹ of the
/// cumulative proportions, with −∞ and +∞ at the ends.
pub fn thresholds(counts: &[u64]) -> Vec<f64> {
    let total: u64 = counts.iter().sum();
    let mut out = vec![f64::NEG_INFINITY];
    let mut cum = 0;
    for &c in &counts[..counts.len() - 1] {
        cum += c;
        out.push(normal_quantile(cum as f64 / total as f64));
    }
    out.push(f64::INFINITY);
    out
}

/// The polychoric correlation of one pair, from its contingency table (`table[i][j]`: the
/// count in category i of the first item and j of the second) and the two items'
/// thresholds: the root of the likelihood's score in r, Σᵢⱼ nᵢⱼ (∂πᵢⱼ/∂r)/πᵢⱼ, where each cell's
/// probability πᵢⱼ is a rectangle of Φ₂ and its derivative the same rectangle of the density.
/// A score that keeps its sign up to ±0.9999 (the table admits no interior maximum, as a
/// table with an empty diagonal can) gives that bound.
pub fn polychoric_pair(table: &[Vec<u64>], ta: &[f64], tb: &[f64]) -> Result<f64> {
    let score = |r: f64| -> f64 {
        let mut s = 0.0;
        for (i, row) in table.iter().enumerate() {
            for (j, &n) in row.iter().enumerate() {
                if n == 0 {
                    continue;
                }
                let rect = |f: &dyn Fn(f64, f64) -> f64| {
                    f(ta[i + 1], tb[j + 1]) - f(ta[i], tb[j + 1]) - f(ta[i + 1], tb[j])
                        + f(ta[i], tb[j])
                };
                let p = rect(&|h, k| bivariate_normal_cdf(h, k, r)).max(1e-300);
                let dp = rect(&|h, k| bivariate_density(h, k, r));
                s += n as f64 * dp / p;
            }
        }
        s
    };
    let bound = 0.9999;
    let (lo, hi) = (score(-bound), score(bound));
    if lo <= 0.0 {
        return Ok(-bound);
    }
    if hi >= 0.0 {
        return Ok(bound);
    }
    crate::numeric::brent_root(score, -bound, bound, 1e-12, 200)
        .map(|root| root.x)
        .ok_or_else(|| Error::Numerical("a polychoric correlation could not be found".into()))
}

/// Ordinal items: each item's categories (its distinct values in order), thresholds, and the
/// polychoric correlation matrix.
#[derive(Debug, Clone, PartialEq)]
pub struct OrdinalItems {
    /// Each item's observed values, in order (its categories).
    pub levels: Vec<Vec<f64>>,
    /// Each item's thresholds, with −∞ and +∞ at the ends.
    pub thresholds: Vec<Vec<f64>>,
    /// The polychoric correlation matrix.
    pub polychoric: DMatrix<f64>,
}

/// The polychoric correlation matrix of ordinal items given row by row (`rows.len() ==
/// n·k`, complete rows), each item's categories its distinct values in order.
pub fn polychoric_matrix(rows: &[f64], k: usize, names: &[String]) -> Result<DMatrix<f64>> {
    ordinal_items(rows, k, names).map(|o| o.polychoric)
}

/// Rows counted together by one worker of the pair tables (a block's tables are added to
/// the worker's running totals; counts are integers, so the order does not matter).
const TABLE_BLOCK_ROWS: usize = 16_384;

/// A block of rows coded by its own categories: each item's distinct values in the order
/// met, and one byte per cell indexing them.
struct CodedBlock {
    levels: Vec<Vec<f64>>,
}

/// Code a block of rows (row by row, k cells each) into `out` by the block's own categories;
/// `Err(j)` when item j takes more than [`MAX_CATEGORIES`] values in the block.
fn code_block(values: &[f64], k: usize, out: &mut [u8]) -> std::result::Result<CodedBlock, usize> {
    /// Marks a small whole value not met yet in the block's look-up table.
    const UNSEEN: u8 = u8::MAX;
    let mut levels: Vec<Vec<f64>> = vec![Vec::with_capacity(MAX_CATEGORIES + 1); k];
    // Whole values from −128 to 127 (nearly every rating scale) are looked up directly.
    let mut small = vec![[UNSEEN; 256]; k];
    for (row, coded) in values.chunks_exact(k).zip(out.chunks_exact_mut(k)) {
        for (j, (v, c)) in row.iter().zip(coded.iter_mut()).enumerate() {
            let whole = *v as i64;
            let slot = (whole as f64 == *v && (-128..128).contains(&whole))
                .then_some((whole + 128) as usize);
            if let Some(s) = slot
                && small[j][s] != UNSEEN
            {
                *c = small[j][s];
                continue;
            }
            let lv = &mut levels[j];
            *c = match lv.iter().position(|l| l == v) {
                Some(i) => i as u8,
                None if lv.len() < MAX_CATEGORIES => {
                    lv.push(*v);
                    (lv.len() - 1) as u8
                }
                None => return Err(j),
            };
            if let Some(s) = slot {
                small[j][s] = *c;
            }
        }
    }
    Ok(CodedBlock { levels })
}

/// Every item's categories (its distinct values in order) and each cell's category, in one
/// parallel pass over the rows: blocks are coded by their own categories, which are then
/// merged, sorted, and the blocks' codes mapped to them.
fn code_rows(rows: &[f64], k: usize, names: &[String]) -> Result<(Vec<Vec<f64>>, Vec<u8>)> {
    use rayon::prelude::*;
    let mut codes = vec![0u8; rows.len()];
    let blocks: Vec<std::result::Result<CodedBlock, usize>> = codes
        .par_chunks_mut(TABLE_BLOCK_ROWS * k)
        .zip(rows.par_chunks(TABLE_BLOCK_ROWS * k))
        .map(|(out, values)| code_block(values, k, out))
        .collect();
    let too_many = |j: usize| {
        Error::cannot(format!(
            "{} takes more than {MAX_CATEGORIES} different values: polychoric correlations \
             are for items with at most {MAX_CATEGORIES} categories (treat it as continuous)",
            names[j]
        ))
    };
    let mut levels: Vec<Vec<f64>> = vec![Vec::new(); k];
    for b in &blocks {
        let b = b.as_ref().map_err(|&j| too_many(j))?;
        for (all, own) in levels.iter_mut().zip(&b.levels) {
            for v in own {
                if !all.contains(v) {
                    all.push(*v);
                }
            }
        }
    }
    if let Some(j) = levels.iter().position(|l| l.len() > MAX_CATEGORIES) {
        return Err(too_many(j));
    }
    if let Some(j) = levels.iter().position(|l| l.len() < 2) {
        return Err(Error::cannot(format!(
            "{} takes one value only: it has no polychoric correlation",
            names[j]
        )));
    }
    levels.iter_mut().for_each(|l| l.sort_by(f64::total_cmp));
    codes
        .par_chunks_mut(TABLE_BLOCK_ROWS * k)
        .zip(blocks.par_iter())
        .for_each(|(out, b)| {
            let own = &b.as_ref().expect("checked above").levels;
            let map: Vec<Vec<u8>> = own
                .iter()
                .zip(&levels)
                .map(|(o, all)| {
                    o.iter()
                        .map(|v| all.iter().position(|l| l == v).unwrap_or(0) as u8)
                        .collect()
                })
                .collect();
            for row in out.chunks_exact_mut(k) {
                for (c, m) in row.iter_mut().zip(&map) {
                    *c = m[*c as usize];
                }
            }
        });
    Ok((levels, codes))
}

/// Each item's categories as bit sets over the rows: `bits[j][c]` has bit i set when row i
/// answered item j in category c (one pass over the codes, row by row).
fn category_bits(codes: &[u8], k: usize, sizes: &[usize]) -> Vec<Vec<Vec<u64>>> {
    let n = codes.len() / k;
    let words = n.div_ceil(64);
    let mut bits: Vec<Vec<Vec<u64>>> = sizes.iter().map(|&s| vec![vec![0u64; words]; s]).collect();
    for (i, row) in codes.chunks_exact(k).enumerate() {
        let (w, bit) = (i / 64, 1u64 << (i % 64));
        for (j, &c) in row.iter().enumerate() {
            bits[j][c as usize][w] |= bit;
        }
    }
    bits
}

/// The contingency table of items a and b: cell (c, d) counts the rows in both category c
/// of a and d of b, the popcount of the two bit sets' intersection; the last row and column
/// follow from the margins.
fn pair_table(a: &[Vec<u64>], b: &[Vec<u64>], ma: &[u64], mb: &[u64]) -> Vec<Vec<u64>> {
    let (ca, cb) = (a.len(), b.len());
    let mut t = vec![vec![0u64; cb]; ca];
    for c in 0..ca - 1 {
        for d in 0..cb - 1 {
            t[c][d] = a[c]
                .iter()
                .zip(&b[d])
                .map(|(x, y)| u64::from((x & y).count_ones()))
                .sum();
        }
        t[c][cb - 1] = ma[c] - t[c][..cb - 1].iter().sum::<u64>();
    }
    for d in 0..cb {
        t[ca - 1][d] = mb[d] - (0..ca - 1).map(|c| t[c][d]).sum::<u64>();
    }
    t
}

/// The items taken as ordinal: categories, thresholds and polychoric correlations (see
/// [`polychoric_matrix`]). The rows are coded once into one byte per cell (in parallel), the
/// codes turned into one bit set per item and category, each pair's contingency table counted
/// from the bit sets' intersections, and the pairs' correlations found in parallel.
pub fn ordinal_items(rows: &[f64], k: usize, names: &[String]) -> Result<OrdinalItems> {
    use rayon::prelude::*;
    let (levels, codes) = code_rows(rows, k, names)?;
    let sizes: Vec<usize> = levels.iter().map(Vec::len).collect();
    let bits = category_bits(&codes, k, &sizes);
    drop(codes);
    let margins: Vec<Vec<u64>> = bits
        .iter()
        .map(|item| {
            item.iter()
                .map(|set| set.iter().map(|w| u64::from(w.count_ones())).sum())
                .collect()
        })
        .collect();
    let cuts: Vec<Vec<f64>> = margins.iter().map(|m| thresholds(m)).collect();
    let pairs: Vec<(usize, usize)> = (0..k)
        .flat_map(|a| (a + 1..k).map(move |b| (a, b)))
        .collect();
    let rhos: Vec<f64> = pairs
        .par_iter()
        .map(|&(a, b)| {
            let table = pair_table(&bits[a], &bits[b], &margins[a], &margins[b]);
            polychoric_pair(&table, &cuts[a], &cuts[b])
        })
        .collect::<Result<_>>()?;
    let mut r = DMatrix::identity(k, k);
    for (&(a, b), rho) in pairs.iter().zip(rhos) {
        r[(a, b)] = rho;
        r[(b, a)] = rho;
    }
    Ok(OrdinalItems {
        levels,
        thresholds: cuts,
        polychoric: r,
    })
}

/// Categorical omega: the share of the observed sum score's variance that the common factor
/// of the underlying responses explains. An item's observed value is its lowest value plus
/// Σ_c w_c·1[Z > τ_c] (w_c the gap between consecutive observed values), so with standardized
/// loadings λ on the underlying responses Z the common part of the sum's variance is
/// Σᵢ Σⱼ Σ_c Σ_d w_ic w_jd [Φ₂(τ_ic, τ_jd; λᵢλⱼ) − Φ(τ_ic)Φ(τ_jd)] (i = j included), divided
/// here by `sum_variance`, the sample variance of the observed sum.
///
/// # References
/// Green, S. B., & Yang, Y. (2009). Reliability of summed item scores using structural
/// equation modeling: an alternative to coefficient alpha. *Psychometrika*, 74(1), 155–167.
pub fn categorical_omega(items: &OrdinalItems, loadings: &[f64], sum_variance: f64) -> f64 {
    let k = loadings.len();
    let inner = |i: usize| -> Vec<(f64, f64)> {
        let (t, v) = (&items.thresholds[i], &items.levels[i]);
        (1..t.len() - 1).map(|c| (t[c], v[c] - v[c - 1])).collect()
    };
    let cuts: Vec<Vec<(f64, f64)>> = (0..k).map(inner).collect();
    let mut common = 0.0;
    for i in 0..k {
        for j in 0..k {
            let r = loadings[i] * loadings[j];
            for &(ti, wi) in &cuts[i] {
                for &(tj, wj) in &cuts[j] {
                    common += wi * wj * (bivariate_normal_cdf(ti, tj, r) - phi(ti) * phi(tj));
                }
            }
        }
    }
    common / sum_variance
}

/// Ordinal alpha: alpha of a correlation matrix, k/(k − 1)·(1 − k/1ᵀR1) (Zumbo, Gadermann &
/// Zeisser 2007), which describes the sum of the underlying continuous responses, not of the
/// observed categories.
pub fn ordinal_alpha(r: &DMatrix<f64>) -> f64 {
    let k = r.nrows() as f64;
    k / (k - 1.0) * (1.0 - k / r.sum())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_bivariate_normal_has_its_known_values() {
        // Φ₂(0, 0; r) = 1/4 + asin(r)/(2π) (Sheppard's formula).
        for r in [-0.95, -0.5, -0.1, 0.0, 0.2, 0.6, 0.93, 0.99] {
            let want = 0.25 + f64::asin(r) / (2.0 * PI);
            assert!(
                (bivariate_normal_cdf(0.0, 0.0, r) - want).abs() < 1e-14,
                "{r}"
            );
        }
        // Independence, and a margin at +∞.
        assert!((bivariate_normal_cdf(0.3, -1.2, 0.0) - phi(0.3) * phi(-1.2)).abs() < 1e-15);
        assert!((bivariate_normal_cdf(0.7, f64::INFINITY, 0.8) - phi(0.7)).abs() < 1e-15);
    }

    /// Coding by blocks and counting by bit sets give every pair's table as a direct count
    /// does: three blocks of rows, categories first met in different blocks and orders,
    /// negative, fractional and large values (which miss the small-value look-up).
    #[test]
    fn blockwise_codes_and_bit_set_tables_equal_a_direct_count() {
        let k = 3;
        let n = 2 * TABLE_BLOCK_ROWS + 777;
        let values: [&[f64]; 3] = [
            &[-2.0, 0.5, 3.0],
            &[1.0, 2.0, 3.0, 4.0, 5.0],
            &[1000.0, 7.0],
        ];
        let mut state: u64 = 0x2545_F491_4F6C_DD1D;
        let mut rows = Vec::with_capacity(n * k);
        for i in 0..n {
            for (j, v) in values.iter().enumerate() {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                // Item 1's value 5 first appears in the last block.
                let m = if j == 1 && i < 2 * TABLE_BLOCK_ROWS {
                    4
                } else {
                    v.len()
                };
                rows.push(v[(state % m as u64) as usize]);
            }
        }
        let names: Vec<String> = (0..k).map(|j| format!("i{j}")).collect();
        let (levels, codes) = code_rows(&rows, k, &names).unwrap();
        for (j, v) in values.iter().enumerate() {
            let mut sorted = v.to_vec();
            sorted.sort_by(f64::total_cmp);
            assert_eq!(levels[j], sorted);
        }
        let sizes: Vec<usize> = levels.iter().map(Vec::len).collect();
        let bits = category_bits(&codes, k, &sizes);
        let margin = |j: usize| -> Vec<u64> {
            (0..sizes[j])
                .map(|c| {
                    rows.iter()
                        .skip(j)
                        .step_by(k)
                        .filter(|v| **v == levels[j][c])
                        .count() as u64
                })
                .collect()
        };
        for (a, b) in [(0, 1), (0, 2), (1, 2)] {
            let got = pair_table(&bits[a], &bits[b], &margin(a), &margin(b));
            for c in 0..sizes[a] {
                for d in 0..sizes[b] {
                    let direct = rows
                        .chunks_exact(k)
                        .filter(|r| r[a] == levels[a][c] && r[b] == levels[b][d])
                        .count() as u64;
                    assert_eq!(got[c][d], direct, "pair ({a}, {b}) cell ({c}, {d})");
                }
            }
        }
    }

    #[test]
    fn gauss_legendre_integrates_polynomials_exactly() {
        for n in [12, 24, 40] {
            let rule = gauss_legendre(n);
            let w: f64 = rule.iter().map(|(_, w)| w).sum();
            let x4: f64 = rule.iter().map(|(x, w)| w * x.powi(4)).sum();
            assert!((w - 2.0).abs() < 1e-13 && (x4 - 0.4).abs() < 1e-13, "{n}");
        }
    }
}
