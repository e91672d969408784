//! The greatest lower bound to reliability: minimum-trace factor analysis, solved by a
//! log-barrier (interior-point) method with Newton steps.
//!
//! The glb is 1 − tr Ψ*/1ᵀΣ1, where Ψ* is the diagonal matrix of largest trace with
//! Σ − Ψ positive semidefinite and Ψ ≥ 0: the largest error variances the covariances
//! allow, so the smallest reliability consistent with them. Like alpha it is a lower
//! bound; unlike alpha it needs no equal loadings, and α ≤ λ2 ≤ glb.
//!
//! # References
//! Ten Berge, J. M. F., & Sočan, G. (2004). The greatest lower bound to the reliability of
//! a test and the hypothesis of unidimensionality. *Psychometrika*, 69(4), 613–625.
//! Shapiro, A., & Ten Berge, J. M. F. (2000). The asymptotic bias of minimum trace factor
//! analysis, with applications to the greatest lower bound to reliability.
//! *Psychometrika*, 65(3), 413–425.
//! Jackson, P. H., & Agunwamba, C. C. (1977). Lower bounds for the reliability of the total
//! score on a test composed of non-homogeneous items: I. Algebraic lower bounds.
//! *Psychometrika*, 42(4), 567–578.
//! Boyd, S., & Vandenberghe, L. (2004). *Convex Optimization*, sections 11.2–11.3 (the
//! barrier method and its duality gap). Cambridge University Press.

use crate::error::{Error, Result};
use nalgebra::{DMatrix, DVector};

/// Respondents below which the sample glb's upward bias is noticeable (about 1,000;
/// Shapiro & Ten Berge 2000).
pub const LARGE_SAMPLE: u64 = 1_000;

/// The barrier's weight is divided by this after each centring.
const BARRIER_SHRINK: f64 = 8.0;
/// The search stops when the duality gap bound 2kμ falls below this share of 1ᵀΣ1.
const GAP_TOLERANCE: f64 = 1e-11;
/// Newton steps allowed in all.
const MAX_NEWTON_STEPS: usize = 1_000;
/// A centring ends when half the squared Newton decrement falls below this.
const DECREMENT_TOLERANCE: f64 = 1e-14;

/// The greatest lower bound of a covariance matrix.
#[derive(Debug, Clone, PartialEq)]
pub struct GreatestLowerBound {
    /// The glb.
    pub value: f64,
    /// The error variances Ψ* in the items' raw metric.
    pub error_variances: Vec<f64>,
    /// A bound on how far `value` can lie above the exact glb (the barrier's duality gap
    /// over 1ᵀΣ1); the value is never below it by more than rounding.
    pub gap: f64,
    /// Newton steps used.
    pub newton_steps: usize,
    /// Whether the gap reached its tolerance.
    pub converged: bool,
}

/// The barrier objective Σψ + μ(ln det(Σ − Ψ) + Σ ln ψ), or `None` outside the feasible set.
fn barrier(s: &DMatrix<f64>, psi: &[f64], mu: f64) -> Option<f64> {
    if psi.iter().any(|p| p.is_nan() || *p <= 0.0) {
        return None;
    }
    let a = s - DMatrix::from_diagonal(&DVector::from_column_slice(psi));
    let chol = a.cholesky()?;
    let log_det = crate::numeric::cholesky_log_det(&chol);
    Some(psi.iter().sum::<f64>() + mu * (log_det + psi.iter().map(|p| p.ln()).sum::<f64>()))
}

/// One Newton step's direction and its squared decrement at ψ for weight μ: the gradient
/// gᵢ = 1 − μWᵢᵢ + μ/ψᵢ and Hessian −μ(W∘W) − μ diag(1/ψ²), W = (Σ − Ψ)⁻¹.
fn newton_direction(s: &DMatrix<f64>, psi: &[f64], mu: f64) -> Option<(Vec<f64>, f64)> {
    let k = psi.len();
    let a = s - DMatrix::from_diagonal(&DVector::from_column_slice(psi));
    let w = a.cholesky()?.inverse();
    let g = DVector::from_fn(k, |i, _| 1.0 - mu * w[(i, i)] + mu / psi[i]);
    let neg_h = DMatrix::from_fn(k, k, |i, j| {
        mu * w[(i, j)] * w[(i, j)] + if i == j { mu / (psi[i] * psi[i]) } else { 0.0 }
    });
    let d = neg_h.cholesky()?.solve(&g);
    let decrement = g.dot(&d);
    Some((d.iter().copied().collect(), decrement))
}

/// The greatest lower bound of a positive definite covariance matrix.
///
/// Maximizes tr Ψ over Σ − Ψ ⪰ 0, Ψ ≥ 0 by the barrier method: for a decreasing weight μ,
/// Newton's method (with a backtracking line search that stays inside the feasible set)
/// maximizes Σψ + μ(ln det(Σ − Ψ) + Σ ln ψ); at each such centre the duality gap is at most
/// 2kμ, so the search stops when 2kμ is below 10⁻¹¹ of 1ᵀΣ1 (Boyd & Vandenberghe 2004,
/// 11.2). The matrix is divided by its mean variance first (the glb does not change).
pub fn greatest_lower_bound(cov: &DMatrix<f64>) -> Result<GreatestLowerBound> {
    let k = cov.nrows();
    if k < 2 {
        return Err(Error::cannot(
            "the greatest lower bound needs at least 2 items",
        ));
    }
    let scale = cov.trace() / k as f64;
    let s = cov / scale;
    let lowest = s.clone().symmetric_eigenvalues().min();
    if lowest.is_nan() || lowest <= 1e-12 {
        return Err(Error::cannot(
            "the items' covariance matrix is not positive definite, so the greatest lower \
             bound is not computed",
        ));
    }
    let total = s.sum();
    let mut psi = vec![0.5 * lowest; k];
    let mut mu = 1.0;
    let mut steps = 0;
    let mut converged = false;
    'outer: loop {
        // Centre for this μ.
        loop {
            if steps >= MAX_NEWTON_STEPS {
                break 'outer;
            }
            let Some((d, decrement)) = newton_direction(&s, &psi, mu) else {
                break 'outer;
            };
            steps += 1;
            if decrement / 2.0 < DECREMENT_TOLERANCE {
                break;
            }
            let here = barrier(&s, &psi, mu).unwrap_or(f64::NEG_INFINITY);
            let mut t = 1.0;
            let mut moved = false;
            for _ in 0..60 {
                let trial: Vec<f64> = psi.iter().zip(&d).map(|(p, v)| p + t * v).collect();
                if let Some(value) = barrier(&s, &trial, mu)
                    && value >= here + 0.25 * t * decrement
                {
                    psi = trial;
                    moved = true;
                    break;
                }
                t *= 0.5;
            }
            if !moved {
                // The centre was not reached: the gap bound does not hold.
                break 'outer;
            }
        }
        if 2.0 * k as f64 * mu < GAP_TOLERANCE * total {
            converged = true;
            break;
        }
        mu /= BARRIER_SHRINK;
    }
    let trace: f64 = psi.iter().sum();
    Ok(GreatestLowerBound {
        value: 1.0 - trace / total,
        error_variances: psi.iter().map(|p| p * scale).collect(),
        gap: 2.0 * k as f64 * mu / total,
        newton_steps: steps,
        converged,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::items::alpha::{alpha, lambda2};

    /// Compound symmetry: Σ = (σ² − c)I + c11ᵀ gives glb = alpha = kc/(σ² + (k − 1)c)
    /// (derived in docs/methods.md: by symmetry and concavity Ψ* = ψI, and the largest ψ
    /// with (σ² − c − ψ)I + c11ᵀ ⪰ 0 is σ² − c).
    #[test]
    fn compound_symmetry_gives_alpha() {
        for (k, var, c) in [(4usize, 1.0, 0.3), (7, 2.5, 0.4), (12, 1.0, 0.05)] {
            let s = DMatrix::from_fn(k, k, |i, j| if i == j { var } else { c });
            let g = greatest_lower_bound(&s).unwrap();
            assert!(g.converged, "{g:?}");
            let closed = k as f64 * c / (var + (k as f64 - 1.0) * c);
            assert!((g.value - closed).abs() < 1e-9, "{} vs {closed}", g.value);
            assert!((alpha(&s) - closed).abs() < 1e-12);
        }
    }

    /// α ≤ λ2 ≤ glb ≤ 1 and the optimum's own conditions: Σ − Ψ* positive semidefinite
    /// with a zero eigenvalue, Ψ* ≥ 0.
    #[test]
    fn the_bound_is_ordered_and_optimal() {
        let b = DMatrix::from_fn(6, 9, |i, j| ((i * 5 + j * 7) % 13) as f64 / 7.0 - 0.6);
        let s = &b * b.transpose() / 9.0
            + DMatrix::from_diagonal(&DVector::from_fn(6, |i, _| 0.2 + 0.1 * i as f64));
        let g = greatest_lower_bound(&s).unwrap();
        assert!(g.converged);
        assert!(
            alpha(&s) <= lambda2(&s) + 1e-12 && lambda2(&s) <= g.value + 1e-9 && g.value <= 1.0
        );
        let rest = &s - DMatrix::from_diagonal(&DVector::from_column_slice(&g.error_variances));
        let eig = rest.symmetric_eigenvalues();
        assert!(eig.min() > -1e-8 && eig.min() < 1e-6, "{eig}");
        assert!(g.error_variances.iter().all(|v| *v >= 0.0));
    }
}
