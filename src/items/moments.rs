//! Sufficient statistics of item responses, accumulated in one pass: means and the
//! co-moment matrix, for complete rows (listwise) or for each pair of items
//! (pairwise). Memory grows with the number of items, not of respondents.

use nalgebra::{DMatrix, DVector};

/// Means and covariances of the items (denominator n − 1), with the number of
/// respondents behind each.
#[derive(Debug, Clone, PartialEq)]
pub struct Moments {
    /// Item means.
    pub mean: DVector<f64>,
    /// Covariance matrix.
    pub cov: DMatrix<f64>,
    /// Respondents behind each covariance (all equal under listwise deletion).
    pub n: DMatrix<u64>,
}

impl Moments {
    /// Number of items.
    pub fn k(&self) -> usize {
        self.mean.len()
    }

    /// The smallest number of respondents behind any covariance.
    pub fn n_min(&self) -> u64 {
        self.n.iter().copied().min().unwrap_or(0)
    }
}

/// Index of (a, b), a ≤ b, in a packed upper triangle of order k.
#[inline]
fn packed(k: usize, a: usize, b: usize) -> usize {
    a * k - a * (a + 1) / 2 + b
}

/// Accumulates complete rows. Sums are taken around the first row (a shift), which keeps
/// the one-pass formulas accurate.
#[derive(Debug, Clone)]
pub struct Listwise {
    k: usize,
    n: u64,
    shift: Vec<f64>,
    sum: Vec<f64>,
    cross: Vec<f64>,
    d: Vec<f64>,
}

impl Listwise {
    /// An empty accumulator for k items.
    pub fn new(k: usize) -> Self {
        Listwise {
            k,
            n: 0,
            shift: Vec::new(),
            sum: vec![0.0; k],
            cross: vec![0.0; k * (k + 1) / 2],
            d: vec![0.0; k],
        }
    }

    /// Rows added so far.
    pub fn n(&self) -> u64 {
        self.n
    }

    /// Add one complete row.
    #[inline]
    pub fn add(&mut self, row: &[f64]) {
        if self.n == 0 {
            self.shift = row.to_vec();
        }
        self.n += 1;
        let k = self.k;
        for ((d, x), s) in self.d.iter_mut().zip(row).zip(&self.shift) {
            *d = x - s;
        }
        let mut idx = 0;
        for a in 0..k {
            let da = self.d[a];
            self.sum[a] += da;
            let tail = &self.d[a..];
            let out = &mut self.cross[idx..idx + tail.len()];
            for (c, db) in out.iter_mut().zip(tail) {
                *c += da * db;
            }
            idx += k - a;
        }
    }

    /// Add a block of complete rows (row-major, k values per row). The same sums as
    /// adding the rows one by one, computed as one matrix product (D'D of the shifted
    /// block), which uses the processor's vector units; `scratch` is reused between calls.
    pub fn add_block(&mut self, rows: &[f64], scratch: &mut Vec<f64>) {
        let k = self.k;
        let m = rows.len() / k;
        if m == 0 {
            return;
        }
        if self.n == 0 {
            self.shift = rows[..k].to_vec();
        }
        scratch.clear();
        scratch.extend(
            rows.chunks_exact(k)
                .flat_map(|r| r.iter().zip(&self.shift).map(|(x, s)| x - s)),
        );
        // The shifted block read two ways: as k × m (column j = row j of the block) and
        // as m × k (its transpose, by strides): no copy.
        let dt = nalgebra::DMatrixView::from_slice(scratch, k, m);
        let d = nalgebra::DMatrixView::from_slice_with_strides(scratch, m, k, k, 1);
        let mut product = DMatrix::zeros(k, k);
        product.gemm(1.0, &dt, &d, 0.0);
        let mut idx = 0;
        for a in 0..k {
            for b in a..k {
                self.cross[idx] += product[(a, b)];
                idx += 1;
            }
        }
        for r in scratch.chunks_exact(k) {
            for (s, x) in self.sum.iter_mut().zip(r) {
                *s += x;
            }
        }
        self.n += m as u64;
    }

    /// Merge another accumulator (rows from another part of the file).
    pub fn merge(&mut self, other: &Listwise) {
        if other.n == 0 {
            return;
        }
        if self.n == 0 {
            *self = other.clone();
            return;
        }
        // Re-centre the other's sums on this shift: with δ = other.shift − self.shift,
        // Σ(x − s) = Σ(x − t) + nδ and Σ(x − s)(x − s)ᵀ = Σ(x − t)(x − t)ᵀ
        // + δ Σ(x − t)ᵀ + Σ(x − t) δᵀ + n δδᵀ.
        let k = self.k;
        let n = other.n as f64;
        let delta: Vec<f64> = (0..k).map(|a| other.shift[a] - self.shift[a]).collect();
        for a in 0..k {
            for b in a..k {
                let i = packed(k, a, b);
                self.cross[i] += other.cross[i]
                    + delta[a] * other.sum[b]
                    + other.sum[a] * delta[b]
                    + n * delta[a] * delta[b];
            }
        }
        for ((s, o), d) in self.sum.iter_mut().zip(&other.sum).zip(&delta) {
            *s += o + n * d;
        }
        self.n += other.n;
    }

    /// Means and covariances (None with fewer than 2 rows).
    pub fn finish(&self) -> Option<Moments> {
        if self.n < 2 {
            return None;
        }
        let k = self.k;
        let n = self.n as f64;
        let mean = DVector::from_fn(k, |a, _| self.shift[a] + self.sum[a] / n);
        let mut cov = DMatrix::zeros(k, k);
        for a in 0..k {
            for b in a..k {
                let c = (self.cross[packed(k, a, b)] - self.sum[a] * self.sum[b] / n) / (n - 1.0);
                cov[(a, b)] = c;
                cov[(b, a)] = c;
            }
        }
        Some(Moments {
            mean,
            cov,
            n: DMatrix::from_element(k, k, self.n),
        })
    }
}

/// Accumulates each pair of items over the rows where both are present.
#[derive(Debug, Clone)]
pub struct Pairwise {
    k: usize,
    shift: Vec<Option<f64>>,
    n: Vec<u64>,
    sum_a: Vec<f64>,
    sum_b: Vec<f64>,
    cross: Vec<f64>,
}

impl Pairwise {
    /// An empty accumulator for k items.
    pub fn new(k: usize) -> Self {
        let m = k * (k + 1) / 2;
        Pairwise {
            k,
            shift: vec![None; k],
            n: vec![0; m],
            sum_a: vec![0.0; m],
            sum_b: vec![0.0; m],
            cross: vec![0.0; m],
        }
    }

    /// Add one row (`None` for a missing response).
    pub fn add(&mut self, row: &[Option<f64>]) {
        let k = self.k;
        for (a, v) in row.iter().enumerate() {
            if let (Some(x), None) = (v, self.shift[a]) {
                self.shift[a] = Some(*x);
            }
        }
        for (a, va) in row.iter().enumerate() {
            let Some(xa) = va else { continue };
            let da = xa - self.shift[a].expect("set above");
            for (b, vb) in row.iter().enumerate().skip(a) {
                let Some(xb) = vb else { continue };
                let db = xb - self.shift[b].expect("set above");
                let i = packed(k, a, b);
                self.n[i] += 1;
                self.sum_a[i] += da;
                self.sum_b[i] += db;
                self.cross[i] += da * db;
            }
        }
    }

    /// Means and pairwise covariances; `None` when some pair has fewer than 2 rows.
    pub fn finish(&self) -> Option<Moments> {
        let k = self.k;
        let mut cov = DMatrix::zeros(k, k);
        let mut counts = DMatrix::zeros(k, k);
        let mut mean = DVector::zeros(k);
        for a in 0..k {
            for b in a..k {
                let i = packed(k, a, b);
                let n = self.n[i];
                if n < 2 {
                    return None;
                }
                let nf = n as f64;
                let c = (self.cross[i] - self.sum_a[i] * self.sum_b[i] / nf) / (nf - 1.0);
                cov[(a, b)] = c;
                cov[(b, a)] = c;
                counts[(a, b)] = n;
                counts[(b, a)] = n;
                if a == b {
                    mean[a] = self.shift[a].unwrap_or(0.0) + self.sum_a[i] / nf;
                }
            }
        }
        Some(Moments {
            mean,
            cov,
            n: counts,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rows() -> Vec<Vec<f64>> {
        vec![
            vec![1.0, 2.0, 3.0],
            vec![2.0, 2.0, 5.0],
            vec![4.0, 1.0, 4.0],
            vec![3.0, 5.0, 2.0],
            vec![5.0, 4.0, 1.0],
        ]
    }

    /// Two-pass covariance written out directly.
    fn direct(rows: &[Vec<f64>]) -> DMatrix<f64> {
        let n = rows.len() as f64;
        let k = rows[0].len();
        let mean: Vec<f64> = (0..k)
            .map(|a| rows.iter().map(|r| r[a]).sum::<f64>() / n)
            .collect();
        DMatrix::from_fn(k, k, |a, b| {
            rows.iter()
                .map(|r| (r[a] - mean[a]) * (r[b] - mean[b]))
                .sum::<f64>()
                / (n - 1.0)
        })
    }

    #[test]
    fn listwise_matches_two_pass_and_merges() {
        let r = rows();
        let mut acc = Listwise::new(3);
        r.iter().for_each(|x| acc.add(x));
        let m = acc.finish().unwrap();
        assert!((m.cov.clone() - direct(&r)).abs().max() < 1e-12);
        let mut a = Listwise::new(3);
        let mut b = Listwise::new(3);
        r[..2].iter().for_each(|x| a.add(x));
        r[2..].iter().for_each(|x| b.add(x));
        a.merge(&b);
        let merged = a.finish().unwrap();
        assert!((merged.cov - m.cov).abs().max() < 1e-12);
        assert!((merged.mean - m.mean).abs().max() < 1e-12);
    }

    /// The block update gives the sums of the row-by-row update.
    #[test]
    fn block_update_equals_row_updates() {
        let r: Vec<Vec<f64>> = (0..50)
            .map(|i| {
                (0..7)
                    .map(|j| ((i * 7 + j * 3) % 5) as f64 + 0.5 * j as f64)
                    .collect()
            })
            .collect();
        let mut by_row = Listwise::new(7);
        r.iter().for_each(|x| by_row.add(x));
        let flat: Vec<f64> = r.iter().flatten().copied().collect();
        let mut by_block = Listwise::new(7);
        let mut scratch = Vec::new();
        by_block.add_block(&flat[..7 * 13], &mut scratch);
        by_block.add_block(&flat[7 * 13..], &mut scratch);
        let (a, b) = (by_row.finish().unwrap(), by_block.finish().unwrap());
        assert!((a.cov.clone() - b.cov).abs().max() < 1e-12);
        assert!((a.mean - b.mean).abs().max() < 1e-12);
        assert!((a.cov - direct(&r)).abs().max() < 1e-12);
    }

    #[test]
    fn pairwise_equals_listwise_without_missing() {
        let r = rows();
        let mut acc = Pairwise::new(3);
        r.iter()
            .for_each(|x| acc.add(&x.iter().map(|v| Some(*v)).collect::<Vec<_>>()));
        let m = acc.finish().unwrap();
        assert!((m.cov - direct(&r)).abs().max() < 1e-12);
    }
}
