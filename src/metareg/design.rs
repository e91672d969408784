//! Moderators and the design matrix: numeric moderators as they are, categorical ones in
//! treatment coding against a stated reference level.

use crate::benchmark::Prepared;
use crate::error::{CellProblem, Error, Result};
use crate::sheet::{Role, StudyRecord, parse_number};
use nalgebra::DMatrix;
use std::collections::BTreeMap;

/// How a moderator is to be treated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModeratorKind {
    /// Numeric when every value is a number, categorical when none is.
    Auto,
    /// Categorical whatever its values look like (e.g. numeric codes).
    Categorical,
}

/// A moderator requested by the user.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ModeratorSpec {
    /// Column name (an extra column, or a numeric standard column: n, items, sd,
    /// scale_min, scale_max).
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
    /// Studies left out because a moderator value is missing.
    pub excluded: Vec<ExcludedRow>,
}

impl Design {
    /// The effects and variances of the studies in the model.
    pub fn effects(&self, y: &[f64], v: &[f64]) -> (Vec<f64>, Vec<f64>) {
        self.used.iter().map(|&i| (y[i], v[i])).unzip()
    }

    /// The design row for given moderator values (`name` → value as text).
    pub fn row_for(
        &self,
        values: &BTreeMap<String, String>,
        decimal_comma: bool,
    ) -> Result<Vec<f64>> {
        let mut row = vec![0.0; self.x.ncols()];
        row[0] = 1.0;
        let mut missing = Vec::new();
        for m in &self.moderators {
            let Some(text) = values.get(m.name()) else {
                missing.push(m.name().to_string());
                continue;
            };
            match m {
                Moderator::Numeric { name, column } => {
                    row[*column] = parse_number(text, decimal_comma).map_err(|e| {
                        Error::InvalidOption(format!("the value given for moderator {name}: {e}"))
                    })?;
                }
                Moderator::Categorical {
                    name,
                    reference,
                    levels,
                    ..
                } => {
                    let t = text.trim();
                    if t != reference {
                        let Some((_, col)) = levels.iter().find(|(l, _)| l == t) else {
                            let mut all = vec![reference.clone()];
                            all.extend(levels.iter().map(|(l, _)| l.clone()));
                            return Err(Error::InvalidOption(format!(
                                "the level {t} given for moderator {name}: no study in the model has this \
                                 level, so the model says nothing about it (levels: {})",
                                all.join(", ")
                            )));
                        };
                        row[*col] = 1.0;
                    }
                }
            }
        }
        if !missing.is_empty() {
            return Err(Error::InvalidOption(format!(
                "give the new study's value of every moderator in the model with --at NAME=VALUE; \
                 missing: {}",
                missing.join(", ")
            )));
        }
        if let Some(extra) = values
            .keys()
            .find(|k| !self.moderators.iter().any(|m| m.name() == k.as_str()))
        {
            return Err(Error::InvalidOption(format!(
                "--at {extra}=…: {extra} is not a moderator of the model (add it with --moderator \
                 {extra}, or leave it out)"
            )));
        }
        Ok(row)
    }
}

/// The standard columns that can serve as numeric moderators.
const NUMERIC_ROLES: [Role; 5] = [
    Role::N,
    Role::Items,
    Role::Sd,
    Role::ScaleMin,
    Role::ScaleMax,
];

/// A moderator's value in one study, as text, or `None` when missing.
fn value_of(p: &Prepared, rec: &StudyRecord, name: &str) -> Result<Option<String>> {
    if let Some(i) = p
        .extra_columns
        .iter()
        .position(|c| c.eq_ignore_ascii_case(name))
    {
        return Ok(rec.extra[i].clone());
    }
    for role in NUMERIC_ROLES {
        let header = p.columns.get(&role).map(String::as_str);
        if role.name().eq_ignore_ascii_case(name)
            || header.is_some_and(|h| h.eq_ignore_ascii_case(name))
        {
            if role == Role::Sd {
                let first = p.records.first().and_then(|r| r.sd_metric);
                if first.is_none() || p.records.iter().any(|r| r.sd_metric != first) {
                    return Err(Error::InvalidOption(format!(
                        "--moderator {name}: the sheet's SDs are not all on one metric (sd_metric \
                         missing or mixed sum and mean), so they cannot be compared as they \
                         are; use --score-spread, which puts them on one metric"
                    )));
                }
            }
            let v = match role {
                Role::N => rec.n.map(|x| x as f64),
                Role::Items => rec.items.map(f64::from),
                Role::Sd => rec.sd,
                Role::ScaleMin => rec.scale_min,
                Role::ScaleMax => rec.scale_max,
                _ => None,
            };
            return Ok(v.map(|x| x.to_string()));
        }
    }
    let mut available: Vec<String> = p.extra_columns.clone();
    available.extend(
        NUMERIC_ROLES
            .iter()
            .filter(|r| p.columns.contains_key(r))
            .map(|r| r.name().to_string()),
    );
    Err(Error::InvalidOption(format!(
        "{name}: the sheet has no such column (columns available as moderators: {})",
        if available.is_empty() {
            "none".to_string()
        } else {
            available.join(", ")
        }
    )))
}

/// A column's values over the prepared studies (`None` where missing); an error names the
/// available columns when there is no such column.
pub fn column_values(p: &Prepared, name: &str) -> Result<Vec<Option<String>>> {
    p.records
        .iter()
        .map(|r| value_of(p, r, name).map(|v| v.map(|s| s.trim().to_string())))
        .collect()
}

/// Build the design for the given moderators over the prepared studies. Studies with a
/// missing moderator value are left out and listed; a numeric column with a few text
/// values, a constant moderator, a singular design or too few studies are errors.
pub fn build_design(p: &Prepared, specs: &[ModeratorSpec]) -> Result<Design> {
    let mut seen: Vec<String> = Vec::new();
    for s in specs {
        if seen.iter().any(|n| n.eq_ignore_ascii_case(&s.name)) {
            return Err(Error::InvalidOption(format!(
                "--moderator {} is given twice",
                s.name
            )));
        }
        seen.push(s.name.clone());
    }
    // Values, and which rows lack one.
    let mut values: Vec<Vec<Option<String>>> = Vec::with_capacity(specs.len());
    for s in specs {
        let col: Result<Vec<Option<String>>> =
            p.records.iter().map(|r| value_of(p, r, &s.name)).collect();
        values.push(col?);
    }
    let mut used = Vec::new();
    let mut excluded = Vec::new();
    for (i, rec) in p.records.iter().enumerate() {
        let reasons: Vec<String> = specs
            .iter()
            .zip(&values)
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
    let decimal_comma = p.delimiter != b',';

    let mut columns: Vec<Vec<f64>> = vec![vec![1.0; used.len()]];
    let mut names = vec!["intercept".to_string()];
    let mut moderators = Vec::new();
    let mut problems = Vec::new();
    for (s, col) in specs.iter().zip(&values) {
        let cells: Vec<(usize, &str)> = used
            .iter()
            .map(|&i| {
                (
                    p.records[i].row,
                    col[i].as_deref().expect("used rows have values"),
                )
            })
            .collect();
        let parsed: Vec<std::result::Result<f64, String>> = cells
            .iter()
            .map(|(_, t)| parse_number(t, decimal_comma))
            .collect();
        let n_numeric = parsed.iter().filter(|r| r.is_ok()).count();
        let numeric =
            s.kind == ModeratorKind::Auto && n_numeric * 2 >= cells.len() && !cells.is_empty();
        if numeric {
            if n_numeric < cells.len() {
                for ((row, _), r) in cells.iter().zip(&parsed) {
                    if let Err(e) = r {
                        problems.push(CellProblem::cell(
                            *row,
                            s.name.clone(),
                            format!(
                                "{e}, while most values of this moderator are numbers; mark a \
                                 missing value empty, NA or ., or pass --categorical {} to treat \
                                 every value as a category",
                                s.name
                            ),
                        ));
                    }
                }
                continue;
            }
            if s.reference.is_some() {
                return Err(Error::InvalidOption(format!(
                    "--reference {}=…: {} is numeric, so it has no reference level (pass \
                     --categorical {} to treat it as categories)",
                    s.name, s.name, s.name
                )));
            }
            let xs: Vec<f64> = parsed.into_iter().map(|r| r.expect("checked")).collect();
            if xs.iter().all(|x| *x == xs[0]) && !xs.is_empty() {
                return Err(Error::CannotAnalyse(format!(
                    "moderator {} takes the same value ({}) in every study of the model, so it \
                     cannot explain differences between them",
                    s.name, xs[0]
                )));
            }
            moderators.push(Moderator::Numeric {
                name: s.name.clone(),
                column: columns.len(),
            });
            names.push(s.name.clone());
            columns.push(xs);
        } else {
            let mut order: Vec<String> = Vec::new();
            let mut counts: BTreeMap<String, usize> = BTreeMap::new();
            for (_, t) in &cells {
                let t = t.trim().to_string();
                if !order.contains(&t) {
                    order.push(t.clone());
                }
                *counts.entry(t).or_insert(0) += 1;
            }
            if order.len() < 2 {
                return Err(Error::CannotAnalyse(format!(
                    "moderator {} has only one level ({}) among the studies of the model, so it \
                     cannot explain differences between them",
                    s.name,
                    order.first().map(String::as_str).unwrap_or("none")
                )));
            }
            let reference = match &s.reference {
                Some(r) => {
                    let r = r.trim().to_string();
                    if !counts.contains_key(&r) {
                        return Err(Error::InvalidOption(format!(
                            "--reference {}={r}: no study in the model has this level (levels: {})",
                            s.name,
                            order.join(", ")
                        )));
                    }
                    r
                }
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
            let mut levels = Vec::new();
            for level in order.iter().filter(|l| **l != reference) {
                let dummy: Vec<f64> = cells
                    .iter()
                    .map(|(_, t)| if t.trim() == level { 1.0 } else { 0.0 })
                    .collect();
                levels.push((level.clone(), columns.len()));
                names.push(format!("{}={level}", s.name));
                columns.push(dummy);
            }
            moderators.push(Moderator::Categorical {
                name: s.name.clone(),
                reference,
                levels,
                counts,
            });
        }
    }
    if !problems.is_empty() {
        return Err(Error::InvalidSheet {
            file: p.file.clone(),
            problems,
        });
    }
    let k = used.len();
    let n_coef = columns.len();
    if k <= n_coef + 1 {
        return Err(Error::CannotAnalyse(format!(
            "{k} studies cannot support a model with {n_coef} coefficients (intercept included): \
             at least {} are needed, so that the residual heterogeneity keeps two degrees of \
             freedom{}",
            n_coef + 2,
            if excluded.is_empty() {
                String::new()
            } else {
                format!(
                    "; {} row(s) were left out for missing moderator values",
                    excluded.len()
                )
            }
        )));
    }
    let x = DMatrix::from_fn(k, n_coef, |i, j| columns[j][i]);
    check_rank(&x, &names)?;
    Ok(Design {
        used,
        x,
        names,
        moderators,
        excluded,
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
    Err(Error::CannotAnalyse(format!(
        "the moderators are collinear: {} are linearly dependent over the studies of the model, \
         so their effects cannot be told apart; drop one of them",
        involved.join(", ")
    )))
}
