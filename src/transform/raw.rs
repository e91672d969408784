//! The untransformed coefficient.

use super::{
    Coefficient, CoefficientTransform, StudyInput, TransformKind, Transformed, Unmet,
    check_alpha_type,
};

/// Untransformed α̂ with its large-sample variance 2k(1 − α̂)² / ((k − 1)(n − 2)).
///
/// The variance depends on α̂ itself, which couples the weights to the estimates;
/// the transformed scales are usually preferred.
///
/// # References
/// Bonett, D. G. (2002). Sample size requirements for testing and estimating
/// coefficient alpha. *Journal of Educational and Behavioral Statistics*, 27(4), 335–340
/// (the variance of ln(1 − α̂) multiplied by (1 − α̂)², the delta method).
#[derive(Debug, Clone, Copy, Default)]
pub struct RawCoefficient;

impl CoefficientTransform for RawCoefficient {
    fn kind(&self) -> TransformKind {
        TransformKind::Raw
    }
    fn formula(&self) -> &'static str {
        "coefficient (untransformed)"
    }
    fn forward(&self, c: Coefficient) -> Transformed {
        Transformed(c.0)
    }
    fn back(&self, t: Transformed) -> Option<Coefficient> {
        Some(Coefficient(t.0))
    }
    fn increasing(&self) -> bool {
        true
    }
    fn variance(&self, s: &StudyInput) -> f64 {
        let k = s.items.unwrap_or(f64::NAN);
        let n = s.n.unwrap_or(f64::NAN);
        let c = 1.0 - s.coef;
        2.0 * k * c * c / ((k - 1.0) * (n - 2.0))
    }
    fn check(&self, s: &StudyInput) -> Vec<Unmet> {
        check_alpha_type(s)
    }
}
