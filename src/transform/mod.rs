//! Coefficient transforms: each maps a reliability coefficient to an analysis scale
//! on which it is pooled, gives its sampling variance there, and maps results back.
//!
//! One type per transform ([`Bonett`], [`HakstianWhalen`], [`FisherZ`], [`RawCoefficient`],
//! [`AlreadyTransformed`]); [`TransformKind`] selects one by name.

mod bonett;
mod fisher_z;
mod hakstian_whalen;
mod none;
mod raw;

pub use bonett::Bonett;
pub use fisher_z::FisherZ;
pub use hakstian_whalen::HakstianWhalen;
pub use none::AlreadyTransformed;
pub use raw::RawCoefficient;

use serde::Serialize;
use std::fmt;
use std::str::FromStr;

/// A value on a transform's analysis scale (e.g. ln(1 − α) for Bonett).
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd)]
pub struct Transformed(pub f64);

/// A value on a coefficient's own scale (alpha, omega, a retest correlation, …).
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd)]
pub struct Coefficient(pub f64);

/// The largest value a reliability coefficient can take.
pub const COEFFICIENT_MAX: f64 = 1.0;

/// Which field of a study's record a requirement concerns.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InputField {
    /// The reported coefficient (or effect, for already-transformed input).
    Coef,
    /// The sample size.
    N,
    /// The number of items.
    Items,
    /// A given sampling variance.
    Var,
}

/// What a transform needs to know about one study.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StudyInput {
    /// The reported coefficient, or the effect itself for already-transformed input.
    pub coef: f64,
    /// Sample size, when known.
    pub n: Option<f64>,
    /// Number of items, when known.
    pub items: Option<f64>,
    /// A sampling variance given by the user (already-transformed input only).
    pub var: Option<f64>,
}

/// A study that does not meet a transform's requirements: which field and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Unmet {
    /// The field at fault.
    pub field: InputField,
    /// Why, in lower case, with what to do where possible.
    pub reason: String,
}

impl Unmet {
    fn new(field: InputField, reason: impl Into<String>) -> Self {
        Unmet {
            field,
            reason: reason.into(),
        }
    }
}

/// The two families of coefficients, which have different default transforms.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CoefficientFamily {
    /// Internal-consistency coefficients (alpha, KR-20, omega, split-half, …).
    InternalConsistency,
    /// Correlation-type coefficients (test–retest, inter-rater r).
    Correlation,
}

impl CoefficientFamily {
    /// The transform used for this family unless the user chooses another.
    pub fn default_transform(self) -> TransformKind {
        match self {
            CoefficientFamily::InternalConsistency => TransformKind::Bonett,
            CoefficientFamily::Correlation => TransformKind::FisherZ,
        }
    }

    /// Plain-English name.
    pub fn describe(self) -> &'static str {
        match self {
            CoefficientFamily::InternalConsistency => "internal-consistency coefficients",
            CoefficientFamily::Correlation => "correlation-type coefficients",
        }
    }
}

/// A coefficient transform with its sampling variance and back-transformation.
pub trait CoefficientTransform: Sync {
    /// Which transform this is.
    fn kind(&self) -> TransformKind;
    /// The analysis scale as a formula, e.g. `ln(1 − coefficient)`.
    fn formula(&self) -> &'static str;
    /// Map a coefficient to the analysis scale.
    fn forward(&self, c: Coefficient) -> Transformed;
    /// Map a value on the analysis scale back to the coefficient scale.
    ///
    /// `None` when the transform has no coefficient scale (already-transformed input).
    fn back(&self, t: Transformed) -> Option<Coefficient>;
    /// True when the back-transformation increases with the transformed value.
    fn increasing(&self) -> bool;
    /// The sampling variance on the analysis scale; call only after [`check`](Self::check)
    /// found nothing wrong.
    fn variance(&self, s: &StudyInput) -> f64;
    /// Everything about a study that this transform cannot work with.
    fn check(&self, s: &StudyInput) -> Vec<Unmet>;
    /// The analysis-scale value for a study (the coefficient itself for
    /// already-transformed input).
    fn effect(&self, s: &StudyInput) -> Transformed {
        self.forward(Coefficient(s.coef))
    }
}

/// An interval mapped back to the coefficient scale.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BackInterval {
    /// Lower end on the coefficient scale.
    pub lower: f64,
    /// Upper end on the coefficient scale.
    pub upper: f64,
    /// True when an end lay beyond the coefficient's maximum of 1 and was set to 1.
    pub capped: bool,
}

/// Map an interval on the analysis scale back to the coefficient scale, ordered
/// lower ≤ upper, with ends beyond 1 set to 1 (and flagged).
pub fn back_interval(
    tr: &dyn CoefficientTransform,
    lower: Transformed,
    upper: Transformed,
) -> Option<BackInterval> {
    let a = tr.back(lower)?.0;
    let b = tr.back(upper)?.0;
    let (mut lo, mut hi) = if a <= b { (a, b) } else { (b, a) };
    let mut capped = false;
    if hi > COEFFICIENT_MAX {
        hi = COEFFICIENT_MAX;
        capped = true;
    }
    if lo > COEFFICIENT_MAX {
        lo = COEFFICIENT_MAX;
        capped = true;
    }
    Some(BackInterval {
        lower: lo,
        upper: hi,
        capped,
    })
}

/// The transforms a user can choose by name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum TransformKind {
    /// Bonett (2002): ln(1 − α).
    Bonett,
    /// Hakstian & Whalen (1976): (1 − α)^(1/3).
    HakstianWhalen,
    /// Fisher's z: atanh(r).
    FisherZ,
    /// The untransformed coefficient.
    Raw,
    /// The sheet already holds the effect and its sampling variance.
    None,
}

impl TransformKind {
    /// Every transform, in the order the help lists them.
    pub const ALL: [TransformKind; 5] = [
        TransformKind::Bonett,
        TransformKind::HakstianWhalen,
        TransformKind::FisherZ,
        TransformKind::Raw,
        TransformKind::None,
    ];

    /// The name used on the command line and in JSON.
    pub fn name(self) -> &'static str {
        match self {
            TransformKind::Bonett => "bonett",
            TransformKind::HakstianWhalen => "hakstian-whalen",
            TransformKind::FisherZ => "fisher-z",
            TransformKind::Raw => "raw",
            TransformKind::None => "none",
        }
    }

    /// A readable label for reports.
    pub fn label(self) -> &'static str {
        match self {
            TransformKind::Bonett => "Bonett",
            TransformKind::HakstianWhalen => "Hakstian–Whalen",
            TransformKind::FisherZ => "Fisher z",
            TransformKind::Raw => "untransformed",
            TransformKind::None => "already transformed (effect and variance given)",
        }
    }

    /// The implementation.
    pub fn get(self) -> &'static dyn CoefficientTransform {
        match self {
            TransformKind::Bonett => &Bonett,
            TransformKind::HakstianWhalen => &HakstianWhalen,
            TransformKind::FisherZ => &FisherZ,
            TransformKind::Raw => &RawCoefficient,
            TransformKind::None => &AlreadyTransformed,
        }
    }

    /// The family the transform was designed for (`None` for already-transformed input).
    pub fn designed_for(self) -> Option<CoefficientFamily> {
        match self {
            TransformKind::Bonett | TransformKind::HakstianWhalen | TransformKind::Raw => {
                Some(CoefficientFamily::InternalConsistency)
            }
            TransformKind::FisherZ => Some(CoefficientFamily::Correlation),
            TransformKind::None => None,
        }
    }
}

impl fmt::Display for TransformKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for TransformKind {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let norm = s.trim().to_ascii_lowercase().replace('_', "-");
        TransformKind::ALL
            .into_iter()
            .find(|k| k.name() == norm)
            .ok_or_else(|| {
                let names: Vec<&str> = TransformKind::ALL.iter().map(|k| k.name()).collect();
                format!(
                    "unknown transform \"{s}\" (choose one of: {})",
                    names.join(", ")
                )
            })
    }
}

// ---- checks shared by the transforms -------------------------------------------

/// Requirements shared by the internal-consistency transforms: coef < 1, n ≥ 3, k ≥ 2.
fn check_alpha_type(s: &StudyInput) -> Vec<Unmet> {
    let mut out = Vec::new();
    check_below_one(s.coef, &mut out);
    match s.n {
        None => out.push(Unmet::new(InputField::N, "the sample size is missing")),
        Some(n) if n < 3.0 => out.push(Unmet::new(
            InputField::N,
            format!("a sample size of {n} is too small (this transform needs n ≥ 3)"),
        )),
        _ => {}
    }
    match s.items {
        None => out.push(Unmet::new(
            InputField::Items,
            "the number of items is missing (the sampling variance of this transform needs it)",
        )),
        Some(k) if k < 2.0 => out.push(Unmet::new(
            InputField::Items,
            format!(
                "{} too few (an internal-consistency coefficient needs at least 2)",
                if k == 1.0 {
                    "1 item is".to_string()
                } else {
                    format!("{k} items are")
                }
            ),
        )),
        _ => {}
    }
    out
}

fn check_below_one(coef: f64, out: &mut Vec<Unmet>) {
    if coef <= -1.0 {
        out.push(Unmet::new(
            InputField::Coef,
            format!(
                "{} is outside the range of a reported reliability coefficient (above −1 and \
                 below 1); check the coding",
                fmt_value(coef)
            ),
        ));
    }
    if coef >= 1.0 {
        let hint = if (10.0..=100.0).contains(&coef) {
            " (if the sheet holds percentages, divide them by 100)"
        } else {
            ""
        };
        out.push(Unmet::new(
            InputField::Coef,
            format!(
                "{} is not a reliability coefficient (it must be below 1){hint}",
                fmt_value(coef)
            ),
        ));
    }
}

/// Format a number as the user would have typed it.
pub(crate) fn fmt_value(x: f64) -> String {
    if x.abs() >= 1e15 || (x != 0.0 && x.abs() < 1e-6) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for k in TransformKind::ALL {
            assert_eq!(k.name().parse::<TransformKind>().unwrap(), k);
        }
        assert!("cube".parse::<TransformKind>().is_err());
    }

    #[test]
    fn back_interval_orders_and_caps() {
        // Bonett decreases: the lower transformed end gives the upper coefficient.
        let b = back_interval(&Bonett, Transformed(-2.0), Transformed(-1.0)).unwrap();
        assert!(b.lower < b.upper);
        assert!((b.upper - (1.0 - (-2.0f64).exp())).abs() < 1e-15);
        // Hakstian–Whalen below zero would mean a coefficient above 1.
        let h = back_interval(&HakstianWhalen, Transformed(-0.1), Transformed(0.5)).unwrap();
        assert!(h.capped);
        assert_eq!(h.upper, 1.0);
        assert!(back_interval(&AlreadyTransformed, Transformed(0.0), Transformed(1.0)).is_none());
    }
}
