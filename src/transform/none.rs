//! Input that already holds the effect and its sampling variance.

use super::{
    Coefficient, CoefficientTransform, InputField, StudyInput, TransformKind, Transformed, Unmet,
    fmt_value,
};

/// No transformation: the `coef` column holds the effect on its analysis scale and the
/// `var` column its sampling variance. Lets the pooling engine pool any effect size;
/// there is no coefficient scale to map back to.
#[derive(Debug, Clone, Copy, Default)]
pub struct AlreadyTransformed;

impl CoefficientTransform for AlreadyTransformed {
    fn kind(&self) -> TransformKind {
        TransformKind::None
    }
    fn formula(&self) -> &'static str {
        "as given"
    }
    fn forward(&self, c: Coefficient) -> Transformed {
        Transformed(c.0)
    }
    fn back(&self, _t: Transformed) -> Option<Coefficient> {
        None
    }
    fn increasing(&self) -> bool {
        true
    }
    fn variance(&self, s: &StudyInput) -> f64 {
        s.var.unwrap_or(f64::NAN)
    }
    fn check(&self, s: &StudyInput) -> Vec<Unmet> {
        match s.var {
            None => vec![Unmet::new(
                InputField::Var,
                "the sampling variance is missing (--transform none needs one for every study)",
            )],
            Some(v) if v <= 0.0 => vec![Unmet::new(
                InputField::Var,
                format!("a sampling variance must be above 0 (got {})", fmt_value(v)),
            )],
            _ => Vec::new(),
        }
    }
}
