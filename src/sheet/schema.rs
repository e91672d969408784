//! The coding sheet's columns, the values they may hold, and how a sheet's own
//! column names are mapped onto them.

use crate::transform::CoefficientFamily;
use std::fmt;
use std::str::FromStr;

/// A column with a fixed meaning in the coding sheet. Every other column is kept as a
/// possible moderator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Role {
    /// Study label.
    Study,
    /// Which sample (set of respondents) a row's coefficient comes from.
    Sample,
    /// Which cluster (paper, lab, data set or research group) a row's sample belongs to.
    Cluster,
    /// Reported coefficient (or effect, for already-transformed input).
    Coef,
    /// Sample size.
    N,
    /// Number of items.
    Items,
    /// Kind of coefficient.
    CoefType,
    /// Standard deviation of the scale scores.
    Sd,
    /// Whether `sd` is for sum scores or mean scores.
    SdMetric,
    /// Lowest possible response on an item.
    ScaleMin,
    /// Highest possible response on an item.
    ScaleMax,
    /// Sampling variance of an already-transformed effect.
    Var,
}

impl Role {
    /// Every role, in the order of the template sheet.
    pub const ALL: [Role; 12] = [
        Role::Study,
        Role::Sample,
        Role::Cluster,
        Role::Coef,
        Role::N,
        Role::Items,
        Role::CoefType,
        Role::Sd,
        Role::SdMetric,
        Role::ScaleMin,
        Role::ScaleMax,
        Role::Var,
    ];

    /// The column's standard name.
    pub fn name(self) -> &'static str {
        match self {
            Role::Study => "study",
            Role::Sample => "sample",
            Role::Cluster => "cluster",
            Role::Coef => "coef",
            Role::N => "n",
            Role::Items => "items",
            Role::CoefType => "coef_type",
            Role::Sd => "sd",
            Role::SdMetric => "sd_metric",
            Role::ScaleMin => "scale_min",
            Role::ScaleMax => "scale_max",
            Role::Var => "var",
        }
    }

    /// Kind of value, for the data dictionary.
    pub fn value_kind(self) -> &'static str {
        match self {
            Role::Study | Role::Sample | Role::Cluster => "text",
            Role::Coef | Role::Sd | Role::ScaleMin | Role::ScaleMax | Role::Var => "number",
            Role::N | Role::Items => "whole number",
            Role::CoefType | Role::SdMetric => "one of a list",
        }
    }

    /// When the column must be filled, for the data dictionary.
    pub fn when_needed(self) -> &'static str {
        match self {
            Role::Study => "recommended (rows without a label are called \"row N\")",
            Role::Sample => {
                "when several rows come from the same respondents (empty: the row is its own \
                 sample)"
            }
            Role::Cluster => {
                "when several samples share a paper, lab, data set or research group (empty: \
                 the sample is its own cluster)"
            }
            Role::Coef => "always",
            Role::N => "always, except when coef already holds effects (transform none)",
            Role::Items => "for bonett, hakstian-whalen and raw",
            Role::CoefType => "optional (empty means alpha)",
            Role::Sd | Role::SdMetric | Role::ScaleMin | Role::ScaleMax => {
                "optional (used to explain differences by score spread)"
            }
            Role::Var => "only when coef already holds effects (transform none)",
        }
    }

    /// Allowed values, for the data dictionary.
    pub fn allowed(self) -> String {
        match self {
            Role::Study | Role::Sample | Role::Cluster => {
                format!("any text up to {MAX_LABEL_CHARS} characters")
            }
            Role::Coef => "below 1; a correlation-type coefficient above −1; with transform \
                           none any finite number"
                .into(),
            Role::N => format!("1 to {MAX_N} (at least 3; 4 for fisher-z)"),
            Role::Items => format!("1 to {MAX_ITEMS} (at least 2 for internal consistency)"),
            Role::CoefType => CoefType::ALL
                .iter()
                .map(|t| t.name())
                .collect::<Vec<_>>()
                .join(", "),
            Role::Sd => "above 0".into(),
            Role::SdMetric => "sum, mean".into(),
            Role::ScaleMin | Role::ScaleMax => "any number; scale_min below scale_max".into(),
            Role::Var => "above 0".into(),
        }
    }

    /// What the column holds, for the data dictionary.
    pub fn description(self) -> &'static str {
        match self {
            Role::Study => "a label for the study or sample (author and year, or a code)",
            Role::Sample => {
                "rows with the same value come from the same respondents (alpha and omega of \
                 one sample, subscales, waves); their sampling errors are correlated"
            }
            Role::Cluster => {
                "samples with the same value share a paper, lab, data set or research group; \
                 their true coefficients are more alike than those of unrelated samples"
            }
            Role::Coef => "the reliability coefficient the study reported for its sample",
            Role::N => "the number of respondents the coefficient was computed on",
            Role::Items => "the number of items in the scale as administered",
            Role::CoefType => "which coefficient was reported",
            Role::Sd => "the standard deviation of the scale scores in the sample",
            Role::SdMetric => "whether sd is for sum scores or for mean (average-item) scores",
            Role::ScaleMin => "the lowest possible response to one item (e.g. 1)",
            Role::ScaleMax => "the highest possible response to one item (e.g. 5)",
            Role::Var => "the sampling variance of coef when coef is already on the analysis scale",
        }
    }
}

impl fmt::Display for Role {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Role {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let norm = s.trim().to_ascii_lowercase();
        Role::ALL
            .into_iter()
            .find(|r| r.name() == norm)
            .ok_or_else(|| {
                let names: Vec<&str> = Role::ALL.iter().map(|r| r.name()).collect();
                format!(
                    "\"{s}\" is not a coding-sheet column (choose one of: {})",
                    names.join(", ")
                )
            })
    }
}

/// Longest study label accepted, in characters.
pub const MAX_LABEL_CHARS: usize = 200;
/// Largest sample size accepted.
pub const MAX_N: u64 = 1_000_000_000;
/// Largest number of items accepted.
pub const MAX_ITEMS: u32 = 10_000;

/// The kind of reliability coefficient a study reported.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CoefType {
    /// Coefficient alpha.
    Alpha,
    /// Standardized alpha.
    AlphaStd,
    /// Kuder–Richardson formula 20.
    Kr20,
    /// McDonald's omega.
    Omega,
    /// Test–retest correlation.
    Retest,
    /// Inter-rater correlation.
    Interrater,
    /// Split-half coefficient (Spearman–Brown stepped up).
    SplitHalf,
}

impl CoefType {
    /// Every type.
    pub const ALL: [CoefType; 7] = [
        CoefType::Alpha,
        CoefType::AlphaStd,
        CoefType::Kr20,
        CoefType::Omega,
        CoefType::Retest,
        CoefType::Interrater,
        CoefType::SplitHalf,
    ];

    /// Coding-sheet name.
    pub fn name(self) -> &'static str {
        match self {
            CoefType::Alpha => "alpha",
            CoefType::AlphaStd => "alpha_std",
            CoefType::Kr20 => "kr20",
            CoefType::Omega => "omega",
            CoefType::Retest => "retest",
            CoefType::Interrater => "interrater",
            CoefType::SplitHalf => "split_half",
        }
    }

    /// True for coefficients that are lower bounds to reliability unless the items are
    /// tau-equivalent (alpha and its kin): a correction with one of them over-corrects.
    ///
    /// # References
    /// Sijtsma, K. (2009). On the use, the misuse, and the very limited usefulness of
    /// Cronbach's alpha. *Psychometrika*, 74(1), 107–120.
    pub fn is_lower_bound(self) -> bool {
        matches!(
            self,
            CoefType::Alpha | CoefType::AlphaStd | CoefType::Kr20 | CoefType::SplitHalf
        )
    }

    /// The kind in words, e.g. "coefficient alpha", "test–retest correlation".
    pub fn words(self) -> &'static str {
        match self {
            CoefType::Alpha => "coefficient alpha",
            CoefType::AlphaStd => "standardized alpha",
            CoefType::Kr20 => "KR-20 coefficient",
            CoefType::Omega => "omega coefficient",
            CoefType::Retest => "test–retest correlation",
            CoefType::Interrater => "inter-rater correlation",
            CoefType::SplitHalf => "split-half coefficient",
        }
    }

    /// Which family the coefficient belongs to.
    pub fn family(self) -> CoefficientFamily {
        match self {
            CoefType::Retest | CoefType::Interrater => CoefficientFamily::Correlation,
            _ => CoefficientFamily::InternalConsistency,
        }
    }

    /// Parse a coding-sheet cell; `None` when the text names no known type.
    pub fn parse_cell(s: &str) -> Option<CoefType> {
        let norm: String = s
            .trim()
            .to_ascii_lowercase()
            .chars()
            .map(|c| if c == '-' || c == ' ' { '_' } else { c })
            .collect();
        Some(match norm.as_str() {
            "alpha" => CoefType::Alpha,
            "alpha_std" => CoefType::AlphaStd,
            "kr20" | "kr_20" => CoefType::Kr20,
            "omega" => CoefType::Omega,
            "retest" | "test_retest" => CoefType::Retest,
            "interrater" | "inter_rater" => CoefType::Interrater,
            "split_half" | "splithalf" => CoefType::SplitHalf,
            _ => return None,
        })
    }
}

/// Whether a reported SD is for sum scores or mean scores.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SdMetric {
    /// SD of the sum of the item scores.
    Sum,
    /// SD of the mean of the item scores.
    Mean,
}

impl SdMetric {
    /// Coding-sheet name.
    pub fn name(self) -> &'static str {
        match self {
            SdMetric::Sum => "sum",
            SdMetric::Mean => "mean",
        }
    }

    /// Parse a coding-sheet cell.
    pub fn parse_cell(s: &str) -> Option<SdMetric> {
        match s.trim().to_ascii_lowercase().as_str() {
            "sum" | "total" => Some(SdMetric::Sum),
            "mean" | "average" => Some(SdMetric::Mean),
            _ => None,
        }
    }
}

/// A sheet's own names for the standard columns (`--column coef=reported_alpha`).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ColumnMap {
    pairs: Vec<(Role, String)>,
}

impl ColumnMap {
    /// An empty map: every column goes by its standard name.
    pub fn new() -> Self {
        ColumnMap::default()
    }

    /// Map `role` to the sheet's column `name`. A role mapped twice is an error.
    pub fn insert(&mut self, role: Role, name: impl Into<String>) -> Result<(), String> {
        let name = name.into();
        if let Some((_, old)) = self.pairs.iter().find(|(r, _)| *r == role) {
            return Err(format!(
                "column {role} is mapped twice (to \"{old}\" and to \"{name}\")"
            ));
        }
        if name.trim().is_empty() {
            return Err(format!("column {role} is mapped to an empty name"));
        }
        self.pairs.push((role, name));
        Ok(())
    }

    /// Parse `ROLE=NAME`.
    pub fn insert_spec(&mut self, spec: &str) -> Result<(), String> {
        let (role, name) = spec.split_once('=').ok_or_else(|| {
            format!("a column mapping takes ROLE=NAME, e.g. coef=reported_alpha (got \"{spec}\")")
        })?;
        let role: Role = role.parse()?;
        self.insert(role, name.trim())
    }

    /// The sheet's name for a role, if mapped.
    pub fn get(&self, role: Role) -> Option<&str> {
        self.pairs
            .iter()
            .find(|(r, _)| *r == role)
            .map(|(_, n)| n.as_str())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The sheet reader finds a role's column by the role's place in `Role::ALL`.
    #[test]
    fn roles_are_listed_in_their_declared_order() {
        for (i, r) in Role::ALL.iter().enumerate() {
            assert_eq!(*r as usize, i, "{r:?}");
        }
    }

    #[test]
    fn coef_type_cells() {
        assert_eq!(CoefType::parse_cell(" Alpha "), Some(CoefType::Alpha));
        assert_eq!(CoefType::parse_cell("test-retest"), Some(CoefType::Retest));
        assert_eq!(CoefType::parse_cell("KR-20"), Some(CoefType::Kr20));
        assert_eq!(CoefType::parse_cell("glb"), None);
        for t in CoefType::ALL {
            assert_eq!(CoefType::parse_cell(t.name()), Some(t));
        }
    }

    #[test]
    fn column_map_specs() {
        let mut m = ColumnMap::new();
        m.insert_spec("coef=reported_alpha").unwrap();
        assert_eq!(m.get(Role::Coef), Some("reported_alpha"));
        assert!(m.insert_spec("coef=other").is_err());
        assert!(m.insert_spec("alpha=x").is_err());
        assert!(m.insert_spec("n").is_err());
    }
}
