//! Coefficient alpha and its relatives from a covariance matrix: alpha, standardized
//! alpha, Guttman's λ2, item statistics, and the Feldt and Bonett intervals.

use crate::dist::{f_quantile, normal_quantile};
use crate::level::Level;
use nalgebra::DMatrix;

/// Coefficient alpha: k/(k − 1) · (1 − Σσᵢ² / σ²_X), σ²_X the sum of all covariances.
///
/// # References
/// Cronbach, L. J. (1951). Coefficient alpha and the internal structure of tests.
/// *Psychometrika*, 16(3), 297–334.
pub fn alpha(cov: &DMatrix<f64>) -> f64 {
    let k = cov.nrows() as f64;
    let total = cov.sum();
    k / (k - 1.0) * (1.0 - cov.trace() / total)
}

/// The correlation matrix of a covariance matrix.
pub fn correlation(cov: &DMatrix<f64>) -> DMatrix<f64> {
    let sd: Vec<f64> = (0..cov.nrows()).map(|i| cov[(i, i)].sqrt()).collect();
    DMatrix::from_fn(cov.nrows(), cov.ncols(), |i, j| {
        cov[(i, j)] / (sd[i] * sd[j])
    })
}

/// Standardized alpha: alpha of the correlation matrix, k r̄ / (1 + (k − 1) r̄).
pub fn alpha_standardized(cov: &DMatrix<f64>) -> f64 {
    alpha(&correlation(cov))
}

/// Guttman's λ2: λ1 + √(k/(k − 1) · Σ_{i≠j} σᵢⱼ²) / σ²_X, with λ1 = 1 − Σσᵢ²/σ²_X.
///
/// # References
/// Guttman, L. (1945). A basis for analyzing test-retest reliability. *Psychometrika*,
/// 10(4), 255–282.
pub fn lambda2(cov: &DMatrix<f64>) -> f64 {
    let k = cov.nrows() as f64;
    let total = cov.sum();
    let off2: f64 = cov
        .iter()
        .enumerate()
        .filter(|(idx, _)| idx % cov.nrows() != idx / cov.nrows())
        .map(|(_, c)| c * c)
        .sum();
    1.0 - cov.trace() / total + (k / (k - 1.0) * off2).sqrt() / total
}

/// Statistics of one item.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ItemStatistic {
    /// Mean response.
    pub mean: f64,
    /// Standard deviation.
    pub sd: f64,
    /// Correlation of the item with the sum of the other items.
    pub corrected_item_total: f64,
    /// Alpha of the other items (`None` with two items).
    pub alpha_if_deleted: Option<f64>,
}

/// Item statistics from means and covariances, in O(k²): with rᵢ the sum of row i and T
/// the sum of all covariances, the other items' sum has variance T − 2rᵢ + σᵢ² and
/// covariance rᵢ − σᵢ² with item i, and their alpha is
/// (k − 1)/(k − 2) · (1 − (tr − σᵢ²)/(T − 2rᵢ + σᵢ²)).
pub fn item_statistics(mean: &[f64], cov: &DMatrix<f64>) -> Vec<ItemStatistic> {
    let k = cov.nrows();
    let total = cov.sum();
    let trace = cov.trace();
    (0..k)
        .map(|i| {
            let var_i = cov[(i, i)];
            let row: f64 = cov.row(i).sum();
            let cov_rest = row - var_i;
            let var_rest = total - 2.0 * row + var_i;
            let m = (k - 1) as f64;
            ItemStatistic {
                mean: mean[i],
                sd: var_i.sqrt(),
                corrected_item_total: cov_rest / (var_i * var_rest).sqrt(),
                alpha_if_deleted: (k > 2)
                    .then(|| m / (m - 1.0) * (1.0 - (trace - var_i) / var_rest)),
            }
        })
        .collect()
}

/// Feldt's interval: (1 − α)/(1 − α̂) ~ F(n − 1, (n − 1)(k − 1)), so the limits are
/// 1 − (1 − α̂)F(1 − a/2) and 1 − (1 − α̂)F(a/2).
///
/// # References
/// Feldt, L. S., Woodruff, D. J., & Salih, F. A. (1987). Statistical inference for
/// coefficient alpha. *Applied Psychological Measurement*, 11(1), 93–103.
pub fn feldt_interval(alpha: f64, n: f64, k: f64, level: Level) -> (f64, f64) {
    let (d1, d2) = (n - 1.0, (n - 1.0) * (k - 1.0));
    (
        1.0 - (1.0 - alpha) * f_quantile(level.upper(), d1, d2),
        1.0 - (1.0 - alpha) * f_quantile(level.tail(), d1, d2),
    )
}

/// Bonett's interval: 1 − exp[ln(1 − α̂) − ln(n/(n − 1)) ± z·√(2k/((k − 1)(n − 2)))].
///
/// # References
/// Bonett, D. G. (2002). Sample size requirements for testing and estimating coefficient
/// alpha. *Journal of Educational and Behavioral Statistics*, 27(4), 335–340.
pub fn bonett_interval(alpha: f64, n: f64, k: f64, level: Level) -> (f64, f64) {
    let z = normal_quantile(level.upper());
    let centre = (1.0 - alpha).ln() - (n / (n - 1.0)).ln();
    let half = z * (2.0 * k / ((k - 1.0) * (n - 2.0))).sqrt();
    // 1 − exp(·) decreases: the upper end of ln(1 − α) gives the lower limit of α.
    (1.0 - (centre + half).exp(), 1.0 - (centre - half).exp())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The closed forms of the item statistics equal their definitions (the other items'
    /// matrix taken out and summed, its alpha computed by `alpha`).
    #[test]
    fn item_statistics_match_their_definitions() {
        let b = DMatrix::from_fn(6, 9, |i, j| ((i * 7 + j * 3) % 11) as f64 / 5.0 - 1.0);
        let cov = &b * b.transpose() + DMatrix::identity(6, 6) * 0.5;
        let mean = vec![3.0; 6];
        for (i, st) in item_statistics(&mean, &cov).iter().enumerate() {
            let keep: Vec<usize> = (0..6).filter(|&j| j != i).collect();
            let rest = cov.select_rows(&keep).select_columns(&keep);
            let cov_rest: f64 = keep.iter().map(|&j| cov[(i, j)]).sum();
            let r = cov_rest / (cov[(i, i)] * rest.sum()).sqrt();
            assert!((st.corrected_item_total - r).abs() < 1e-12);
            assert!((st.alpha_if_deleted.unwrap() - alpha(&rest)).abs() < 1e-12);
        }
    }

    /// The covariance implied by loadings (0.8, 0.7, 0.6, 0.5) with uniquenesses 1 − λ²
    /// gives α = 0.742055 (computed from the definitions; issue 4).
    #[test]
    fn alpha_of_an_exact_structure() {
        let l = [0.8, 0.7, 0.6, 0.5];
        let s = DMatrix::from_fn(4, 4, |i, j| if i == j { 1.0 } else { l[i] * l[j] });
        assert!((alpha(&s) - 0.742055).abs() < 5e-7);
        assert!((alpha_standardized(&s) - 0.742055).abs() < 5e-7);
    }

    /// A published worked example: n = 15, k = 10, α̂ = 0.5917 gives the 95% Feldt
    /// interval (0.195, 0.840) (quoted in issue 4; confirmed with scipy's F quantiles).
    #[test]
    fn bonett_interval_is_ordered_and_contains_the_estimate() {
        let (lo, hi) = bonett_interval(0.85, 275.0, 10.0, Level::NINETY_FIVE);
        assert!(lo < 0.85 && 0.85 < hi, "{lo} {hi}");
    }

    #[test]
    fn feldt_worked_example() {
        let (lo, hi) = feldt_interval(0.5917, 15.0, 10.0, Level::NINETY_FIVE);
        assert!(
            (lo - 0.195).abs() < 5e-4 && (hi - 0.840).abs() < 5e-4,
            "{lo} {hi}"
        );
    }
}
