//! The one-factor model fitted by maximum likelihood — congeneric (free loadings) and
//! tau-equivalent (equal loadings) — with McDonald's omega, the likelihood-ratio test of
//! tau-equivalence, and the fit of the one-factor model.

use crate::dist::chi2_sf;
use crate::error::{Error, Result};
use crate::numeric::{MinimizeStop, bfgs};
use nalgebra::{DMatrix, DVector};

/// Smallest uniqueness allowed, as a share of the item's variance; a uniqueness driven
/// to this floor is a Heywood case.
const UNIQUENESS_FLOOR: f64 = 1e-6;
/// A uniqueness below this share of the item's variance is reported as a Heywood case.
const HEYWOOD_SHARE: f64 = 1e-3;
/// Gradient tolerance of the fits.
const GRADIENT_TOLERANCE: f64 = 1e-9;
/// Iteration limit of the fits.
const MAX_ITERATIONS: usize = 5000;

/// Which one-factor model.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FactorModel {
    /// Loadings free.
    Congeneric,
    /// One loading shared by every item (in the items' raw metric).
    TauEquivalent,
}

/// A fitted one-factor model.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorFit {
    /// Which model.
    pub model: FactorModel,
    /// Loadings in the items' raw metric.
    pub loadings: Vec<f64>,
    /// Uniquenesses (error variances) in the raw metric.
    pub uniquenesses: Vec<f64>,
    /// The minimized discrepancy F = ln|Σ| − ln|S| + tr(SΣ⁻¹) − k.
    pub discrepancy: f64,
    /// Iterations used.
    pub iterations: usize,
    /// Why the fit stopped.
    pub stop: MinimizeStop,
    /// Items whose uniqueness sits at or near zero (Heywood cases).
    pub heywood: Vec<usize>,
}

impl FactorFit {
    /// McDonald's omega (total) for the unit-weighted sum: (Σλ)² / ((Σλ)² + Σψ).
    ///
    /// # References
    /// McDonald, R. P. (1999). *Test theory: A unified treatment*. Mahwah, NJ: Erlbaum.
    pub fn omega(&self) -> f64 {
        let s: f64 = self.loadings.iter().sum();
        let u: f64 = self.uniquenesses.iter().sum();
        s * s / (s * s + u)
    }

    /// Loadings in the standardized metric, λᵢ/√Sᵢᵢ.
    pub fn standardized_loadings(&self, cov: &DMatrix<f64>) -> Vec<f64> {
        self.loadings
            .iter()
            .enumerate()
            .map(|(i, l)| l / cov[(i, i)].sqrt())
            .collect()
    }

    /// Uniquenesses in the standardized metric, ψᵢ/Sᵢᵢ.
    pub fn standardized_uniquenesses(&self, cov: &DMatrix<f64>) -> Vec<f64> {
        self.uniquenesses
            .iter()
            .enumerate()
            .map(|(i, u)| u / cov[(i, i)])
            .collect()
    }
}

/// The discrepancy of a one-factor structure Σ = λλᵀ + Ψ and its gradient, in O(k²)
/// (one product of S with a vector; no decomposition): with d = Ψ⁻¹1, u = d∘λ and
/// c = λᵀu, Woodbury's identity gives Σ⁻¹ = D − uuᵀ/(1 + c) and
/// ln|Σ| = Σ ln ψᵢ + ln(1 + c), so
/// F = ln|Σ| − ln|S| + Σ Sᵢᵢdᵢ − uᵀSu/(1 + c) − k. With G = Σ⁻¹(Σ − S)Σ⁻¹ it returns
/// F, Gλ (∂F/∂λ = 2Gλ) and diag G (∂F/∂ψᵢ = Gᵢᵢ).
fn discrepancy(
    s: &DMatrix<f64>,
    log_det_s: f64,
    lambda: &[f64],
    psi: &[f64],
) -> Option<(f64, Vec<f64>, Vec<f64>)> {
    let k = lambda.len();
    if psi.iter().any(|p| !(p.is_finite() && *p > 0.0)) || lambda.iter().any(|l| !l.is_finite()) {
        return None;
    }
    let d: Vec<f64> = psi.iter().map(|p| 1.0 / p).collect();
    let u = DVector::from_fn(k, |i, _| d[i] * lambda[i]);
    let c: f64 = (0..k).map(|i| lambda[i] * u[i]).sum();
    let su = s * &u;
    let usu = u.dot(&su);
    let r = 1.0 / (1.0 + c);
    let log_det: f64 = psi.iter().map(|p| p.ln()).sum::<f64>() + (1.0 + c).ln();
    let trace: f64 = (0..k).map(|i| s[(i, i)] * d[i]).sum::<f64>() - usu * r;
    let f = log_det - log_det_s + trace - k as f64;
    // Σ⁻¹λ = u/(1 + c) =: w; Σ⁻¹SΣ⁻¹λ = (d∘Sw) − u (uᵀSw)/(1 + c), Sw = r·Su.
    let g_lambda: Vec<f64> = (0..k)
        .map(|i| u[i] * r - (d[i] * su[i] * r - u[i] * usu * r * r))
        .collect();
    // [Σ⁻¹]ᵢᵢ = dᵢ − uᵢ²/(1 + c); [Σ⁻¹SΣ⁻¹]ᵢᵢ = dᵢ²Sᵢᵢ − 2dᵢuᵢ(Su)ᵢ/(1 + c) + uᵢ²uᵀSu/(1 + c)².
    let g_diag: Vec<f64> = (0..k)
        .map(|i| {
            let inv_ii = d[i] - u[i] * u[i] * r;
            let quad =
                d[i] * d[i] * s[(i, i)] - 2.0 * d[i] * u[i] * su[i] * r + u[i] * u[i] * usu * r * r;
            inv_ii - quad
        })
        .collect();
    Some((f, g_lambda, g_diag))
}

/// Starting values for the fit: loadings and log uniquenesses from the squared multiple
/// correlations of the scaled matrix `s` with diagonal `var`.
fn start_values(s: &DMatrix<f64>, var: &[f64], model: FactorModel) -> Vec<f64> {
    let k = s.nrows();
    let inv = s.clone().try_inverse();
    let smc: Vec<f64> = (0..k)
        .map(|i| match &inv {
            Some(m) => (1.0 - 1.0 / (var[i] * m[(i, i)])).clamp(0.05, 0.95),
            None => 0.5,
        })
        .collect();
    let t0 = |h: f64| ((1.0 - h) - UNIQUENESS_FLOOR).max(1e-3).ln();
    let mut x0: Vec<f64> = match model {
        FactorModel::Congeneric => (0..k).map(|i| (smc[i] * var[i]).sqrt()).collect(),
        FactorModel::TauEquivalent => {
            let off: f64 = (0..k)
                .flat_map(|i| (0..k).filter(move |&j| j != i).map(move |j| (i, j)))
                .map(|(i, j)| s[(i, j)])
                .sum::<f64>()
                / (k * (k - 1)) as f64;
            vec![off.max(1e-3).sqrt()]
        }
    };
    x0.extend((0..k).map(|i| t0(smc[i])));
    x0
}

/// Fit a one-factor model to a covariance matrix by maximum likelihood.
///
/// Parameters are the loadings and tᵢ with ψᵢ = Sᵢᵢ(ε + exp tᵢ), ε = 1e-6, minimized by
/// BFGS with the analytic gradient ∂F/∂λ = 2Gλ, ∂F/∂ψᵢ = Gᵢᵢ; each evaluation costs
/// O(k²) (see [`discrepancy`]: the structure's inverse and determinant in closed form).
/// The matrix is first divided by its mean variance (the discrepancy does not change), for
/// conditioning.
///
/// # References
/// Jöreskog, K. G. (1967). Some contributions to maximum likelihood factor analysis.
/// *Psychometrika*, 32(4), 443–482.
pub fn fit_one_factor(cov: &DMatrix<f64>, model: FactorModel) -> Result<FactorFit> {
    let k = cov.nrows();
    if k < 3 {
        return Err(Error::cannot(
            "a one-factor model needs at least 3 items (with 2 it is not identified), so omega \
             and the model tests are not available",
        ));
    }
    let scale = cov.trace() / k as f64;
    let s = cov / scale;
    let log_det_s = match s.clone().cholesky() {
        Some(c) => crate::numeric::cholesky_log_det(&c),
        None => {
            return Err(Error::cannot(
                "the items' covariance matrix is singular (an item is constant, or a linear \
                 combination of others), so the one-factor model cannot be fitted",
            ));
        }
    };
    let var: Vec<f64> = (0..k).map(|i| s[(i, i)]).collect();
    let x0 = start_values(&s, &var, model);
    let n_load = x0.len() - k;
    let unpack = |x: &[f64]| -> (Vec<f64>, Vec<f64>) {
        let lambda: Vec<f64> = if n_load == 1 {
            vec![x[0]; k]
        } else {
            x[..k].to_vec()
        };
        let psi: Vec<f64> = (0..k)
            .map(|i| var[i] * (UNIQUENESS_FLOOR + x[n_load + i].exp()))
            .collect();
        (lambda, psi)
    };
    let objective = |x: &[f64]| -> (f64, Vec<f64>) {
        let (lambda, psi) = unpack(x);
        match discrepancy(&s, log_det_s, &lambda, &psi) {
            None => (f64::INFINITY, vec![0.0; x.len()]),
            Some((f, g_lambda, g_diag)) => {
                let mut grad = if n_load == 1 {
                    vec![2.0 * g_lambda.iter().sum::<f64>()]
                } else {
                    g_lambda.iter().map(|g| 2.0 * g).collect()
                };
                grad.extend((0..k).map(|i| g_diag[i] * var[i] * x[n_load + i].exp()));
                (f, grad)
            }
        }
    };
    let m = bfgs(objective, &x0, GRADIENT_TOLERANCE, MAX_ITERATIONS);
    let (mut lambda, psi) = unpack(&m.x);
    if lambda.iter().sum::<f64>() < 0.0 {
        lambda.iter_mut().for_each(|l| *l = -*l);
    }
    let heywood = (0..k)
        .filter(|&i| psi[i] < HEYWOOD_SHARE * var[i])
        .collect();
    let root = scale.sqrt();
    Ok(FactorFit {
        model,
        loadings: lambda.iter().map(|l| l * root).collect(),
        uniquenesses: psi.iter().map(|p| p * scale).collect(),
        discrepancy: m.value,
        iterations: m.iterations,
        stop: m.stop,
        heywood,
    })
}

/// The one-factor model's fit: χ² = (n − 1)F with k(k + 1)/2 − 2k df, RMSEA and CFI
/// (against the independence model, χ² = −(n − 1) ln|R| with k(k − 1)/2 df).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModelFitIndices {
    /// χ².
    pub chi2: f64,
    /// Degrees of freedom.
    pub df: f64,
    /// p value (`None` with 0 df).
    pub p: Option<f64>,
    /// RMSEA (`None` with 0 df).
    pub rmsea: Option<f64>,
    /// CFI (`None` with 0 df).
    pub cfi: Option<f64>,
}

/// Fit indices of a congeneric one-factor fit.
///
/// # References
/// Steiger, J. H. (1990). Structural model evaluation and modification: an interval
/// estimation approach. *Multivariate Behavioral Research*, 25(2), 173–180 (RMSEA).
/// Bentler, P. M. (1990). Comparative fit indexes in structural models. *Psychological
/// Bulletin*, 107(2), 238–246 (CFI).
pub fn fit_indices(cov: &DMatrix<f64>, fit: &FactorFit, n: f64) -> ModelFitIndices {
    let k = cov.nrows() as f64;
    fit_indices_of(cov, fit.discrepancy, k * (k + 1.0) / 2.0 - 2.0 * k, n)
}

/// Fit indices of any covariance structure fitted by maximum likelihood, from its minimized
/// discrepancy and its degrees of freedom (see [`fit_indices`]).
pub fn fit_indices_of(cov: &DMatrix<f64>, discrepancy: f64, df: f64, n: f64) -> ModelFitIndices {
    let k = cov.nrows() as f64;
    let chi2 = (n - 1.0) * discrepancy.max(0.0);
    if df <= 0.0 {
        return ModelFitIndices {
            chi2,
            df,
            p: None,
            rmsea: None,
            cfi: None,
        };
    }
    let r = super::alpha::correlation(cov);
    let log_det_r = r
        .cholesky()
        .map(|c| crate::numeric::cholesky_log_det(&c))
        .unwrap_or(f64::NEG_INFINITY);
    let chi2_null = -(n - 1.0) * log_det_r;
    let df_null = k * (k - 1.0) / 2.0;
    let d_model = (chi2 - df).max(0.0);
    let d_null = (chi2_null - df_null).max(d_model);
    ModelFitIndices {
        chi2,
        df,
        p: Some(chi2_sf(chi2, df)),
        rmsea: Some((d_model / (df * (n - 1.0))).sqrt()),
        cfi: Some(if d_null > 0.0 {
            1.0 - d_model / d_null
        } else {
            1.0
        }),
    }
}

/// p value of Bartlett's test that the items are uncorrelated:
/// χ² = −(n − 1 − (2k + 5)/6)·ln|R| with k(k − 1)/2 df.
///
/// # References
/// Bartlett, M. S. (1950). Tests of significance in factor analysis. *British Journal of
/// Psychology, Statistical Section*, 3(2), 77–85.
pub fn independence_test(cov: &DMatrix<f64>, n: f64) -> f64 {
    let k = cov.nrows() as f64;
    let r = super::alpha::correlation(cov);
    match r.cholesky() {
        Some(c) => {
            let log_det: f64 = crate::numeric::cholesky_log_det(&c);
            let chi2 = -(n - 1.0 - (2.0 * k + 5.0) / 6.0) * log_det;
            chi2_sf(chi2, k * (k - 1.0) / 2.0)
        }
        None => 0.0,
    }
}

/// The likelihood-ratio test of tau-equivalence against the congeneric model:
/// χ² = (n − 1)(F_tau − F_cong) with k − 1 df.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TauEquivalenceTest {
    /// χ².
    pub chi2: f64,
    /// Degrees of freedom, k − 1.
    pub df: f64,
    /// p value.
    pub p: f64,
}

/// Test tau-equivalence.
pub fn tau_equivalence_test(
    cong: &FactorFit,
    tau: &FactorFit,
    n: f64,
    k: usize,
) -> TauEquivalenceTest {
    let chi2 = ((n - 1.0) * (tau.discrepancy - cong.discrepancy)).max(0.0);
    let df = (k - 1) as f64;
    TauEquivalenceTest {
        chi2,
        df,
        p: chi2_sf(chi2, df),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The closed-form discrepancy and gradient equal their definitions computed densely
    /// (Σ formed, Cholesky for ln|Σ| and Σ⁻¹, G = Σ⁻¹(Σ − S)Σ⁻¹).
    #[test]
    fn closed_form_discrepancy_matches_the_dense_definition() {
        let b = DMatrix::from_fn(5, 8, |i, j| ((i * 5 + j * 3) % 7) as f64 / 4.0 - 0.7);
        let s = &b * b.transpose() / 8.0 + DMatrix::identity(5, 5) * 0.3;
        let log_det_s = 2.0
            * s.clone()
                .cholesky()
                .unwrap()
                .l()
                .diagonal()
                .map(f64::ln)
                .sum();
        let lambda = [0.6, 0.4, 0.8, 0.5, 0.7];
        let psi = [0.5, 0.7, 0.3, 0.6, 0.4];
        let l = DVector::from_column_slice(&lambda);
        let sigma = &l * l.transpose() + DMatrix::from_diagonal(&DVector::from_column_slice(&psi));
        let chol = sigma.clone().cholesky().unwrap();
        let inv = chol.inverse();
        let f_dense =
            2.0 * chol.l().diagonal().map(f64::ln).sum() - log_det_s + (&s * &inv).trace() - 5.0;
        let g = &inv * (&sigma - &s) * &inv;
        let gl = &g * &l;
        let (f, g_lambda, g_diag) = discrepancy(&s, log_det_s, &lambda, &psi).unwrap();
        assert!((f - f_dense).abs() < 1e-12, "{f} vs {f_dense}");
        for i in 0..5 {
            assert!((g_lambda[i] - gl[i]).abs() < 1e-12);
            assert!((g_diag[i] - g[(i, i)]).abs() < 1e-12);
        }
    }

    fn implied(l: &[f64], sd: &[f64]) -> DMatrix<f64> {
        DMatrix::from_fn(l.len(), l.len(), |i, j| {
            if i == j {
                sd[i] * sd[i]
            } else {
                l[i] * l[j] * sd[i] * sd[j]
            }
        })
    }

    /// Exact structures (issue 4): loadings (0.8, 0.7, 0.6, 0.5), uniquenesses 1 − λ²:
    /// ω = 0.749446, α = 0.742055; with item SDs (2, 1.5, 1, 3): ω = 0.693377,
    /// α = 0.667486 (computed from the definitions).
    #[test]
    fn recovers_exact_structures() {
        let l = [0.8, 0.7, 0.6, 0.5];
        for (sd, omega, alpha) in [
            ([1.0, 1.0, 1.0, 1.0], 0.749446, 0.742055),
            ([2.0, 1.5, 1.0, 3.0], 0.693377, 0.667486),
        ] {
            let s = implied(&l, &sd);
            let f = fit_one_factor(&s, FactorModel::Congeneric).unwrap();
            assert!(f.stop.converged(), "{:?}", f.stop);
            assert!(f.discrepancy.abs() < 1e-10, "F = {}", f.discrepancy);
            assert!((f.omega() - omega).abs() < 5e-7, "omega {}", f.omega());
            let std = f.standardized_loadings(&s);
            for (a, b) in std.iter().zip(&l) {
                assert!((a - b).abs() < 1e-6, "{std:?}");
            }
            assert!((super::super::alpha::alpha(&s) - alpha).abs() < 5e-7);
        }
    }

    /// Equal loadings in the raw metric: the tau-equivalent model fits exactly and the
    /// test does not reject; unequal loadings are rejected with a large n.
    #[test]
    fn tau_equivalence_test_behaves() {
        let s = DMatrix::from_fn(4, 4, |i, j| if i == j { 1.0 } else { 0.36 });
        let c = fit_one_factor(&s, FactorModel::Congeneric).unwrap();
        let t = fit_one_factor(&s, FactorModel::TauEquivalent).unwrap();
        let test = tau_equivalence_test(&c, &t, 500.0, 4);
        assert!(test.chi2 < 1e-6 && test.p > 0.99, "{test:?}");
        let u = implied(&[0.8, 0.7, 0.6, 0.5], &[1.0; 4]);
        let c = fit_one_factor(&u, FactorModel::Congeneric).unwrap();
        let t = fit_one_factor(&u, FactorModel::TauEquivalent).unwrap();
        let test = tau_equivalence_test(&c, &t, 500.0, 4);
        assert!(test.p < 1e-3, "{test:?}");
    }
}
