//! Subgroup benchmarks: one benchmark per level of a column, and tests of the difference
//! between groups.

use super::design::{Centring, ExcludedRow, ModeratorKind, ModeratorSpec, build_design, levels_of};
use super::{OmnibusTest, explain};
use crate::benchmark::{Benchmark, Prepared, from_prepared};
use crate::dist::chi2_sf;
use crate::error::{Error, Result};
use crate::pool::dependence::DependenceOptions;
use crate::pool::{FitOptions, PoolOptions};
use crate::setting::msg;
use crate::setting::{Message, Setting, given};
use crate::warning::Warning;

/// One group.
#[derive(Debug, Clone)]
pub struct Group {
    /// The column's value.
    pub level: String,
    /// Spreadsheet rows in the group.
    pub rows: Vec<usize>,
    /// The group's benchmark, or why there is none.
    pub result: std::result::Result<Box<Benchmark>, Message>,
}

/// The test of the difference between groups from their separate benchmarks.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BetweenGroups {
    /// Q_between = Σ w_g (μ̂_g − μ̄)², w_g = 1/SE_g² (model-based SEs, separate τ² per group).
    pub q: f64,
    /// Groups compared minus 1.
    pub df: f64,
    /// P(χ²(df) > Q).
    pub p: f64,
}

/// Subgroup benchmarks by a column.
#[derive(Debug, Clone)]
pub struct Subgroups {
    /// The column.
    pub column: String,
    /// The groups in order of first appearance.
    pub groups: Vec<Group>,
    /// Rows without a value in the column.
    pub excluded: Vec<ExcludedRow>,
    /// Q_between over the groups with at least two studies (separate τ² per group).
    pub between: Option<BetweenGroups>,
    /// The meta-regression test of the column as a categorical moderator (one τ² for all).
    pub moderator_test: Option<OmnibusTest>,
    /// Why the meta-regression test is missing, when it is.
    pub moderator_test_note: Option<Message>,
    /// Values written more than one way (merged into one level).
    pub warnings: Vec<Warning>,
}

/// A benchmark per level of `column`.
///
/// # References
/// Borenstein, M., Hedges, L. V., Higgins, J. P. T., & Rothstein, H. R. (2009).
/// *Introduction to meta-analysis*, chapter 19. Chichester: Wiley.
pub fn subgroups(
    p: &Prepared,
    column: &str,
    options: &PoolOptions,
    dependence: &DependenceOptions,
) -> Result<Subgroups> {
    // The design of the column as a categorical moderator gives its levels and the rows
    // without a value; it is fitted below for the common-τ² test.
    let spec = ModeratorSpec {
        name: column.to_string(),
        kind: ModeratorKind::Categorical,
        reference: None,
    };
    let raw = super::design::column_values(p, column).map_err(|e| match e {
        Error::InvalidSetting { message, .. } => Error::setting(Setting::Subgroups, message),
        other => other,
    })?;
    let mut excluded = Vec::new();
    let mut cells = Vec::new();
    for (i, v) in raw.iter().enumerate() {
        match v {
            Some(v) => cells.push((p.records[i].row, v.clone())),
            None => excluded.push(ExcludedRow {
                row: p.records[i].row,
                reasons: vec![format!("column {column}: the value is missing")],
            }),
        }
    }
    let mut warnings = Vec::new();
    let mut levels = levels_of(column, &cells, &mut warnings)?.into_iter();
    let values: Vec<Option<String>> = raw
        .iter()
        .map(|v| v.as_ref().and_then(|_| levels.next()))
        .collect();
    let mut order: Vec<String> = Vec::new();
    let mut seen = std::collections::HashSet::new();
    for v in values.iter().flatten() {
        if seen.insert(v.as_str()) {
            order.push(v.clone());
        }
    }
    if order.is_empty() {
        return Err(Error::cannot(msg![
            given(Setting::Subgroups, column),
            ": the column has no values among the usable studies"
        ]));
    }
    let mut pooled: Vec<(f64, f64)> = Vec::new();
    let groups: Vec<Group> = order
        .iter()
        .map(|level| group(p, &values, level, (options, dependence), &mut pooled))
        .collect();
    // What changes how a group's benchmark reads is said with the group named.
    for g in &groups {
        if let Ok(b) = &g.result {
            for w in b.warnings.iter().filter(|w| {
                matches!(
                    w,
                    Warning::RangeBelowZero { .. } | Warning::NotConverged { .. }
                )
            }) {
                warnings.push(Warning::InGroup {
                    column: column.to_string(),
                    level: g.level.clone(),
                    warning: Box::new(w.clone()),
                });
            }
        }
    }
    let fit_options = FitOptions {
        model: options.model,
        ci: options.ci,
        level: options.level,
        tau2_interval: false,
        dependence: *dependence,
    };
    // The test of the groups as one moderator: the multilevel model (its approximate
    // Hotelling test) when the rows share samples or clusters.
    let fit_groups =
        |d: super::Design| match super::dependent::multilevel_grouping(p, &d.used, &fit_options) {
            Some(g) => super::dependent::explain_dependent(p, d, &fit_options, dependence, &g),
            None => explain(p, d, &fit_options),
        };
    let (moderator_test, moderator_test_note) =
        match build_design(p, &[spec], Centring::None).and_then(fit_groups) {
            Ok(ex) => (ex.omnibus, None),
            Err(e) => (None, Some(e.into_message())),
        };
    Ok(Subgroups {
        column: column.to_string(),
        groups,
        excluded,
        between: between_groups(&pooled),
        moderator_test,
        moderator_test_note,
        warnings,
    })
}

/// The group of the studies at `level`, with its benchmark; the pooled estimate and its
/// SE are added to `pooled` when there is one.
fn group(
    p: &Prepared,
    values: &[Option<String>],
    level: &str,
    (options, dependence): (&PoolOptions, &DependenceOptions),
    pooled: &mut Vec<(f64, f64)>,
) -> Group {
    let idx: Vec<usize> = values
        .iter()
        .enumerate()
        .filter(|(_, v)| v.as_deref() == Some(level))
        .map(|(i, _)| i)
        .collect();
    let rows = idx.iter().map(|&i| p.records[i].row).collect();
    let result = if idx.len() < 2 {
        Err(Message::from(format!(
            "a single study (coefficient {}): nothing to pool",
            p.records[idx[0]].coef
        )))
    } else {
        match from_prepared(p.subset(&idx), options, dependence) {
            Ok(b) => {
                pooled.push((b.pool.estimate, b.pool.se_wald));
                Ok(Box::new(b))
            }
            Err(e) => Err(e.into_message()),
        }
    };
    Group {
        level: level.to_string(),
        rows,
        result,
    }
}

/// Q_between over the groups' pooled estimates and SEs (none for fewer than two groups).
fn between_groups(pooled: &[(f64, f64)]) -> Option<BetweenGroups> {
    if pooled.len() < 2 {
        return None;
    }
    let w: Vec<f64> = pooled.iter().map(|(_, se)| 1.0 / (se * se)).collect();
    let sw: f64 = w.iter().sum();
    let mean = pooled.iter().zip(&w).map(|((m, _), w)| w * m).sum::<f64>() / sw;
    let q: f64 = pooled
        .iter()
        .zip(&w)
        .map(|((m, _), w)| w * (m - mean).powi(2))
        .sum();
    let df = (pooled.len() - 1) as f64;
    Some(BetweenGroups {
        q,
        df,
        p: chi2_sf(q, df),
    })
}
