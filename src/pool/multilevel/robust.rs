//! Cluster-robust inference for a multilevel fit: the CR2 covariance with Satterthwaite
//! degrees of freedom, computed cluster by cluster (O(Σ kⱼ³)).

use super::MultilevelFit;
use super::data::{NestedData, not_positive_definite};
use crate::error::{Error, Result};
use nalgebra::{DMatrix, DVector, SymmetricEigen};

/// Eigenvalues of a cluster's adjustment matrix below this share of its scale (that of
/// V̂ⱼ²) are treated as 0 (a cluster that determines a coefficient on its own: the
/// generalized inverse square root is used).
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
    use rayon::prelude::*;
    let p = d.p();
    let m = &fit.cov;
    // Partial sums per chunk of clusters, added in chunk order (the same whatever the
    // number of threads).
    let parts: Vec<Result<Cr2Sums>> = d
        .blocks
        .par_chunks(super::data::CLUSTERS_PER_CHUNK)
        .map(|chunk| {
            let mut s = Cr2Sums::zeros(p);
            for b in chunk {
                s.add_cluster(d, b, fit)?;
            }
            Ok(s)
        })
        .collect();
    let mut total = Cr2Sums::zeros(p);
    for part in parts {
        total.add(&part?);
    }
    let df = (0..p)
        .map(|c| {
            let mg = m * &total.g_sum[c];
            let den = total.d2[c] - 2.0 * total.da[c] + (&mg * &mg).trace();
            total.num[c] * total.num[c] / den
        })
        .collect();
    Ok(RobustCovariance {
        cov: total.meat,
        df,
    })
}

/// The Satterthwaite degrees of freedom of the CR2 test of one contrast cᵀβ (as [`cr2`]
/// computes them for each coefficient).
pub fn contrast_df(d: &NestedData, fit: &MultilevelFit, c: &[f64]) -> Result<f64> {
    let p = d.p();
    let m = &fit.cov;
    let cv = DVector::from_column_slice(c);
    let (mut num, mut d2, mut da) = (0.0, 0.0, 0.0);
    let mut g_sum = DMatrix::<f64>::zeros(p, p);
    for b in &d.blocks {
        let ClusterParts { v: vj, x, g } = cluster_parts(d, b, fit)?;
        let g = g * &cv;
        let dj = (g.transpose() * &vj * &g)[(0, 0)];
        let a = x.transpose() * &g;
        let ama = (a.transpose() * m * &a)[(0, 0)];
        num += dj - ama;
        d2 += dj * dj;
        da += dj * ama;
        g_sum += &a * a.transpose();
    }
    let mg = m * &g_sum;
    Ok(num * num / (d2 - 2.0 * da + (&mg * &mg).trace()))
}

/// The sums over clusters behind CR2 and its degrees of freedom.
struct Cr2Sums {
    meat: DMatrix<f64>,
    num: Vec<f64>,
    d2: Vec<f64>,
    da: Vec<f64>,
    g_sum: Vec<DMatrix<f64>>,
}

impl Cr2Sums {
    fn zeros(p: usize) -> Cr2Sums {
        Cr2Sums {
            meat: DMatrix::zeros(p, p),
            num: vec![0.0; p],
            d2: vec![0.0; p],
            da: vec![0.0; p],
            g_sum: vec![DMatrix::zeros(p, p); p],
        }
    }

    fn add(&mut self, o: &Cr2Sums) {
        self.meat += &o.meat;
        for c in 0..self.num.len() {
            self.num[c] += o.num[c];
            self.d2[c] += o.d2[c];
            self.da[c] += o.da[c];
            self.g_sum[c] += &o.g_sum[c];
        }
    }

    /// One cluster's part: its adjustment, its share of the meat and of the df sums.
    fn add_cluster(
        &mut self,
        d: &NestedData,
        b: &super::data::Block,
        fit: &MultilevelFit,
    ) -> Result<()> {
        let m = &fit.cov;
        // Gⱼ = AⱼWⱼXⱼM: column c is gⱼ for coefficient c (cᵀβ̂'s CR2 variance is Σⱼ (gⱼᵀeⱼ)²).
        let ClusterParts { v: vj, x, g } = cluster_parts(d, b, fit)?;
        let resid = d.y_of(b) - &x * &fit.beta;
        let h = g.transpose() * &resid;
        self.meat += &h * h.transpose();
        for c in 0..d.p() {
            let gc: DVector<f64> = g.column(c).into_owned();
            let dj = (gc.transpose() * &vj * &gc)[(0, 0)];
            let a = x.transpose() * &gc;
            let ama = (a.transpose() * m * &a)[(0, 0)];
            self.num[c] += dj - ama;
            self.d2[c] += dj * dj;
            self.da[c] += dj * ama;
            self.g_sum[c] += &a * a.transpose();
        }
        Ok(())
    }
}

/// The approximate Hotelling T² test of several coefficients at once.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HotellingTest {
    /// F = ((η − q + 1)/(η q))·Q, Q the cluster-robust Wald statistic.
    pub statistic: f64,
    /// Numerator degrees of freedom q (the coefficients tested).
    pub df_num: f64,
    /// Denominator degrees of freedom η − q + 1.
    pub df_den: f64,
    /// P(F(q, η − q + 1) > statistic).
    pub p: f64,
}

/// The approximate Hotelling T² (HTZ) test that the coefficients in `columns` are all 0:
/// Q = (Cβ̂)ᵀ(C V^CR2 Cᵀ)⁻¹(Cβ̂), referred as ((η − q + 1)/(η q))·Q to F(q, η − q + 1), with
/// η = q(q + 1) / Σₛₜ Σᵢⱼ (pₛᵢᵀΦpₜⱼ·pₜᵢᵀΦpₛⱼ + pₛᵢᵀΦpₛⱼ·pₜᵢᵀΦpₜⱼ) under the working model,
/// pₛᵢ = (I − H)ᵢᵀAᵢWᵢXᵢMCᵀgₛ and gₛ the columns of (CMCᵀ)^{-1/2}. With
/// pₛᵢᵀΦpₜⱼ = δᵢⱼ(Dᵢ)ₛₜ − bₛᵢᵀMbₜⱼ (Dᵢ = GᵢᵀΦᵢGᵢ, bₛᵢ = Xᵢᵀgₛᵢ) the double sum over clusters
/// becomes one sum and traces of Gₜₛ = Σᵢ bₜᵢbₛᵢᵀ. `None` when η − q + 1 ≤ 0 or the robust
/// covariance of the tested coefficients is singular.
///
/// # References
/// Tipton, E., & Pustejovsky, J. E. (2015). Small-sample adjustments for tests of
/// moderators and model fit using robust variance estimation in meta-regression.
/// *Journal of Educational and Behavioral Statistics*, 40(6), 604–634.
/// Pustejovsky, J. E., & Tipton, E. (2018), section 3.2 (as [`cr2`]).
pub fn hotelling(
    d: &NestedData,
    fit: &MultilevelFit,
    robust: &RobustCovariance,
    columns: &[usize],
) -> Result<Option<HotellingTest>> {
    let q = columns.len();
    if q == 0 {
        return Ok(None);
    }
    let p = d.p();
    let m = &fit.cov;
    let c = DMatrix::from_fn(q, p, |s, j| if columns[s] == j { 1.0 } else { 0.0 });
    let cmc = &c * m * c.transpose();
    // L = Cᵀ(CMCᵀ)^{-1/2}: its columns are Cᵀgₛ.
    let l = power_times(cmc.clone(), -0.5, EIGEN_FLOOR * cmc.diagonal().max(), &c).transpose();
    let mut single = 0.0;
    let mut g_ts: Vec<DMatrix<f64>> = vec![DMatrix::zeros(p, p); q * q];
    for b in &d.blocks {
        let ClusterParts { v: vj, x, g } = cluster_parts(d, b, fit)?;
        let gi = g * &l; // kⱼ × q: columns gₛᵢ
        let di = gi.transpose() * &vj * &gi;
        let bi = x.transpose() * &gi; // p × q: columns bₛᵢ
        let ei = bi.transpose() * m * &bi;
        single += (&di * &di).trace() + di.trace().powi(2)
            - 2.0 * (&di * &ei).trace()
            - 2.0 * di.trace() * ei.trace();
        for s in 0..q {
            for t in 0..q {
                g_ts[t * q + s] += bi.column(t) * bi.column(s).transpose();
            }
        }
    }
    let mut pairs = 0.0;
    for s in 0..q {
        for t in 0..q {
            let gts = &g_ts[t * q + s];
            let gst = &g_ts[s * q + t];
            pairs += (gts * m * gts * m).trace() + (gts * m * gst * m).trace();
        }
    }
    let eta = (q * (q + 1)) as f64 / (single + pairs);
    let df_den = eta - q as f64 + 1.0;
    let beta = c * &fit.beta;
    let vr = DMatrix::from_fn(q, q, |a, bb| robust.cov[(columns[a], columns[bb])]);
    let Some(ch) = vr.cholesky() else {
        return Ok(None);
    };
    if df_den.is_nan() || df_den <= 0.0 {
        return Ok(None);
    }
    let wald = beta.dot(&ch.solve(&beta));
    let statistic = df_den / (eta * q as f64) * wald;
    Ok(Some(HotellingTest {
        statistic,
        df_num: q as f64,
        df_den,
        p: crate::dist::f_sf(statistic, q as f64, df_den),
    }))
}

/// One cluster's working covariance V̂ⱼ, its design rows Xⱼ and Gⱼ = AⱼWⱼXⱼM, with
/// Aⱼ = Dⱼᵀ (Dⱼ(V̂ⱼ − XⱼMXⱼᵀ)Dⱼᵀ)^{-1/2} Dⱼ, Dⱼ = Lᵀ and V̂ⱼ = LLᵀ (the upper Cholesky factor:
/// DⱼᵀDⱼ = V̂ⱼ; any such factor gives the same Aⱼ). Since Wⱼ = L⁻ᵀL⁻¹, AⱼWⱼ = L B^{-1/2} L⁻¹
/// with B = Lᵀ(V̂ⱼ − XⱼMXⱼᵀ)L: Gⱼ = L B^{-1/2} (L⁻¹XⱼM), and neither Wⱼ nor Aⱼ is formed.
struct ClusterParts {
    v: DMatrix<f64>,
    x: DMatrix<f64>,
    g: DMatrix<f64>,
}

fn cluster_parts(
    d: &NestedData,
    b: &super::data::Block,
    fit: &MultilevelFit,
) -> Result<ClusterParts> {
    let r = fit.options.sampling_correlation;
    let m = &fit.cov;
    let v = d.marginal_cov(b, r, [fit.tau2_cluster, fit.tau2_within]);
    let x = d.x_of(b);
    let mut xm = &x * m;
    let l = nalgebra::Cholesky::new(v.clone())
        .ok_or_else(not_positive_definite)?
        .unpack();
    // C = V̂ⱼ − XⱼMXⱼᵀ, one rank-one update per coefficient; then B = LᵀCL.
    let mut c = v.clone();
    for j in 0..x.ncols() {
        c.ger(-1.0, &xm.column(j), &x.column(j), 1.0);
    }
    let mut t = DMatrix::zeros(b.len, b.len);
    c.mul_to(&l, &mut t);
    l.tr_mul_to(&t, &mut c);
    // Bⱼ is on the scale of V̂ⱼ²: its eigenvalues below 1e-12 of that scale are rounding
    // (a cluster that determines a coefficient on its own) and are treated as 0.
    let top = v.diagonal().max();
    if !l.solve_lower_triangular_mut(&mut xm) {
        return Err(Error::cannot("a cluster's Cholesky factor is singular"));
    }
    let z = power_times(c, -0.5, EIGEN_FLOOR * top * top, &xm);
    Ok(ClusterParts { g: &l * z, v, x })
}

/// (Aᵉ)·y for the symmetric part of A (a positive semi-definite matrix), eigenvalues at or
/// below `floor` (and any that is not a number) sent to 0.
fn power_times(mut a: DMatrix<f64>, e: f64, floor: f64, y: &DMatrix<f64>) -> DMatrix<f64> {
    let n = a.nrows();
    for i in 0..n {
        for j in 0..i {
            let mean = 0.5 * (a[(i, j)] + a[(j, i)]);
            a[(i, j)] = mean;
            a[(j, i)] = mean;
        }
    }
    let eig = SymmetricEigen::new(a);
    let mut qy = eig.eigenvectors.tr_mul(y);
    for (i, l) in eig.eigenvalues.iter().enumerate() {
        let f = if *l > floor { l.powf(e) } else { 0.0 };
        qy.row_mut(i).iter_mut().for_each(|x| *x *= f);
    }
    &eig.eigenvectors * qy
}

#[cfg(test)]
mod tests {
    use super::super::{Grouping, MultilevelOptions, NestedData, fit};
    use super::*;

    /// With one coefficient tested, the Hotelling test is the square of the CR2 t test with
    /// its Satterthwaite df (η reduces to ν; Pustejovsky & Tipton 2018, section 3.2): F =
    /// t², df (1, ν).
    #[test]
    fn hotelling_with_one_coefficient_is_the_squared_t_test() {
        let y = [0.3, -0.1, 0.45, 0.2, 0.9, -0.35, 0.05, 0.6, 0.1, 0.25];
        let v = [0.04, 0.02, 0.05, 0.03, 0.04, 0.06, 0.02, 0.03, 0.05, 0.04];
        let mods = [1.0, 2.0, 0.5, 3.0, 2.5, 1.5, 0.0, 4.0, 2.0, 1.0];
        let x = DMatrix::from_fn(10, 2, |i, j| if j == 0 { 1.0 } else { mods[i] });
        let g = Grouping {
            cluster: vec![0, 0, 1, 1, 2, 3, 3, 4, 5, 5],
            sample: vec![0, 0, 1, 2, 3, 4, 4, 5, 6, 7],
        };
        let d = NestedData::new(&y, &v, &x, &g).unwrap();
        let f = fit(
            &d,
            &MultilevelOptions {
                restricted: true,
                sampling_correlation: 0.6,
            },
        )
        .unwrap();
        let r = cr2(&d, &f).unwrap();
        let h = hotelling(&d, &f, &r, &[1]).unwrap().unwrap();
        // The df of a unit contrast is that coefficient's own.
        for j in 0..2 {
            let mut c = [0.0; 2];
            c[j] = 1.0;
            let df = contrast_df(&d, &f, &c).unwrap();
            assert!((df - r.df[j]).abs() < 1e-9 * r.df[j], "{df} vs {}", r.df[j]);
        }
        let t = f.beta[1] / r.cov[(1, 1)].sqrt();
        assert!(
            (h.statistic - t * t).abs() < 1e-9 * t * t,
            "{} vs {}",
            h.statistic,
            t * t
        );
        assert!(
            (h.df_den - r.df[1]).abs() < 1e-9 * r.df[1],
            "{} vs {}",
            h.df_den,
            r.df[1]
        );
    }

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
