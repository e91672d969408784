//! Bonett's log-complement transform of coefficient alpha.

use super::{
    Coefficient, CoefficientTransform, StudyInput, TransformKind, Transformed, Unmet,
    check_alpha_type,
};

/// Bonett's transform, T = ln(1 − α̂), with sampling variance 2k / ((k − 1)(n − 2)).
///
/// The variance does not depend on α, which makes the scale well suited to pooling.
/// The back-transformation 1 − exp(T) decreases in T.
///
/// # References
/// Bonett, D. G. (2002). Sample size requirements for testing and estimating
/// coefficient alpha. *Journal of Educational and Behavioral Statistics*, 27(4), 335–340.
#[derive(Debug, Clone, Copy, Default)]
pub struct Bonett;

impl CoefficientTransform for Bonett {
    fn kind(&self) -> TransformKind {
        TransformKind::Bonett
    }
    fn formula(&self) -> &'static str {
        "ln(1 − coefficient)"
    }
    fn forward(&self, c: Coefficient) -> Transformed {
        Transformed((-c.0).ln_1p())
    }
    fn back(&self, t: Transformed) -> Option<Coefficient> {
        Some(Coefficient(-t.0.exp_m1()))
    }
    fn increasing(&self) -> bool {
        false
    }
    fn variance(&self, s: &StudyInput) -> f64 {
        let k = s.items.unwrap_or(f64::NAN);
        let n = s.n.unwrap_or(f64::NAN);
        2.0 * k / ((k - 1.0) * (n - 2.0))
    }
    fn check(&self, s: &StudyInput) -> Vec<Unmet> {
        check_alpha_type(s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_and_direction() {
        for &a in &[-0.5, 0.0, 0.3, 0.7, 0.95, 0.999] {
            let t = Bonett.forward(Coefficient(a));
            assert!((Bonett.back(t).unwrap().0 - a).abs() < 1e-14, "{a}");
        }
        assert!(Bonett.forward(Coefficient(0.9)).0 < Bonett.forward(Coefficient(0.8)).0);
    }
}
