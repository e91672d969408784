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
        let mut out = Vec::new();
        if s.coef.abs() > EFFECT_LIMIT {
            out.push(Unmet::new(
                InputField::Coef,
                format!(
                    "{} is outside the range relyard computes with (±{EFFECT_LIMIT:e})",
                    fmt_value(s.coef)
                ),
            ));
        }
        if let Some(v) = s.var
            && v > 0.0
            && !(VAR_LIMITS.0..=VAR_LIMITS.1).contains(&v)
        {
            out.push(Unmet::new(
                InputField::Var,
                format!(
                    "a sampling variance of {} is outside the range relyard computes with \
                     ({:e} to {:e}); rescale the effects",
                    fmt_value(v),
                    VAR_LIMITS.0,
                    VAR_LIMITS.1
                ),
            ));
        }
        out.extend(self.check_var(s));
        out
    }
}

/// Largest effect accepted.
const EFFECT_LIMIT: f64 = 1e100;
/// Smallest and largest sampling variance accepted (their squares, and the weights',
/// must stay within double precision).
const VAR_LIMITS: (f64, f64) = (1e-30, 1e30);

impl AlreadyTransformed {
    fn check_var(&self, s: &StudyInput) -> Vec<Unmet> {
        match s.var {
            None => vec![Unmet::new(
                InputField::Var,
                "the sampling variance is missing (coefficients taken as already transformed need one \
                 for every study)",
            )],
            Some(v) if v <= 0.0 => vec![Unmet::new(
                InputField::Var,
                format!("a sampling variance must be above 0 (got {})", fmt_value(v)),
            )],
            _ => Vec::new(),
        }
    }
}
