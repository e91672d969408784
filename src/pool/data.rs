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
            return Err(Error::InvalidOption(format!(
                "effects ({}), variances ({}) and design rows ({}) differ in number",
                y.len(),
                v.len(),
                x.nrows()
            )));
        }
        if let Some(i) = y.iter().position(|e| !e.is_finite()) {
            return Err(Error::InvalidOption(format!(
                "effect {} is not a finite number",
                i + 1
            )));
        }
        if let Some(i) = v.iter().position(|s| !(s.is_finite() && *s > 0.0)) {
            return Err(Error::InvalidOption(format!(
                "sampling variance {} must be a finite number above 0",
                i + 1
            )));
        }
        if x.iter().any(|e| !e.is_finite()) {
            return Err(Error::InvalidOption(
                "the design matrix holds a value that is not a finite number".into(),
            ));
        }
        Ok(MetaData { y, v, x })
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

    /// The same data with effects divided by √s and variances by s, s the median sampling
    /// variance; returns the rescaled data and s. τ² on the rescaled data times s is τ² on
    /// the original scale, so that tolerances hold relative to the typical variance.
    pub(crate) fn rescaled(&self) -> (MetaData, f64) {
        let mut sorted = self.v.clone();
        sorted.sort_by(|a, b| a.total_cmp(b));
        let n = sorted.len();
        let s = if n % 2 == 1 {
            sorted[n / 2]
        } else {
            0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
        };
        let root = s.sqrt();
        (
            MetaData {
                y: self.y.iter().map(|y| y / root).collect(),
                v: self.v.iter().map(|v| v / s).collect(),
                x: self.x.clone(),
            },
            s,
        )
    }

    /// Weighted least squares with weights 1 / (vᵢ + τ²).
    pub(crate) fn fit_at(&self, tau2: f64) -> Result<WeightedFit> {
        let w: Vec<f64> = self.v.iter().map(|vi| 1.0 / (vi + tau2)).collect();
        weighted_fit(&self.y, &self.x, w)
    }

    /// Ordinary (unweighted) least squares.
    pub(crate) fn fit_unweighted(&self) -> Result<WeightedFit> {
        weighted_fit(&self.y, &self.x, vec![1.0; self.k()])
    }

    /// The generalized Q statistic Σ wᵢ eᵢ² at τ² (decreasing in τ²).
    pub(crate) fn q_at(&self, tau2: f64) -> Result<f64> {
        Ok(self.fit_at(tau2)?.q)
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

/// Σᵢ wᵢ^power xᵢ xᵢᵀ.
pub(crate) fn cross_product(x: &DMatrix<f64>, w: &[f64], power: i32) -> DMatrix<f64> {
    let p = x.ncols();
    let mut m = DMatrix::zeros(p, p);
    for (i, wi) in w.iter().enumerate() {
        let wp = wi.powi(power);
        for a in 0..p {
            let xa = x[(i, a)] * wp;
            for b in 0..=a {
                m[(a, b)] += xa * x[(i, b)];
            }
        }
    }
    for a in 0..p {
        for b in 0..a {
            m[(b, a)] = m[(a, b)];
        }
    }
    m
}

pub(crate) fn weighted_fit(y: &[f64], x: &DMatrix<f64>, w: Vec<f64>) -> Result<WeightedFit> {
    let p = x.ncols();
    let xtwx = cross_product(x, &w, 1);
    let mut xtwy = DVector::zeros(p);
    for (i, (wi, yi)) in w.iter().zip(y).enumerate() {
        for a in 0..p {
            xtwy[a] += wi * x[(i, a)] * yi;
        }
    }
    let chol = xtwx.clone().cholesky().ok_or_else(|| {
        Error::CannotAnalyse(
            "the model's design is singular (a moderator is constant or a linear \
             combination of others), so its coefficients cannot be estimated"
                .into(),
        )
    })?;
    let log_det_xtwx = 2.0 * chol.l().diagonal().iter().map(|d| d.ln()).sum::<f64>();
    let xtwx_inv = chol.inverse();
    let beta = &xtwx_inv * xtwy;
    let mut resid = Vec::with_capacity(y.len());
    let mut q = 0.0;
    for (i, (wi, yi)) in w.iter().zip(y).enumerate() {
        let mut fitted = 0.0;
        for a in 0..p {
            fitted += x[(i, a)] * beta[a];
        }
        let e = yi - fitted;
        q += wi * e * e;
        resid.push(e);
    }
    Ok(WeightedFit {
        w,
        beta,
        xtwx_inv,
        log_det_xtwx,
        resid,
        q,
    })
}

impl WeightedFit {
    /// tr(P) with P = W − WX(XᵀWX)⁻¹XᵀW, in O(k·p²).
    pub(crate) fn trace_p(&self, x: &DMatrix<f64>) -> f64 {
        let sum_w: f64 = self.w.iter().sum();
        let b2 = cross_product(x, &self.w, 2);
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
        assert!((f.trace_p(d.x()) - tp).abs() < 1e-12);
    }

    #[test]
    fn rejects_bad_variances() {
        assert!(MetaData::intercept_only(vec![1.0], vec![0.0]).is_err());
        assert!(MetaData::intercept_only(vec![f64::NAN], vec![1.0]).is_err());
    }
}
