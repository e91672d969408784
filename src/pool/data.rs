//! The data a random-effects fit works on, and the weighted least-squares fit at a
//! given τ², computed in O(k·p²) without forming any k × k matrix.

use crate::error::{Error, Result};
use nalgebra::{DMatrix, DVector};

/// Effects, their sampling variances and a design matrix (a column of ones for
/// plain pooling).
#[derive(Debug, Clone)]
pub struct MetaData {
    y: Vec<f64>,
    v: Vec<f64>,
    x: DMatrix<f64>,
    /// The products of every pair of design columns (a ≤ b), each pair's k products
    /// contiguous, so that XᵀWX is p(p + 1)/2 dot products with the weights; formed once
    /// per data set (when it fits in [`PAIR_PRODUCTS_MAX`] values).
    pairs: Option<Vec<f64>>,
}

/// Most values held for the pairwise column products (32 MB); larger designs form the
/// products on the fly.
const PAIR_PRODUCTS_MAX: usize = 4 << 20;

fn pair_products(x: &DMatrix<f64>) -> Option<Vec<f64>> {
    let (k, p) = x.shape();
    let cells = p * (p + 1) / 2;
    if p == 1 || cells.saturating_mul(k) > PAIR_PRODUCTS_MAX {
        return None;
    }
    let cols = x.as_slice();
    let mut out = Vec::with_capacity(cells * k);
    for a in 0..p {
        for b in 0..=a {
            let (ca, cb) = (&cols[a * k..(a + 1) * k], &cols[b * k..(b + 1) * k]);
            out.extend(ca.iter().zip(cb).map(|(u, v)| u * v));
        }
    }
    Some(out)
}

impl MetaData {
    /// Intercept-only data: every study estimates one mean.
    pub fn intercept_only(y: Vec<f64>, v: Vec<f64>) -> Result<Self> {
        let k = y.len();
        Self::with_design(y, v, DMatrix::from_element(k, 1, 1.0))
    }

    /// Data with a k × p design matrix.
    pub fn with_design(y: Vec<f64>, v: Vec<f64>, x: DMatrix<f64>) -> Result<Self> {
        if y.len() != v.len() || y.len() != x.nrows() {
            return Err(Error::cannot(format!(
                "effects ({}), variances ({}) and design rows ({}) differ in number",
                y.len(),
                v.len(),
                x.nrows()
            )));
        }
        if let Some(i) = y.iter().position(|e| !e.is_finite()) {
            return Err(Error::cannot(format!(
                "effect {} is not a finite number",
                i + 1
            )));
        }
        if let Some(i) = v.iter().position(|s| !(s.is_finite() && *s > 0.0)) {
            return Err(Error::cannot(format!(
                "sampling variance {} must be a finite number above 0",
                i + 1
            )));
        }
        if x.iter().any(|e| !e.is_finite()) {
            return Err(Error::cannot(
                "the design matrix holds a value that is not a finite number",
            ));
        }
        let pairs = pair_products(&x);
        Ok(MetaData { y, v, x, pairs })
    }

    /// Number of studies.
    pub fn k(&self) -> usize {
        self.y.len()
    }

    /// Number of coefficients in the model (columns of the design).
    pub fn p(&self) -> usize {
        self.x.ncols()
    }

    /// The effects.
    pub fn y(&self) -> &[f64] {
        &self.y
    }

    /// The sampling variances.
    pub fn v(&self) -> &[f64] {
        &self.v
    }

    /// The design matrix.
    pub fn x(&self) -> &DMatrix<f64> {
        &self.x
    }

    /// The design, row by row, for the weighted passes.
    pub(crate) fn design(&self) -> Design<'_> {
        Design {
            cols: self.x.as_slice(),
            pairs: self.pairs.as_deref(),
            k: self.x.nrows(),
            p: self.x.ncols(),
        }
    }

    /// The same data with effects divided by √s and variances by s, s the median sampling
    /// variance; returns the rescaled data and s. τ² on the rescaled data times s is τ² on
    /// the original scale, so that tolerances hold relative to the typical variance.
    pub(crate) fn rescaled(&self) -> (MetaData, f64) {
        let s = crate::numeric::select_quantile(&mut self.v.clone(), 0.5);
        let root = s.sqrt();
        (
            MetaData {
                y: self.y.iter().map(|y| y / root).collect(),
                v: self.v.iter().map(|v| v / s).collect(),
                x: self.x.clone(),
                pairs: self.pairs.clone(),
            },
            s,
        )
    }

    /// Weighted least squares with weights 1 / (vᵢ + τ²).
    pub(crate) fn fit_at(&self, tau2: f64) -> Result<WeightedFit> {
        let w: Vec<f64> = self.v.iter().map(|vi| 1.0 / (vi + tau2)).collect();
        weighted_fit(&self.y, self.design(), w)
    }

    /// Ordinary (unweighted) least squares.
    pub(crate) fn fit_unweighted(&self) -> Result<WeightedFit> {
        weighted_fit(&self.y, self.design(), vec![1.0; self.k()])
    }

    /// The generalized Q statistic Σ wᵢ eᵢ² at τ² (decreasing in τ²).
    pub(crate) fn q_at(&self, tau2: f64) -> Result<f64> {
        q_statistic(&self.y, &self.v, self.design(), tau2)
    }
}

/// A weighted least-squares fit and the quantities the τ² estimators need.
#[derive(Debug, Clone)]
pub(crate) struct WeightedFit {
    /// The weights used.
    pub w: Vec<f64>,
    /// Coefficients.
    pub beta: DVector<f64>,
    /// (XᵀWX)⁻¹.
    pub xtwx_inv: DMatrix<f64>,
    /// ln |XᵀWX|.
    pub log_det_xtwx: f64,
    /// Residuals y − Xβ.
    pub resid: Vec<f64>,
    /// Σ wᵢ eᵢ².
    pub q: f64,
}

/// The design matrix's columns, each contiguous (nalgebra stores column by column).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Design<'a> {
    cols: &'a [f64],
    pairs: Option<&'a [f64]>,
    k: usize,
    p: usize,
}

impl Design<'_> {
    fn col(&self, j: usize) -> &[f64] {
        &self.cols[j * self.k..(j + 1) * self.k]
    }
}

/// Running sums in a weighted dot product: independent sums let the loop use vector
/// instructions and hide the latency of each addition.
const LANES: usize = 8;

/// Σᵢ aᵢ bᵢ with [`LANES`] running sums, then the remainder.
#[inline]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a, b) = (&a[..n], &b[..n]);
    let body = n / LANES * LANES;
    let mut acc = [0.0; LANES];
    for (ac, bc) in a[..body]
        .chunks_exact(LANES)
        .zip(b[..body].chunks_exact(LANES))
    {
        for j in 0..LANES {
            acc[j] += ac[j] * bc[j];
        }
    }
    let mut s = acc.iter().sum::<f64>();
    for i in body..n {
        s += a[i] * b[i];
    }
    s
}

/// Σᵢ wᵢ xᵢ² with [`LANES`] running sums.
fn dot_weighted_square(w: &[f64], x: &[f64]) -> f64 {
    let n = w.len().min(x.len());
    let (w, x) = (&w[..n], &x[..n]);
    let body = n / LANES * LANES;
    let mut acc = [0.0; LANES];
    for (wc, xc) in w[..body]
        .chunks_exact(LANES)
        .zip(x[..body].chunks_exact(LANES))
    {
        for j in 0..LANES {
            acc[j] += wc[j] * xc[j] * xc[j];
        }
    }
    let mut s = acc.iter().sum::<f64>();
    for i in body..n {
        s += w[i] * x[i] * x[i];
    }
    s
}

/// Σᵢ wᵢ xᵢ xᵢᵀ for each weight vector in `weights`: p(p + 1)/2 weighted dot products of
/// the design's columns per weight vector.
pub(crate) fn cross_products<const M: usize>(
    d: Design<'_>,
    weights: [&[f64]; M],
) -> [DMatrix<f64>; M] {
    let (p, k) = (d.p, d.k);
    if p == 1 && d.pairs.is_none() {
        // One column (plain pooling): Σ wᵢ xᵢ² directly.
        let x = d.col(0);
        return weights.map(|w| {
            let wx: f64 = dot_weighted_square(w, x);
            DMatrix::from_element(1, 1, wx)
        });
    }
    let mut out: [DMatrix<f64>; M] = std::array::from_fn(|_| DMatrix::zeros(p, p));
    // The product of two columns (formed once per data set, or here) weighted M ways.
    let mut scratch = Vec::new();
    let mut t = 0;
    for a in 0..p {
        for b in 0..=a {
            let ab: &[f64] = match d.pairs {
                Some(pairs) => &pairs[t * k..(t + 1) * k],
                None => {
                    scratch.clear();
                    scratch.extend(d.col(a).iter().zip(d.col(b)).map(|(x, y)| x * y));
                    &scratch
                }
            };
            for (o, w) in out.iter_mut().zip(weights) {
                let s = dot(w, ab);
                o[(a, b)] = s;
                o[(b, a)] = s;
            }
            t += 1;
        }
    }
    out
}

/// Σᵢ wᵢ xᵢ yᵢ.
fn cross_with(d: Design<'_>, w: &[f64], y: &[f64]) -> DVector<f64> {
    let wy: Vec<f64> = w.iter().zip(y).map(|(w, y)| w * y).collect();
    DVector::from_iterator(d.p, (0..d.p).map(|a| dot(&wy, d.col(a))))
}

/// The residuals y − Xβ.
fn residuals(d: Design<'_>, y: &[f64], beta: &DVector<f64>) -> Vec<f64> {
    let mut e = y.to_vec();
    for (a, b) in beta.iter().enumerate() {
        for (ei, xi) in e.iter_mut().zip(d.col(a)) {
            *ei -= b * xi;
        }
    }
    e
}

fn singular() -> Error {
    Error::cannot(
        "the model's design is singular (a moderator is constant or a linear \
         combination of others), so its coefficients cannot be estimated",
    )
}

pub(crate) fn weighted_fit(y: &[f64], x: Design<'_>, w: Vec<f64>) -> Result<WeightedFit> {
    let [xtwx] = cross_products(x, [&w]);
    let xtwy = cross_with(x, &w, y);
    let chol = xtwx.cholesky().ok_or_else(singular)?;
    let log_det_xtwx = 2.0
        * chol
            .l_dirty()
            .diagonal()
            .iter()
            .map(|d| d.ln())
            .sum::<f64>();
    let xtwx_inv = chol.inverse();
    let beta = &xtwx_inv * xtwy;
    let resid = residuals(x, y, &beta);
    let q = dot_weighted_square(&w, &resid);
    Ok(WeightedFit {
        w,
        beta,
        xtwx_inv,
        log_det_xtwx,
        resid,
        q,
    })
}

/// The generalized Q statistic Σ wᵢ eᵢ² with weights 1 / (vᵢ + τ²).
fn q_statistic(y: &[f64], v: &[f64], x: Design<'_>, tau2: f64) -> Result<f64> {
    let w: Vec<f64> = v.iter().map(|vi| 1.0 / (vi + tau2)).collect();
    let [xtwx] = cross_products(x, [&w]);
    let xtwy = cross_with(x, &w, y);
    let beta = xtwx.cholesky().ok_or_else(singular)?.solve(&xtwy);
    let e = residuals(x, y, &beta);
    Ok(dot_weighted_square(&w, &e))
}

impl WeightedFit {
    /// tr(P) with P = W − WX(XᵀWX)⁻¹XᵀW, in O(k·p²).
    pub(crate) fn trace_p(&self, x: Design<'_>) -> f64 {
        let sum_w: f64 = self.w.iter().sum();
        let w2: Vec<f64> = self.w.iter().map(|w| w * w).collect();
        let [b2] = cross_products(x, [&w2]);
        sum_w - (&self.xtwx_inv * b2).trace()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn intercept_only_fit_is_the_weighted_mean() {
        let d = MetaData::intercept_only(vec![1.0, 2.0, 4.0], vec![1.0, 0.5, 0.25]).unwrap();
        let f = d.fit_at(0.0).unwrap();
        let mean = (1.0 + 4.0 + 16.0) / 7.0;
        assert!((f.beta[0] - mean).abs() < 1e-14);
        // tr(P) = Σw − Σw²/Σw for the intercept-only model.
        let tp = 7.0 - (1.0 + 4.0 + 16.0) / 7.0;
        assert!((f.trace_p(d.design()) - tp).abs() < 1e-12);
    }

    #[test]
    fn rejects_bad_variances() {
        assert!(MetaData::intercept_only(vec![1.0], vec![0.0]).is_err());
        assert!(MetaData::intercept_only(vec![f64::NAN], vec![1.0]).is_err());
    }
}
