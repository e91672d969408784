//! Cluster-robust inference for a multilevel fit: the CR2 covariance with Satterthwaite
//! degrees of freedom, computed cluster by cluster (O(Σ kⱼ³)).

use super::MultilevelFit;
use super::data::{NestedData, inverse_and_log_det};
use crate::error::Result;
use nalgebra::{DMatrix, DVector, SymmetricEigen};

/// Eigenvalues of a cluster's adjustment matrix below this share of its largest are
/// treated as 0 (a cluster that determines a coefficient on its own: the generalized
/// inverse square root is used).
const EIGEN_FLOOR: f64 = 1e-12;

/// The CR2 covariance of a fit's coefficients and the Satterthwaite degrees of freedom of
/// each coefficient's t test.
#[derive(Debug, Clone, PartialEq)]
pub struct RobustCovariance {
    /// The CR2 covariance matrix.
    pub cov: DMatrix<f64>,
    /// Satterthwaite degrees of freedom of each coefficient.
    pub df: Vec<f64>,
}

/// The CR2 covariance M (Σⱼ XⱼᵀWⱼAⱼeⱼeⱼᵀAⱼWⱼXⱼ) M, M = (XᵀWX)⁻¹, with the working weights
/// W = V̂⁻¹ of the fit and Aⱼ = Dⱼᵀ Bⱼ^{-1/2} Dⱼ, DⱼᵀDⱼ = V̂ⱼ, Bⱼ = Dⱼ(I − H)ⱼV̂(I − H)ⱼᵀDⱼᵀ =
/// Dⱼ(V̂ⱼ − XⱼMXⱼᵀ)Dⱼᵀ (H = XMXᵀW; the second form holds because W = V̂⁻¹); and, for each
/// coefficient c, the Satterthwaite degrees of freedom under the working model,
/// (Σⱼ Ωⱼⱼ)² / Σᵢⱼ Ωᵢⱼ², where Ωᵢⱼ = pᵢᵀV̂pⱼ with pⱼ = (I − H)ᵀgⱼ, gⱼ = AⱼWⱼXⱼMc, which
/// reduces to δᵢⱼ gⱼᵀV̂ⱼgⱼ − aᵢᵀMaⱼ with aⱼ = Xⱼᵀgⱼ (so that Σᵢⱼ (aᵢᵀMaⱼ)² = tr((MG)²),
/// G = Σⱼ aⱼaⱼᵀ, and no pair of clusters is visited).
///
/// # References
/// Bell, R. M., & McCaffrey, D. F. (2002). Bias reduction in standard errors for linear
/// regression with multi-stage samples. *Survey Methodology*, 28(2), 169–181.
/// Tipton, E. (2015). Small sample adjustments for robust variance estimation with
/// meta-regression. *Psychological Methods*, 20(3), 375–393.
/// Pustejovsky, J. E., & Tipton, E. (2018). Small-sample methods for cluster-robust
/// variance estimation and hypothesis testing in fixed effects models. *Journal of
/// Business & Economic Statistics*, 36(4), 672–683.
pub fn cr2(d: &NestedData, fit: &MultilevelFit) -> Result<RobustCovariance> {
    let p = d.p();
    let r = fit.options.sampling_correlation;
    let theta = [fit.tau2_cluster, fit.tau2_within];
    let m = &fit.cov;
    let mut meat = DMatrix::<f64>::zeros(p, p);
    let mut num = vec![0.0; p];
    let mut d2 = vec![0.0; p];
    let mut da = vec![0.0; p];
    let mut g_sum: Vec<DMatrix<f64>> = vec![DMatrix::zeros(p, p); p];
    for b in &d.blocks {
        let vj = d.marginal_cov(b, r, theta);
        let (wj, _) = inverse_and_log_det(vj.clone())?;
        let x = d.x_of(b);
        let resid = d.y_of(b) - &x * &fit.beta;
        let aj = adjustment(&vj, &x, m);
        // Gⱼ = AⱼWⱼXⱼM: column c is gⱼ for coefficient c (cᵀβ̂'s CR2 variance is Σⱼ (gⱼᵀeⱼ)²).
        let g = &aj * &wj * &x * m;
        let h = g.transpose() * &resid;
        meat += &h * h.transpose();
        for c in 0..p {
            let gc: DVector<f64> = g.column(c).into_owned();
            let dj = (gc.transpose() * &vj * &gc)[(0, 0)];
            let a = x.transpose() * &gc;
            let ama = (a.transpose() * m * &a)[(0, 0)];
            num[c] += dj - ama;
            d2[c] += dj * dj;
            da[c] += dj * ama;
            g_sum[c] += &a * a.transpose();
        }
    }
    let df = (0..p)
        .map(|c| {
            let mg = m * &g_sum[c];
            let den = d2[c] - 2.0 * da[c] + (&mg * &mg).trace();
            num[c] * num[c] / den
        })
        .collect();
    Ok(RobustCovariance { cov: meat, df })
}

/// Aⱼ = V̂ⱼ^{1/2} (V̂ⱼ^{1/2}(V̂ⱼ − XⱼMXⱼᵀ)V̂ⱼ^{1/2})^{-1/2} V̂ⱼ^{1/2} (the symmetric square root
/// as Dⱼ: any factor with DⱼᵀDⱼ = V̂ⱼ gives the same Aⱼ).
fn adjustment(v: &DMatrix<f64>, x: &DMatrix<f64>, m: &DMatrix<f64>) -> DMatrix<f64> {
    let root = matrix_power(v, 0.5);
    let b = &root * (v - x * m * x.transpose()) * &root;
    &root * matrix_power(&b, -0.5) * &root
}

/// A symmetric positive semi-definite matrix to the power `e`, eigenvalues below
/// [`EIGEN_FLOOR`] times the largest sent to 0.
fn matrix_power(a: &DMatrix<f64>, e: f64) -> DMatrix<f64> {
    let sym = (a + a.transpose()) * 0.5;
    let eig = SymmetricEigen::new(sym);
    let top = eig.eigenvalues.max();
    let vals = eig.eigenvalues.map(|l| {
        if l > EIGEN_FLOOR * top {
            l.powf(e)
        } else {
            0.0
        }
    });
    &eig.eigenvectors * DMatrix::from_diagonal(&vals) * eig.eigenvectors.transpose()
}

#[cfg(test)]
mod tests {
    use super::super::{Grouping, MultilevelOptions, NestedData, fit};
    use super::*;

    /// Intercept only, equal variances, one row per cluster: the weights are equal, so the
    /// CR2 variance is s²/m (s² the sample variance of the m effects) with m − 1 degrees of
    /// freedom — the textbook standard error of a mean and its t test (Bell & McCaffrey
    /// 2002: CR2 is exactly unbiased here).
    #[test]
    fn equal_variances_one_row_per_cluster_give_the_t_test_of_a_mean() {
        let y = [0.3, -0.1, 0.45, 0.2, 0.9, -0.35, 0.05, 0.6];
        let m = y.len();
        let v = vec![0.04; m];
        let x = DMatrix::from_element(m, 1, 1.0);
        let d = NestedData::new(&y, &v, &x, &Grouping::independent(m)).unwrap();
        let options = MultilevelOptions {
            restricted: true,
            sampling_correlation: 0.6,
        };
        let f = fit(&d, &options).unwrap();
        let r = cr2(&d, &f).unwrap();
        let mean = y.iter().sum::<f64>() / m as f64;
        let s2 = y.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (m - 1) as f64;
        assert!((f.beta[0] - mean).abs() < 1e-12);
        assert!(
            (r.cov[(0, 0)] - s2 / m as f64).abs() < 1e-12 * s2,
            "{}",
            r.cov[(0, 0)]
        );
        assert!((r.df[0] - (m - 1) as f64).abs() < 1e-9, "{}", r.df[0]);
    }
}
