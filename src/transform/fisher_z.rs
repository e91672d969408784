//! Fisher's z transform for correlation-type reliability coefficients.

use super::{
    Coefficient, CoefficientTransform, InputField, StudyInput, TransformKind, Transformed, Unmet,
    check_below_one,
};

/// Fisher's z, z = atanh(r), with sampling variance 1 / (n − 3); for test–retest and
/// inter-rater correlations.
///
/// # References
/// Fisher, R. A. (1921). On the "probable error" of a coefficient of correlation deduced
/// from a small sample. *Metron*, 1, 3–32.
#[derive(Debug, Clone, Copy, Default)]
pub struct FisherZ;

impl CoefficientTransform for FisherZ {
    fn kind(&self) -> TransformKind {
        TransformKind::FisherZ
    }
    fn formula(&self) -> &'static str {
        "atanh(coefficient)"
    }
    fn forward(&self, c: Coefficient) -> Transformed {
        Transformed(c.0.atanh())
    }
    fn back(&self, t: Transformed) -> Option<Coefficient> {
        Some(Coefficient(t.0.tanh()))
    }
    fn increasing(&self) -> bool {
        true
    }
    fn variance(&self, s: &StudyInput) -> f64 {
        1.0 / (s.n.unwrap_or(f64::NAN) - 3.0)
    }
    fn check(&self, s: &StudyInput) -> Vec<Unmet> {
        let mut out = Vec::new();
        check_below_one(s.coef, &mut out);
        match s.n {
            None => out.push(Unmet::new(InputField::N, "the sample size is missing")),
            Some(n) if n < 4.0 => out.push(Unmet::new(
                InputField::N,
                format!("a sample size of {n} is too small (Fisher's z needs n ≥ 4)"),
            )),
            _ => {}
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip() {
        for &r in &[-0.9, -0.1, 0.0, 0.5, 0.99] {
            let t = FisherZ.forward(Coefficient(r));
            assert!((FisherZ.back(t).unwrap().0 - r).abs() < 1e-14, "{r}");
        }
    }
}
