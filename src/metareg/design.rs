//! Moderators and the design matrix: numeric moderators (centred at their means unless
//! asked otherwise), categorical ones in treatment coding against a stated reference level.

use crate::benchmark::Prepared;
use crate::error::{CellProblem, Error, Result};
use crate::limits::MAX_LEVELS;
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::sheet::{
    ColumnRef, Role, SheetFormat, StudyRecord, find_column, parse_number, same_name,
};
use crate::warning::{VIF_LIMIT, Warning};
use nalgebra::DMatrix;
use std::collections::{BTreeMap, HashMap};

/// How a moderator is to be treated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModeratorKind {
    /// Numeric when most values are numbers, categorical otherwise.
    Auto,
    /// Categorical whatever its values look like (e.g. numeric codes).
    Categorical,
}

/// Where numeric moderators are measured from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Centring {
    /// From their means over the studies in the model: the intercept is the expected
    /// value of a study with average moderator values (at the reference level of each
    /// categorical moderator).
    #[default]
    Means,
    /// From zero: the intercept is the expected value where every numeric moderator is 0.
    None,
}

impl Centring {
    /// The name in JSON: "means" or "none".
    pub fn name(self) -> &'static str {
        match self {
            Centring::Means => "means",
            Centring::None => "none",
        }
    }
}

/// A moderator requested by the user.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ModeratorSpec {
    /// Column name (another column of the sheet, or one of the standard columns n, items,
    /// sd, scale_min, scale_max and coef_type).
    pub name: String,
    /// Numeric or categorical.
    pub kind: ModeratorKind,
    /// Reference level of a categorical moderator (default: the level with most studies).
    pub reference: Option<String>,
}

impl ModeratorSpec {
    /// A moderator whose kind is decided by its values.
    pub fn auto(name: impl Into<String>) -> Self {
        ModeratorSpec {
            name: name.into(),
            kind: ModeratorKind::Auto,
            reference: None,
        }
    }
}

/// A moderator as it entered the model.
#[derive(Debug, Clone, PartialEq)]
pub enum Moderator {
    /// A numeric moderator: one column.
    Numeric {
        /// Column name.
        name: String,
        /// Its column in the design.
        column: usize,
        /// The value its column is measured from (its mean, or 0 when not centred).
        centre: f64,
    },
    /// A categorical moderator: one column per level other than the reference.
    Categorical {
        /// Column name.
        name: String,
        /// The reference level.
        reference: String,
        /// The other levels, each with its design column, in order of first appearance.
        levels: Vec<(String, usize)>,
        /// Studies per level (reference included).
        counts: BTreeMap<String, usize>,
    },
}

impl Moderator {
    /// Column name.
    pub fn name(&self) -> &str {
        match self {
            Moderator::Numeric { name, .. } | Moderator::Categorical { name, .. } => name,
        }
    }

    /// Design columns this moderator occupies.
    pub fn columns(&self) -> Vec<usize> {
        match self {
            Moderator::Numeric { column, .. } => vec![*column],
            Moderator::Categorical { levels, .. } => levels.iter().map(|(_, c)| *c).collect(),
        }
    }
}

/// A row left out of a model, with why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ExcludedRow {
    /// Spreadsheet row.
    pub row: usize,
    /// Why (`column X: reason`).
    pub reasons: Vec<String>,
}

/// The design of a model: which studies enter it and the matrix of their moderator values.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// Indices (into the prepared studies) of the studies in the model.
    pub used: Vec<usize>,
    /// The design matrix: intercept first.
    pub x: DMatrix<f64>,
    /// A name for each column: `intercept`, a numeric moderator's name, or `name=level`.
    pub names: Vec<String>,
    /// The moderators, in the order given.
    pub moderators: Vec<Moderator>,
    /// Where the numeric moderators are measured from.
    pub centring: Centring,
    /// Studies left out because a moderator value is missing.
    pub excluded: Vec<ExcludedRow>,
    /// Things noticed while building it (level spellings, collinearity).
    pub warnings: Vec<Warning>,
}

impl Design {
    /// The moderator values as the design names them: each moderator by its own name, a
    /// categorical value by its level's spelling ("Retail STAFF " → "retail staff").
    pub fn canonical_values(&self, at: &BTreeMap<String, String>) -> BTreeMap<String, String> {
        at.iter()
            .map(|(k, v)| {
                let Some(m) = self.moderators.iter().find(|m| same_name(m.name(), k)) else {
                    return (k.clone(), v.trim().to_string());
                };
                let value = match m {
                    Moderator::Categorical {
                        reference, levels, ..
                    } => std::iter::once(reference)
                        .chain(levels.iter().map(|(l, _)| l))
                        .find(|l| same_name(l, v))
                        .cloned()
                        .unwrap_or_else(|| v.trim().to_string()),
                    Moderator::Numeric { .. } => v.trim().to_string(),
                };
                (m.name().to_string(), value)
            })
            .collect()
    }

    /// The effects and variances of the studies in the model.
    pub fn effects(&self, y: &[f64], v: &[f64]) -> (Vec<f64>, Vec<f64>) {
        self.used.iter().map(|&i| (y[i], v[i])).unzip()
    }

    /// The design row of a study with the given moderator values (`name` → value as
    /// text; names and levels matched as column names are). `setting` is where the
    /// values came from, for messages; `format` says how numbers may be written.
    pub fn row_for(
        &self,
        values: &BTreeMap<String, String>,
        format: SheetFormat,
        setting: Setting,
    ) -> Result<Vec<f64>> {
        let mut row = vec![0.0; self.x.ncols()];
        row[0] = 1.0;
        let mut missing = Vec::new();
        for m in &self.moderators {
            let Some((_, text)) = values.iter().find(|(k, _)| same_name(k, m.name())) else {
                missing.push(m.name().to_string());
                continue;
            };
            set_value(m, text, &mut row, format, setting)?;
        }
        if !missing.is_empty() {
            return Err(Error::setting(
                setting,
                msg![
                    "give the new study's value of every moderator in the model (",
                    setting,
                    format!("); missing: {}", missing.join(", "))
                ],
            ));
        }
        if let Some(extra) = values
            .keys()
            .find(|k| !self.moderators.iter().any(|m| same_name(m.name(), k)))
        {
            return Err(Error::setting(
                setting,
                msg![
                    given(setting, format!("{extra}=…")),
                    format!(": {extra} is not a moderator of the model (add it with "),
                    given(Setting::Moderators, extra.clone()),
                    ", or leave it out)"
                ],
            ));
        }
        Ok(row)
    }

    /// The moderator values at which the intercept is the expected value, in words: "at
    /// the mean of year (2011.3)", for reports.
    pub fn intercept_meaning(&self) -> String {
        let mut parts = Vec::new();
        for m in &self.moderators {
            match m {
                Moderator::Numeric { name, centre, .. } => match self.centring {
                    Centring::Means => parts.push(format!(
                        "{name} at its mean ({})",
                        crate::format::significant(*centre, 4)
                    )),
                    Centring::None => parts.push(format!("{name} = 0")),
                },
                Moderator::Categorical {
                    name, reference, ..
                } => parts.push(format!("{name} = {reference}")),
            }
        }
        crate::format::and_list(&parts)
    }
}

/// Put a moderator's value, given as text, into its column(s) of a design row.
fn set_value(
    m: &Moderator,
    text: &str,
    row: &mut [f64],
    format: SheetFormat,
    setting: Setting,
) -> Result<()> {
    match m {
        Moderator::Numeric {
            name,
            column,
            centre,
        } => {
            let x = parse_number(text, format.decimal_comma()).map_err(|e| {
                Error::setting(
                    setting,
                    msg![
                        given(setting, format!("{name}={text}")),
                        format!(": the value of moderator {name}: {e}")
                    ],
                )
            })?;
            row[*column] = x - centre;
        }
        Moderator::Categorical {
            name,
            reference,
            levels,
            ..
        } => {
            if same_name(text, reference) {
                return Ok(());
            }
            let Some((_, col)) = levels.iter().find(|(l, _)| same_name(l, text)) else {
                let mut all = vec![reference.clone()];
                all.extend(levels.iter().map(|(l, _)| l.clone()));
                return Err(Error::setting(
                    setting,
                    msg![
                        given(setting, format!("{name}={}", text.trim())),
                        format!(
                            ": no study in the model has this level of {name}, so the model \
                             says nothing about it (levels: {})",
                            all.join(", ")
                        )
                    ],
                ));
            };
            row[*col] = 1.0;
        }
    }
    Ok(())
}

/// The standard columns that can serve as numeric moderators.
const NUMERIC_ROLES: [Role; 5] = [
    Role::N,
    Role::Items,
    Role::Sd,
    Role::ScaleMin,
    Role::ScaleMax,
];

/// Which column a moderator's name refers to, or why it cannot be one.
fn moderator_column(p: &Prepared, name: &str) -> Result<ColumnRef> {
    let not = |why: &str| {
        Error::setting(
            Setting::Moderators,
            msg![given(Setting::Moderators, name), format!(": {why}")],
        )
    };
    let found = find_column(&p.columns, &p.extra_columns, name);
    if let Some(c) = found
        && let Some((_, sample, rows)) = p.varying_within_sample.iter().find(|(v, ..)| *v == c)
    {
        return Err(not(&format!(
            "its value differs between the rows of one sample (sample \"{sample}\", {}), so \
             it cannot be a moderator of one composite per sample; use the multilevel model \
             (the default) instead of composites",
            crate::warning::list_rows(rows)
        )));
    }
    match found {
        Some(ColumnRef::Standard(role)) => match role {
            Role::Sample | Role::Cluster => Err(not(
                "sample and cluster say which rows share respondents or a paper; the model \
                 uses them as its levels of variation, not as moderators",
            )),
            Role::Coef => Err(not(
                "coef holds the coefficients the moderators are to explain; it cannot also \
                 explain them",
            )),
            Role::Var => Err(not(
                "var holds each coefficient's sampling variance, which the model already uses \
                 as its weight",
            )),
            Role::Study => Err(not(
                "study holds the labels of the studies, one per row; it cannot explain \
                 differences between them",
            )),
            Role::SdMetric => Err(not(
                "sd_metric only says how to read sd; the score-spread test puts the SDs on one \
                 metric",
            )),
            Role::Sd => {
                let first = p.records.first().and_then(|r| r.sd_metric);
                if first.is_none() || p.records.iter().any(|r| r.sd_metric != first) {
                    return Err(Error::setting(
                        Setting::Moderators,
                        msg![
                            given(Setting::Moderators, name),
                            ": the sheet's SDs are not all on one metric (sd_metric missing or \
                             mixed sum and mean), so they cannot be compared as they are; use ",
                            Setting::ScoreSpread,
                            ", which puts them on one metric"
                        ],
                    ));
                }
                Ok(ColumnRef::Standard(role))
            }
            _ => Ok(ColumnRef::Standard(role)),
        },
        Some(c) => Ok(c),
        None => {
            let mut available: Vec<String> = p.extra_columns.clone();
            available.extend(
                NUMERIC_ROLES
                    .iter()
                    .chain([Role::CoefType].iter())
                    .filter(|r| p.columns.contains_key(r))
                    .map(|r| r.name().to_string()),
            );
            Err(Error::setting(
                Setting::Moderators,
                msg![
                    given(Setting::Moderators, name),
                    format!(
                        ": the sheet has no such column (columns available as moderators: {})",
                        if available.is_empty() {
                            "none".to_string()
                        } else {
                            available.join(", ")
                        }
                    )
                ],
            ))
        }
    }
}

fn value_of(rec: &StudyRecord, column: ColumnRef) -> Option<String> {
    rec.value(column).map(|s| s.trim().to_string())
}

/// A column's values over the prepared studies (`None` where missing); an error names the
/// available columns when there is no such column.
pub fn column_values(p: &Prepared, name: &str) -> Result<Vec<Option<String>>> {
    let c = moderator_column(p, name)?;
    Ok(p.records.iter().map(|r| value_of(r, c)).collect())
}

/// The levels of a categorical column: each value's level (its first spelling in sheet
/// order, so that values differing only in case or spaces are one level), with a warning
/// for every level written more than one way. More than [`MAX_LEVELS`] levels are
/// refused: a model with that many has more coefficients than a coding sheet can inform.
/// The work is linear in the rows (each value is looked up, not compared with every
/// level).
pub fn levels_of(
    name: &str,
    cells: &[(usize, String)],
    warnings: &mut Vec<Warning>,
) -> Result<Vec<String>> {
    let mut order: Vec<String> = Vec::new();
    let mut index: HashMap<String, usize> = HashMap::new();
    let mut spellings: BTreeMap<usize, (Vec<String>, Vec<usize>)> = BTreeMap::new();
    let mut out = Vec::with_capacity(cells.len());
    for (row, t) in cells {
        let t = t.trim();
        // The key `same_name` compares by: trimmed, then lower case.
        let key = t.to_lowercase();
        let i = match index.get(&key) {
            Some(&i) => i,
            None => {
                if order.len() == MAX_LEVELS {
                    return Err(too_many_levels(name, cells));
                }
                order.push(t.to_string());
                index.insert(key, order.len() - 1);
                order.len() - 1
            }
        };
        if order[i] != t {
            let e = spellings
                .entry(i)
                .or_insert_with(|| (vec![order[i].clone()], Vec::new()));
            if !e.0.iter().any(|s| s == t) {
                e.0.push(t.to_string());
            }
            e.1.push(*row);
        }
        out.push(order[i].clone());
    }
    for (i, (spelled, rows)) in spellings {
        warnings.push(Warning::LevelSpellings {
            moderator: name.to_string(),
            level: order[i].clone(),
            spellings: spelled,
            rows,
        });
    }
    Ok(out)
}

fn too_many_levels(name: &str, cells: &[(usize, String)]) -> Error {
    let distinct: std::collections::HashSet<String> =
        cells.iter().map(|(_, t)| t.trim().to_lowercase()).collect();
    Error::cannot(format!(
        "column {} has {} different values among the studies, more than the {MAX_LEVELS} \
         levels a categorical moderator or a benchmark per level may have (a model with that \
         many has more coefficients than a coding sheet can inform, and its cost grows with \
         the cube of the levels); group the values into fewer categories in a new column, or \
         use the column as a number if it is one",
        crate::format::quoted(name, 60),
        crate::format::thousands(distinct.len() as u64)
    ))
}

/// Build the design for the given moderators over the prepared studies. Studies with a
/// missing moderator value are left out and listed; a numeric column with a few text
/// values, a constant moderator, a singular design or too few studies are errors.
pub fn build_design(p: &Prepared, specs: &[ModeratorSpec], centring: Centring) -> Result<Design> {
    check_distinct(specs)?;
    let (values, kinds) = moderator_values(p, specs)?;
    let (used, excluded) = split_missing(p, specs, &values);
    let mut b = Builder {
        columns: vec![vec![1.0; used.len()]],
        names: vec!["intercept".to_string()],
        moderators: Vec::new(),
        problems: Vec::new(),
        warnings: Vec::new(),
    };
    for ((s, col), kind) in specs.iter().zip(&values).zip(kinds) {
        let cells: Vec<(usize, String)> = used
            .iter()
            .map(|&i| {
                let v = col[i].clone().expect("used rows have values");
                (p.records[i].row, v)
            })
            .collect();
        b.add(s, kind, &cells, p.source.format, centring)?;
    }
    if !b.problems.is_empty() {
        return Err(Error::InvalidSheet {
            file: p.file().to_string(),
            problems: b.problems,
        });
    }
    let k = used.len();
    let n_coef = b.columns.len();
    if k <= n_coef + 1 {
        return Err(Error::cannot(format!(
            "{k} studies cannot support a model with {n_coef} coefficients (intercept included): \
             at least {} are needed, so that the residual heterogeneity keeps two degrees of \
             freedom{}",
            n_coef + 2,
            if excluded.is_empty() {
                String::new()
            } else {
                format!(
                    "; {} left out for missing moderator values",
                    if excluded.len() == 1 {
                        "1 row was".to_string()
                    } else {
                        format!("{} rows were", excluded.len())
                    }
                )
            }
        )));
    }
    let x = DMatrix::from_fn(k, n_coef, |i, j| b.columns[j][i]);
    check_rank(&x, &b.names)?;
    let mut warnings = b.warnings;
    if let Some(w) = collinearity(&x, &b.moderators) {
        warnings.push(w);
    }
    Ok(Design {
        used,
        x,
        names: b.names,
        moderators: b.moderators,
        centring,
        excluded,
        warnings,
    })
}

/// Fail when a moderator is given twice.
fn check_distinct(specs: &[ModeratorSpec]) -> Result<()> {
    let mut seen: Vec<&str> = Vec::new();
    for s in specs {
        if seen.iter().any(|n| same_name(n, &s.name)) {
            return Err(Error::setting(
                Setting::Moderators,
                msg![
                    given(Setting::Moderators, s.name.clone()),
                    " is given twice"
                ],
            ));
        }
        seen.push(&s.name);
    }
    Ok(())
}

/// A column's values over the prepared studies (`None` where missing).
type ColumnValues = Vec<Option<String>>;

/// Each moderator's values over the prepared studies (`None` where missing) and its
/// kind (coef_type is always categorical).
fn moderator_values(
    p: &Prepared,
    specs: &[ModeratorSpec],
) -> Result<(Vec<ColumnValues>, Vec<ModeratorKind>)> {
    let mut values: Vec<ColumnValues> = Vec::with_capacity(specs.len());
    let mut kinds = Vec::with_capacity(specs.len());
    for s in specs {
        let c = moderator_column(p, &s.name)?;
        let categorical_role = c == ColumnRef::Standard(Role::CoefType);
        kinds.push(if categorical_role {
            ModeratorKind::Categorical
        } else {
            s.kind
        });
        values.push(p.records.iter().map(|r| value_of(r, c)).collect());
    }
    Ok((values, kinds))
}

/// The studies with every moderator value, and the rows that lack one (with why).
fn split_missing(
    p: &Prepared,
    specs: &[ModeratorSpec],
    values: &[ColumnValues],
) -> (Vec<usize>, Vec<ExcludedRow>) {
    let mut used = Vec::new();
    let mut excluded = Vec::new();
    for (i, rec) in p.records.iter().enumerate() {
        let reasons: Vec<String> = specs
            .iter()
            .zip(values)
            .filter(|(_, col)| col[i].is_none())
            .map(|(s, _)| format!("column {}: the moderator value is missing", s.name))
            .collect();
        if reasons.is_empty() {
            used.push(i);
        } else {
            excluded.push(ExcludedRow {
                row: rec.row,
                reasons,
            });
        }
    }
    (used, excluded)
}

/// The design's columns as they are built.
struct Builder {
    columns: Vec<Vec<f64>>,
    names: Vec<String>,
    moderators: Vec<Moderator>,
    problems: Vec<CellProblem>,
    warnings: Vec<Warning>,
}

impl Builder {
    /// Add one moderator's column(s).
    fn add(
        &mut self,
        s: &ModeratorSpec,
        kind: ModeratorKind,
        cells: &[(usize, String)],
        format: SheetFormat,
        centring: Centring,
    ) -> Result<()> {
        let parsed: Vec<std::result::Result<f64, String>> = cells
            .iter()
            .map(|(_, t)| parse_number(t, format.decimal_comma()))
            .collect();
        let n_numeric = parsed.iter().filter(|r| r.is_ok()).count();
        let numeric =
            kind == ModeratorKind::Auto && n_numeric * 2 >= cells.len() && !cells.is_empty();
        if !numeric {
            return self.add_categorical(s, cells);
        }
        if n_numeric < cells.len() {
            for ((row, _), r) in cells.iter().zip(&parsed) {
                if let Err(e) = r {
                    self.problems.push(CellProblem::cell(
                        *row,
                        s.name.clone(),
                        msg![
                            format!(
                                "{e}, while most values of this moderator are numbers; mark a \
                                 missing value empty, NA or ., or ask for "
                            ),
                            given(Setting::Categorical, s.name.clone()),
                            " to treat every value as a category"
                        ],
                    ));
                }
            }
            return Ok(());
        }
        if s.reference.is_some() {
            return Err(Error::setting(
                Setting::ReferenceLevel,
                msg![
                    given(Setting::ReferenceLevel, format!("{}=…", s.name)),
                    format!(
                        ": {} is numeric, so it has no reference level (ask for ",
                        s.name
                    ),
                    given(Setting::Categorical, s.name.clone()),
                    " to treat it as categories)"
                ],
            ));
        }
        let xs: Vec<f64> = parsed.into_iter().map(|r| r.expect("checked")).collect();
        if !xs.is_empty() && xs.iter().all(|x| *x == xs[0]) {
            return Err(Error::cannot(format!(
                "moderator {} takes the same value ({}) in every study of the model, so it \
                 cannot explain differences between them",
                s.name, xs[0]
            )));
        }
        let centre = match centring {
            Centring::Means => xs.iter().sum::<f64>() / xs.len() as f64,
            Centring::None => 0.0,
        };
        self.moderators.push(Moderator::Numeric {
            name: s.name.clone(),
            column: self.columns.len(),
            centre,
        });
        self.names.push(s.name.clone());
        self.columns.push(xs.iter().map(|x| x - centre).collect());
        Ok(())
    }

    fn add_categorical(&mut self, s: &ModeratorSpec, cells: &[(usize, String)]) -> Result<()> {
        let levels = levels_of(&s.name, cells, &mut self.warnings)?;
        let mut order: Vec<String> = Vec::new();
        let mut counts: BTreeMap<String, usize> = BTreeMap::new();
        for l in &levels {
            let n = counts.entry(l.clone()).or_insert(0);
            if *n == 0 {
                order.push(l.clone());
            }
            *n += 1;
        }
        if order.len() < 2 {
            return Err(Error::cannot(format!(
                "moderator {} has only one level ({}) among the studies of the model, so it \
                 cannot explain differences between them",
                s.name,
                order.first().map(String::as_str).unwrap_or("none")
            )));
        }
        let reference = match &s.reference {
            Some(r) => order
                .iter()
                .find(|l| same_name(l, r))
                .cloned()
                .ok_or_else(|| {
                    Error::setting(
                        Setting::ReferenceLevel,
                        msg![
                            given(Setting::ReferenceLevel, format!("{}={}", s.name, r.trim())),
                            format!(
                                ": no study in the model has this level (levels: {})",
                                order.join(", ")
                            )
                        ],
                    )
                })?,
            None => {
                // The level with most studies (the first such in sheet order).
                let max = counts.values().copied().max().unwrap_or(0);
                order
                    .iter()
                    .find(|l| counts[*l] == max)
                    .cloned()
                    .expect("a level")
            }
        };
        let mut columns = Vec::new();
        for level in order.iter().filter(|l| **l != reference) {
            let dummy: Vec<f64> = levels
                .iter()
                .map(|l| if l == level { 1.0 } else { 0.0 })
                .collect();
            columns.push((level.clone(), self.columns.len()));
            self.names.push(format!("{}={level}", s.name));
            self.columns.push(dummy);
        }
        self.moderators.push(Moderator::Categorical {
            name: s.name.clone(),
            reference,
            levels: columns,
            counts,
        });
        Ok(())
    }
}

/// A collinearity warning when a moderator's variance inflation factor exceeds
/// [`VIF_LIMIT`]. For a moderator with one column this is VIFⱼ = 1/(1 − R²ⱼ); for a
/// categorical moderator with several columns it is the generalized factor of Fox &
/// Monette (1992), GVIF = det(R₁₁)·det(R₂₂)/det(R) with R the correlation matrix of the
/// moderator columns, R₁₁ the moderator's own block and R₂₂ the others', put on the scale
/// of a one-column VIF as GVIF^(1/df) (so that the same limit applies, and the columns of
/// one categorical moderator are never "related to each other"). One moderator alone is
/// never collinear.
///
/// # References
/// Belsley, D. A., Kuh, E., & Welsch, R. E. (1980). *Regression diagnostics*. New York:
/// Wiley (chapter 3).
/// Fox, J., & Monette, G. (1992). Generalized collinearity diagnostics. *Journal of the
/// American Statistical Association*, 87(417), 178–183. (Volume and pages recalled, not
/// checked against the article here.)
fn collinearity(x: &DMatrix<f64>, moderators: &[Moderator]) -> Option<Warning> {
    if moderators.len() < 2 {
        return None;
    }
    let factors = inflation_factors(x, moderators)?;
    let involved: Vec<(String, f64)> = moderators
        .iter()
        .zip(factors)
        .filter(|(_, v)| v.is_finite() && *v > VIF_LIMIT)
        .map(|(m, v)| (m.name().to_string(), v))
        .collect();
    let worst = involved.iter().map(|(_, v)| *v).fold(f64::NAN, f64::max);
    (!involved.is_empty()).then(|| Warning::Collinearity {
        moderators: involved.into_iter().map(|(n, _)| n).collect(),
        vif: worst,
    })
}

/// Each moderator's (generalized) variance inflation factor on the one-column scale,
/// GVIF^(1/df); `None` when the moderator columns' correlation matrix is singular.
fn inflation_factors(x: &DMatrix<f64>, moderators: &[Moderator]) -> Option<Vec<f64>> {
    let (k, p) = (x.nrows(), x.ncols());
    if p < 3 || k < 3 {
        return None;
    }
    let r = correlation_of_columns(x);
    let det_all = r.determinant();
    if !(det_all.is_finite() && det_all > 0.0) {
        return None;
    }
    let factors = moderators
        .iter()
        .map(|md| {
            // Design column j is row j − 1 of R.
            let own: Vec<usize> = md.columns().iter().map(|c| c - 1).collect();
            let rest: Vec<usize> = (0..p - 1).filter(|c| !own.contains(c)).collect();
            let det_own = r.select_rows(&own).select_columns(&own).determinant();
            let det_rest = if rest.is_empty() {
                1.0
            } else {
                r.select_rows(&rest).select_columns(&rest).determinant()
            };
            (det_own * det_rest / det_all).powf(1.0 / own.len() as f64)
        })
        .collect();
    Some(factors)
}

/// The correlation matrix of a design's columns after the intercept (column 0).
fn correlation_of_columns(x: &DMatrix<f64>) -> DMatrix<f64> {
    let (k, p) = (x.nrows(), x.ncols());
    let cols: Vec<Vec<f64>> = (1..p)
        .map(|j| {
            let c: Vec<f64> = x.column(j).iter().copied().collect();
            let m = c.iter().sum::<f64>() / k as f64;
            let d: Vec<f64> = c.iter().map(|v| v - m).collect();
            let norm = d.iter().map(|v| v * v).sum::<f64>().sqrt();
            d.iter().map(|v| v / norm).collect()
        })
        .collect();
    let m = cols.len();
    DMatrix::from_fn(m, m, |a, b| {
        cols[a]
            .iter()
            .zip(&cols[b])
            .map(|(u, v)| u * v)
            .sum::<f64>()
    })
}

/// Relative size of the smallest singular value below which a design counts as singular.
const RANK_TOLERANCE: f64 = 1e-9;

/// Refuse a design whose columns are (nearly) linearly dependent, naming them.
pub(crate) fn check_rank(x: &DMatrix<f64>, names: &[String]) -> Result<()> {
    // Scale columns to unit length so that units do not matter.
    let mut scaled = x.clone();
    for mut c in scaled.column_iter_mut() {
        let norm = c.norm();
        if norm > 0.0 {
            c /= norm;
        }
    }
    let sv = scaled.clone().svd(false, true);
    let max = sv.singular_values.max();
    let min = sv.singular_values.min();
    if max > 0.0 && min / max > RANK_TOLERANCE {
        return Ok(());
    }
    // Name the columns involved: those loading on the smallest singular vector.
    let i = sv.singular_values.imin();
    let involved: Vec<&str> = sv
        .v_t
        .as_ref()
        .map(|vt| {
            (0..names.len())
                .filter(|&j| vt[(i, j)].abs() > 0.1)
                .map(|j| names[j].as_str())
                .collect()
        })
        .unwrap_or_default();
    Err(Error::cannot(format!(
        "the moderators are collinear: {} are linearly dependent over the studies of the model, \
         so their effects cannot be told apart; drop one of them",
        involved.join(", ")
    )))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn levels_that_differ_in_case_or_spaces_are_one() {
        let cells: Vec<(usize, String)> =
            [(2, "Online"), (3, " online"), (4, "paper"), (5, "ONLINE ")]
                .iter()
                .map(|(r, t)| (*r, t.to_string()))
                .collect();
        let mut w = Vec::new();
        let levels = levels_of("mode", &cells, &mut w).unwrap();
        assert_eq!(levels, ["Online", "Online", "paper", "Online"]);
        assert!(
            matches!(
                &w[..],
                [Warning::LevelSpellings { level, rows, .. }] if level == "Online" && rows == &[3, 5]
            ),
            "{w:?}"
        );
    }

    /// Two nearly identical columns have a variance inflation factor far above 10; two
    /// unrelated ones have one near 1 (VIF = 1/(1 − r²) for two columns: with r = 0.99 it
    /// is 50.3).
    #[test]
    fn collinear_moderators_are_warned_about() {
        let a = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
        let b = [1.1, 2.0, 2.9, 4.2, 4.9, 6.1];
        let c = [3.0, -1.0, 2.0, 0.5, -2.0, 1.0];
        let x = |u: &[f64], v: &[f64]| {
            DMatrix::from_fn(6, 3, |i, j| match j {
                0 => 1.0,
                1 => u[i],
                _ => v[i],
            })
        };
        let mods = vec![
            Moderator::Numeric {
                name: "a".into(),
                column: 1,
                centre: 0.0,
            },
            Moderator::Numeric {
                name: "b".into(),
                column: 2,
                centre: 0.0,
            },
        ];
        assert!(matches!(
            collinearity(&x(&a, &b), &mods),
            Some(Warning::Collinearity { vif, .. }) if vif > 10.0
        ));
        assert!(collinearity(&x(&a, &c), &mods).is_none());
    }

    /// Against statsmodels' variance_inflation_factor (one-column moderators) and a numpy
    /// computation of Fox & Monette's (1992) generalized factor for a categorical moderator
    /// with three levels (tests/reference/make_fixtures.py, collinearity_fixture).
    #[test]
    fn inflation_factors_match_the_reference() {
        let fixture: serde_json::Value = serde_json::from_str(include_str!(
            "../../tests/reference/fixtures/inference.json"
        ))
        .unwrap();
        let f = &fixture["collinearity"];
        let rows: Vec<Vec<f64>> = serde_json::from_value(f["x"].clone()).unwrap();
        let x = DMatrix::from_fn(rows.len(), rows[0].len(), |i, j| rows[i][j]);
        let numeric = |name: &str, column| Moderator::Numeric {
            name: name.into(),
            column,
            centre: 0.0,
        };
        let mods = vec![
            numeric("a", 1),
            numeric("b", 2),
            Moderator::Categorical {
                name: "c".into(),
                reference: "0".into(),
                levels: vec![("1".into(), 3), ("2".into(), 4)],
                counts: [("0".into(), 5), ("1".into(), 5), ("2".into(), 4)].into(),
            },
            numeric("d", 5),
        ];
        let got = inflation_factors(&x, &mods).unwrap();
        for (m, g) in mods.iter().zip(&got) {
            let want = f["gvif"][m.name()].as_f64().unwrap();
            assert!(
                (g - want).abs() <= 1e-9 * want,
                "{}: {g} vs {want}",
                m.name()
            );
        }
        let vif = f["vif"].as_array().unwrap();
        assert!((got[0] - vif[0].as_f64().unwrap()).abs() < 1e-9 * got[0]);
        // a and b nearly repeat each other; the categorical moderator does not.
        match collinearity(&x, &mods) {
            Some(Warning::Collinearity { moderators, .. }) => assert_eq!(moderators, ["a", "b"]),
            other => panic!("{other:?}"),
        }
    }

    /// The columns of one categorical moderator are never collinear with each other: with a
    /// rare reference level its two indicator columns correlate at about −0.96 (a
    /// one-column VIF of about 13), yet the moderator as a whole is unrelated to the other.
    #[test]
    fn one_categorical_moderator_is_not_collinear() {
        let k = 50;
        let level = |i: usize| match i {
            0 => 0,
            i if i % 2 == 1 => 1,
            _ => 2,
        };
        let x = DMatrix::from_fn(k, 4, |i, j| match j {
            0 => 1.0,
            1 => f64::from(level(i) == 1),
            2 => f64::from(level(i) == 2),
            _ => ((i * 7919) % 13) as f64,
        });
        let mods = vec![
            Moderator::Categorical {
                name: "c".into(),
                reference: "0".into(),
                levels: vec![("1".into(), 1), ("2".into(), 2)],
                counts: [("0".into(), 1), ("1".into(), 25), ("2".into(), 24)].into(),
            },
            Moderator::Numeric {
                name: "d".into(),
                column: 3,
                centre: 0.0,
            },
        ];
        let r = correlation_of_columns(&x);
        assert!(1.0 / (1.0 - r[(0, 1)].powi(2)) > 10.0, "{}", r[(0, 1)]);
        let f = inflation_factors(&x, &mods).unwrap();
        assert!(f.iter().all(|v| *v < 2.0), "{f:?}");
        assert!(collinearity(&x, &mods).is_none());
    }
}
