//! The choice of coefficient, side by side: one corrected correlation for each reliability
//! coefficient the item data give (alpha, omega, omega total and hierarchical, the greatest
//! lower bound) and for a value given instead, with which are lower bounds.
//!
//! A lower bound understates reliability, so the correction it gives is too large; omega
//! hierarchical is the total score's reliability for the general trait alone, so it too
//! gives a larger correction, on purpose.

use super::correlation::classical_interval;
use crate::level::Level;

/// Which reliability coefficient a row uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CoefficientChoice {
    /// Coefficient alpha (a lower bound unless the items are tau-equivalent).
    Alpha,
    /// Omega of the one-factor model.
    Omega,
    /// Omega total of the bifactor model.
    OmegaTotal,
    /// Omega hierarchical of the bifactor model (the general factor alone).
    OmegaHierarchical,
    /// The greatest lower bound.
    Glb,
    /// The value given for the score (a retest ICC, a benchmark …).
    Given,
}

impl CoefficientChoice {
    /// Every computed coefficient, in the table's order (the given value comes last).
    pub const COMPUTED: [CoefficientChoice; 5] = [
        CoefficientChoice::Alpha,
        CoefficientChoice::Omega,
        CoefficientChoice::OmegaTotal,
        CoefficientChoice::OmegaHierarchical,
        CoefficientChoice::Glb,
    ];

    /// The name in the output.
    pub fn name(self) -> &'static str {
        match self {
            CoefficientChoice::Alpha => "alpha",
            CoefficientChoice::Omega => "omega",
            CoefficientChoice::OmegaTotal => "omega_total",
            CoefficientChoice::OmegaHierarchical => "omega_hierarchical",
            CoefficientChoice::Glb => "glb",
            CoefficientChoice::Given => "given",
        }
    }

    /// Words for the readable table.
    pub fn words(self) -> &'static str {
        match self {
            CoefficientChoice::Alpha => "alpha",
            CoefficientChoice::Omega => "omega (one factor)",
            CoefficientChoice::OmegaTotal => "omega total (bifactor)",
            CoefficientChoice::OmegaHierarchical => "omega hierarchical",
            CoefficientChoice::Glb => "greatest lower bound",
            CoefficientChoice::Given => "the value given",
        }
    }

    /// Whether the coefficient is a lower bound to reliability (the given value's kind
    /// decides for `Given`).
    pub fn is_lower_bound(self) -> bool {
        matches!(self, CoefficientChoice::Alpha | CoefficientChoice::Glb)
    }
}

/// What is known of one score's reliability.
#[derive(Debug, Clone, PartialEq)]
pub struct ScoreReliability {
    /// The coefficients its item data give, when item data were given.
    pub computed: Option<Vec<(CoefficientChoice, f64)>>,
    /// The value given for it, with whether that value is a lower bound.
    pub given: Option<(f64, bool)>,
    /// The value the main correction uses.
    pub main: f64,
}

impl ScoreReliability {
    /// The value for a row of `choice`: the computed coefficient when the score has item
    /// data (`None` when it lacks that coefficient), else the value given.
    fn value(&self, choice: CoefficientChoice) -> Option<f64> {
        match (choice, &self.computed) {
            (CoefficientChoice::Given, _) => Some(self.given.map_or(self.main, |g| g.0)),
            (_, Some(c)) => c.iter().find(|(k, _)| *k == choice).map(|(_, v)| *v),
            (_, None) => Some(self.main),
        }
    }
}

/// When the greatest lower bound's row has larger reliabilities than the omega row — the
/// sample glb's upward bias at work — the sentence that says so. `rows` are each row's
/// coefficient and reliabilities of x and y.
pub fn glb_above_omega(
    rows: impl IntoIterator<Item = (CoefficientChoice, f64, f64)>,
) -> Option<&'static str> {
    let rows: Vec<_> = rows.into_iter().collect();
    let find = |c: CoefficientChoice| rows.iter().find(|r| r.0 == c).map(|r| r.1 * r.2);
    let (glb, omega) = (
        find(CoefficientChoice::Glb)?,
        find(CoefficientChoice::Omega)?,
    );
    (glb > omega).then_some(
        "Here the greatest lower bound lies above one-factor omega. A lower bound cannot \
         exceed the reliability, so either the sample glb is biased upward (noticeably below \
         about 1,000 respondents) or one-factor omega understates the reliability because one \
         factor does not describe the items (see relyard items); either way the glb corrects \
         less than omega here, not more.",
    )
}

/// One row of the table.
#[derive(Debug, Clone, PartialEq)]
pub struct ChoiceRow {
    /// The coefficient.
    pub coefficient: CoefficientChoice,
    /// Reliability of x used.
    pub reliability_x: f64,
    /// Reliability of y used.
    pub reliability_y: f64,
    /// r/√(r_xx r_yy), whatever its size.
    pub corrected: f64,
    /// The classical interval with the reliabilities taken as known (cut at ±1; `None`
    /// when it lies entirely beyond).
    pub ci: Option<(f64, f64)>,
    /// True when an end of `ci` was cut at ±1.
    pub ci_capped: bool,
    /// Whether the row's coefficient is a lower bound (it over-corrects).
    pub lower_bound: bool,
}

/// The table's rows before any correction: a row for each computed coefficient that every
/// score with item data has (a score without item data keeps its given value), and a row
/// for the values given when a score has both item data and a given value; each with the
/// reliabilities of x and y and whether the row's coefficient is a lower bound.
pub fn choices(
    x: &ScoreReliability,
    y: &ScoreReliability,
) -> Vec<(CoefficientChoice, f64, f64, bool)> {
    if x.computed.is_none() && y.computed.is_none() {
        return Vec::new();
    }
    let given_row = [x, y]
        .iter()
        .any(|s| s.computed.is_some() && s.given.is_some());
    let mut all: Vec<CoefficientChoice> = CoefficientChoice::COMPUTED.to_vec();
    if given_row {
        all.push(CoefficientChoice::Given);
    }
    all.into_iter()
        .filter_map(|c| {
            let (rx, ry) = (x.value(c)?, y.value(c)?);
            // A score without item data keeps its given value in every row, so a lower-bound
            // value there makes every row's correction too large.
            let lower_bound = match c {
                CoefficientChoice::Given => [x, y].iter().any(|s| s.given.is_some_and(|g| g.1)),
                _ => {
                    c.is_lower_bound()
                        || [x, y]
                            .iter()
                            .any(|s| s.computed.is_none() && s.given.is_some_and(|g| g.1))
                }
            };
            Some((c, rx, ry, lower_bound))
        })
        .collect()
}

/// The correlation's table (see [`choices`]): each row's r/√(r_xx r_yy) and its classical
/// interval with the reliabilities taken as known.
pub fn by_coefficient(
    r: f64,
    n: u64,
    level: Level,
    x: &ScoreReliability,
    y: &ScoreReliability,
) -> Vec<ChoiceRow> {
    choices(x, y)
        .into_iter()
        .map(|(c, rx, ry, lower_bound)| {
            let (ci, ci_capped) = classical_interval(r, n, rx, ry, level);
            ChoiceRow {
                coefficient: c,
                reliability_x: rx,
                reliability_y: ry,
                corrected: r / (rx * ry).sqrt(),
                ci,
                ci_capped,
                lower_bound,
            }
        })
        .collect()
}

/// One row of a regression's table: the one predictor's corrected slope under the row's
/// coefficients.
#[derive(Debug, Clone, PartialEq)]
pub struct SlopeChoiceRow {
    /// The coefficient.
    pub coefficient: CoefficientChoice,
    /// Reliability of the predictor (x) used.
    pub reliability_x: f64,
    /// Reliability of the outcome (y) used (1 when none was given).
    pub reliability_y: f64,
    /// The corrected slope, or why there is none.
    pub slope: std::result::Result<f64, String>,
    /// The corrected slope standardized on the true-score SDs.
    pub standardized: Option<f64>,
    /// The slope's percentile interval over the draws, with the row's reliabilities taken
    /// as known (`None` when the draws do not determine it).
    pub ci: Option<(f64, f64)>,
    /// Whether the row's coefficient is a lower bound (it over-corrects).
    pub lower_bound: bool,
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rows follow the coefficients the item data give; a lower coefficient gives a larger
    /// correction; the given value gets its own row only beside item data.
    #[test]
    fn rows_follow_the_coefficients_available() {
        let x = ScoreReliability {
            computed: Some(vec![
                (CoefficientChoice::Alpha, 0.78),
                (CoefficientChoice::Omega, 0.81),
                (CoefficientChoice::Glb, 0.86),
            ]),
            given: Some((0.74, false)),
            main: 0.74,
        };
        let y = ScoreReliability {
            computed: None,
            given: Some((0.8, true)),
            main: 0.8,
        };
        let rows = by_coefficient(0.3, 200, Level::NINETY_FIVE, &x, &y);
        let names: Vec<&str> = rows.iter().map(|r| r.coefficient.name()).collect();
        assert_eq!(names, ["alpha", "omega", "glb", "given"]);
        assert!((rows[0].corrected - 0.3 / (0.78f64 * 0.8).sqrt()).abs() < 1e-15);
        assert!(rows[0].corrected > rows[1].corrected && rows[1].corrected > rows[2].corrected);
        // y's value (without item data) is a lower bound, so every row is one.
        assert!(rows.iter().all(|r| r.lower_bound));
        let y_exact = ScoreReliability {
            given: Some((0.8, false)),
            ..y.clone()
        };
        let rows_exact = by_coefficient(0.3, 200, Level::NINETY_FIVE, &x, &y_exact);
        let flags: Vec<bool> = rows_exact.iter().map(|r| r.lower_bound).collect();
        assert_eq!(flags, [true, false, true, false]);
        // The given row: x's given value, y's; lower bound because y's value is one.
        assert_eq!((rows[3].reliability_x, rows[3].reliability_y), (0.74, 0.8));
        assert!(rows[3].lower_bound);
        let (lo, hi) = rows[1].ci.unwrap();
        assert!(lo < rows[1].corrected && rows[1].corrected < hi);
        // No item data: no table.
        assert!(by_coefficient(0.3, 200, Level::NINETY_FIVE, &y, &y).is_empty());
    }
}
