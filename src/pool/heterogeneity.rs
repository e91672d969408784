//! Heterogeneity statistics: Q, I², H² and the typical within-study variance.

use super::data::MetaData;
use crate::dist::chi2_sf;
use crate::error::Result;
use serde::Serialize;

/// Cochran's Q test and the typical within-study variance of a data set.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Heterogeneity {
    /// Q = Σ (yᵢ − xᵢβ̂)²/vᵢ with common-effect weights.
    pub q: f64,
    /// Its degrees of freedom, k − p.
    pub df: f64,
    /// P(χ²(df) > Q).
    pub p: f64,
    /// Typical within-study variance s² = (k − p) / tr P, P from the weights 1/vᵢ.
    pub typical_variance: f64,
}

impl Heterogeneity {
    /// Compute Q, its test and s².
    ///
    /// # References
    /// Cochran, W. G. (1954). The combination of estimates from different experiments.
    /// *Biometrics*, 10(1), 101–129.
    /// Higgins, J. P. T., & Thompson, S. G. (2002). Quantifying heterogeneity in a
    /// meta-analysis. *Statistics in Medicine*, 21(11), 1539–1558.
    pub fn of(d: &MetaData) -> Result<Self> {
        let fit = d.fit_at(0.0)?;
        let df = (d.k() - d.p()) as f64;
        let tr_p = fit.trace_p(d.design());
        Ok(Heterogeneity {
            q: fit.q,
            df,
            p: chi2_sf(fit.q, df),
            typical_variance: df / tr_p,
        })
    }

    /// I² in percent for a given τ²: 100 τ² / (τ² + s²).
    pub fn i2(&self, tau2: f64) -> f64 {
        100.0 * tau2 / (tau2 + self.typical_variance)
    }

    /// H² for a given τ²: (τ² + s²) / s².
    pub fn h2(&self, tau2: f64) -> f64 {
        (tau2 + self.typical_variance) / self.typical_variance
    }

    /// I² in percent from Q alone, max(0, (Q − df)/Q); used under the common-effect model.
    pub fn i2_from_q(&self) -> f64 {
        if self.q <= 0.0 {
            0.0
        } else {
            (100.0 * (self.q - self.df) / self.q).max(0.0)
        }
    }

    /// H² from Q alone, Q/df; used under the common-effect model.
    pub fn h2_from_q(&self) -> f64 {
        self.q / self.df
    }
}
