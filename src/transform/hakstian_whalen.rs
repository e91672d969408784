//! Hakstian and Whalen's cube-root transform of coefficient alpha.

use super::{
    Coefficient, CoefficientTransform, StudyInput, TransformKind, Transformed, Unmet,
    check_alpha_type,
};

/// Hakstian–Whalen transform, T = (1 − α̂)^(1/3), with sampling variance
/// 18k(n − 1)(1 − α̂)^(2/3) / ((k − 1)(9n − 11)²).
///
/// The back-transformation 1 − T³ decreases in T; a value of T below zero would mean
/// a coefficient above 1, so interval ends there are capped at 1 (and flagged).
///
/// # References
/// Hakstian, A. R., & Whalen, T. E. (1976). A k-sample significance test for independent
/// alpha coefficients. *Psychometrika*, 41(2), 219–231.
#[derive(Debug, Clone, Copy, Default)]
pub struct HakstianWhalen;

impl CoefficientTransform for HakstianWhalen {
    fn kind(&self) -> TransformKind {
        TransformKind::HakstianWhalen
    }
    fn formula(&self) -> &'static str {
        "(1 − coefficient)^(1/3)"
    }
    fn forward(&self, c: Coefficient) -> Transformed {
        Transformed((1.0 - c.0).cbrt())
    }
    fn back(&self, t: Transformed) -> Option<Coefficient> {
        Some(Coefficient(1.0 - t.0 * t.0 * t.0))
    }
    fn increasing(&self) -> bool {
        false
    }
    fn variance(&self, s: &StudyInput) -> f64 {
        let k = s.items.unwrap_or(f64::NAN);
        let n = s.n.unwrap_or(f64::NAN);
        let denom = 9.0 * n - 11.0;
        18.0 * k * (n - 1.0) * (1.0 - s.coef).powf(2.0 / 3.0) / ((k - 1.0) * denom * denom)
    }
    fn check(&self, s: &StudyInput) -> Vec<Unmet> {
        check_alpha_type(s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip() {
        for &a in &[-0.5, 0.0, 0.3, 0.7, 0.95, 0.999] {
            let t = HakstianWhalen.forward(Coefficient(a));
            assert!((HakstianWhalen.back(t).unwrap().0 - a).abs() < 1e-13, "{a}");
        }
    }
}
