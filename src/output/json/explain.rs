//! `relyard explain --json`: the moderators' model, score spread, subgroups, influence.

use super::pool::DependenceRecord;
use super::{
    DocumentHead, InputSummary, ModelUsed, ReliabilityRecord, SkippedRecord, Tau2FitRecord,
    TestRecord, skipped, warnings,
};
use crate::analysis::Explained;
use crate::benchmark::Prepared;
use crate::metareg::Moderator;
use crate::metareg::influence::StudyInfluence;
use crate::metareg::spread::ScoreSpread;
use crate::metareg::subgroups::{Group, Subgroups};
use crate::pool::ModelFit;
use crate::setting::SettingNames;
use crate::warning::WarningRecord;
use serde::Serialize;

/// A coefficient of a model in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct CoefficientRecord {
    /// Column name (`intercept`, a moderator, or `moderator=level`).
    pub name: String,
    /// Estimate (transformed scale).
    pub estimate: f64,
    /// Standard error.
    pub se: f64,
    /// Confidence interval.
    pub ci: [f64; 2],
    /// Two-sided p value.
    pub p: f64,
    /// z or t statistic.
    pub statistic: f64,
    /// Permutation p value (null for the intercept or without permutations).
    pub permutation_p: Option<f64>,
    /// CR2 standard error (only when the rows share samples or clusters).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub robust_se: Option<f64>,
    /// Its Satterthwaite df.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub robust_df: Option<f64>,
    /// The CR2 confidence interval.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub robust_ci: Option<[f64; 2]>,
    /// The CR2 p value.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub robust_p: Option<f64>,
}

/// The approximate Hotelling test of the moderators.
#[derive(Debug, Clone, Serialize)]
pub struct RobustOmnibusRecord {
    /// F statistic.
    pub statistic: f64,
    /// Numerator df q.
    pub df_num: f64,
    /// Denominator df η − q + 1.
    pub df_den: f64,
    /// p value.
    pub p: f64,
}

/// The omnibus test in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct OmnibusRecord {
    /// F or χ² statistic.
    pub statistic: f64,
    /// Numerator df (number of moderator coefficients).
    pub df: f64,
    /// Denominator df for F; null for χ².
    pub df2: Option<f64>,
    /// p value.
    pub p: f64,
    /// "F" or "chi2".
    pub distribution: &'static str,
    /// Permutation p value.
    pub permutation_p: Option<f64>,
}

/// A moderator in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct ModeratorRecord {
    /// Column name.
    pub name: String,
    /// "numeric" or "categorical".
    pub kind: &'static str,
    /// Reference level of a categorical moderator.
    pub reference: Option<String>,
    /// The value a numeric moderator is measured from (its mean when centred, else 0).
    pub centre: Option<f64>,
    /// Levels with their study counts.
    pub levels: Vec<LevelRecord>,
}

/// A level of a categorical moderator.
#[derive(Debug, Clone, Serialize)]
pub struct LevelRecord {
    /// Level.
    pub level: String,
    /// Studies.
    pub k: usize,
}

/// A row left out of a model.
#[derive(Debug, Clone, Serialize)]
pub struct ExcludedRecord {
    /// Spreadsheet row.
    pub row: usize,
    /// Why.
    pub reasons: Vec<String>,
}

fn excluded(rows: &[crate::metareg::ExcludedRow]) -> Vec<ExcludedRecord> {
    rows.iter()
        .map(|e| ExcludedRecord {
            row: e.row,
            reasons: e.reasons.clone(),
        })
        .collect()
}

/// The score-spread test in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct SpreadRecord {
    /// Always "bonett".
    pub scale: &'static str,
    /// SD metric.
    pub metric: &'static str,
    /// Studies in the model.
    pub k: usize,
    /// Slope of ln(SD).
    pub slope: f64,
    /// Its SE.
    pub se: f64,
    /// Its CI.
    pub ci: [f64; 2],
    /// p of slope = 0.
    pub p_zero: f64,
    /// p of slope = −2.
    pub p_minus_two: f64,
    /// Percent of τ² explained by ln(SD) (null when τ² without it is 0).
    pub tau2_share: Option<f64>,
    /// Residual τ² with ln(SD).
    pub tau2: f64,
    /// τ² without ln(SD).
    pub tau2_without: f64,
    /// Machine-readable reading.
    pub reading: crate::metareg::spread::SpreadReading,
    /// The reading in words.
    pub reading_text: &'static str,
    /// Median SD on the metric.
    pub typical_sd: f64,
    /// Reliability of ln(SD) across studies (the slope's attenuation factor).
    pub sd_reliability: Option<f64>,
    /// All coefficients of the model.
    pub coefficients: Vec<CoefficientRecord>,
    /// Rows left out.
    pub excluded_rows: Vec<ExcludedRecord>,
}

/// A subgroup in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct GroupRecord {
    /// Level.
    pub level: String,
    /// Studies.
    pub k: usize,
    /// Spreadsheet rows.
    pub rows: Vec<usize>,
    /// Pooled value (transformed scale).
    pub estimate: Option<f64>,
    /// CI (transformed).
    pub ci: Option<[f64; 2]>,
    /// PI (transformed).
    pub pi: Option<[f64; 2]>,
    /// τ².
    pub tau2: Option<f64>,
    /// I².
    pub i2: Option<f64>,
    /// Coefficient-scale results.
    pub reliability: Option<ReliabilityRecord>,
    /// Why the group was not pooled.
    pub note: Option<String>,
}

/// Subgroups in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct SubgroupsRecord {
    /// The column.
    pub column: String,
    /// Groups.
    pub groups: Vec<GroupRecord>,
    /// Q_between (separate τ²): {statistic, df, p}.
    pub q_between: Option<TestRecord>,
    /// Moderator test with one τ² for all.
    pub moderator_test: Option<OmnibusRecord>,
    /// Rows without a value.
    pub excluded_rows: Vec<ExcludedRecord>,
}

/// Influence of one study in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct InfluenceRecord {
    /// Spreadsheet row.
    pub row: usize,
    /// Label.
    pub study: String,
    /// Residual.
    pub residual: f64,
    /// Externally studentized residual.
    pub rstudent: Option<f64>,
    /// Cook's distance.
    pub cooks_distance: Option<f64>,
    /// Coefficients without the study.
    pub without_coefficients: Option<Vec<f64>>,
    /// τ² without the study.
    pub without_tau2: Option<f64>,
    /// I² without the study.
    pub without_i2: Option<f64>,
    /// Flagged as outlying.
    pub outlier: bool,
    /// Flagged as influential.
    pub influential: bool,
}

/// `relyard explain --json`.
#[derive(Debug, Clone, Serialize)]
pub struct ExplainDocument {
    /// The header shared by every document.
    #[serde(flatten)]
    pub head: DocumentHead,
    /// Studies in the main model.
    pub k: usize,
    /// Where numeric moderators are measured from: "means" (the intercept is the
    /// expected value at their means) or "none".
    pub centring: &'static str,
    /// Moderators.
    pub moderators: Vec<ModeratorRecord>,
    /// Coefficients of the main model.
    pub coefficients: Vec<CoefficientRecord>,
    /// Residual τ².
    pub tau2: f64,
    /// Its Q-profile CI.
    pub tau2_ci: Option<[f64; 2]>,
    /// How τ² was reached.
    pub tau2_fit: Tau2FitRecord,
    /// τ² of the intercept-only model on the same studies.
    pub tau2_intercept_only: f64,
    /// R² in percent (null when undefined).
    pub r2: Option<f64>,
    /// Residual I².
    pub i2: f64,
    /// Residual H².
    pub h2: f64,
    /// Omnibus test of the moderators (null without moderators).
    pub omnibus: Option<OmnibusRecord>,
    /// Residual heterogeneity Q_E.
    pub qe: f64,
    /// Its df, k − p.
    pub qe_df: f64,
    /// Its p.
    pub qe_p: f64,
    /// Permutations run: {count, seed, failed}.
    pub permutations: Option<PermutationRecord>,
    /// Rows left out of the main model.
    pub excluded_rows: Vec<ExcludedRecord>,
    /// Rows left out (invalid rows skipped at the user's request).
    pub skipped_rows: Vec<SkippedRecord>,
    /// The score-spread test.
    pub score_spread: Option<SpreadRecord>,
    /// Subgroup benchmarks.
    pub subgroups: Option<SubgroupsRecord>,
    /// Influence diagnostics.
    pub influence: Option<Vec<InfluenceRecord>>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
    /// How rows that share a sample or a cluster were modelled (only when they do).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dependence: Option<DependenceRecord>,
    /// "robust" or "model" (only when the rows share samples or clusters).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub inference: Option<&'static str>,
    /// The approximate Hotelling test of the moderators (only when the rows share samples
    /// or clusters and there are moderators; null when it cannot be formed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub robust_omnibus: Option<Option<RobustOmnibusRecord>>,
}

/// The permutation run in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct PermutationRecord {
    /// Permutations.
    pub count: usize,
    /// Seed.
    pub seed: u64,
    /// Refits that failed.
    pub failed: usize,
}

fn coefficients(
    names: &[String],
    fit: &ModelFit,
    perm: Option<&[Option<f64>]>,
) -> Vec<CoefficientRecord> {
    names
        .iter()
        .zip(&fit.coefficients)
        .enumerate()
        .map(|(j, (n, c))| CoefficientRecord {
            name: n.clone(),
            estimate: c.estimate,
            se: c.se,
            ci: [c.ci.lower, c.ci.upper],
            p: c.p,
            statistic: c.statistic,
            permutation_p: perm.and_then(|p| p[j]),
            robust_se: None,
            robust_df: None,
            robust_ci: None,
            robust_p: None,
        })
        .collect()
}

fn omnibus_record(t: crate::metareg::OmnibusTest, perm: Option<f64>) -> OmnibusRecord {
    OmnibusRecord {
        statistic: t.statistic,
        df: t.df,
        df2: t.df2,
        p: t.p,
        distribution: if t.df2.is_some() { "F" } else { "chi2" },
        permutation_p: perm,
    }
}

impl ExplainDocument {
    /// Build the document.
    pub fn new(p: &Prepared, e: &Explained, names: &dyn SettingNames) -> Self {
        let ex = &e.main;
        let fit = &ex.fit;
        let perm = e.permutation.as_ref().map(|r| r.coefficient_p.as_slice());
        ExplainDocument {
            head: DocumentHead::new(
                "explain",
                InputSummary::of(p),
                ModelUsed {
                    transform: p.transform,
                    model: fit.options.model,
                    ci: fit.options.ci,
                    level: fit.options.level,
                },
                "coefficients, tau2 and qe are on the transformed scale named by transform; \
                 score_spread is always on the Bonett scale",
            ),
            k: fit.k,
            centring: ex.design.centring.name(),
            moderators: ex.design.moderators.iter().map(moderator_record).collect(),
            coefficients: with_robust(coefficients(&ex.design.names, fit, perm), ex),
            tau2: fit.tau2.tau2,
            tau2_ci: fit.tau2_ci.map(|c| [c.lower, c.upper]),
            tau2_fit: Tau2FitRecord::from(&fit.tau2),
            tau2_intercept_only: ex.tau2_intercept_only,
            r2: ex.r2,
            i2: fit.i2,
            h2: fit.h2,
            omnibus: ex
                .omnibus
                .map(|t| omnibus_record(t, e.permutation.as_ref().and_then(|r| r.omnibus_p))),
            qe: fit.heterogeneity.q,
            qe_df: fit.heterogeneity.df,
            qe_p: fit.heterogeneity.p,
            permutations: e.permutation.as_ref().map(|r| PermutationRecord {
                count: r.permutations,
                seed: r.seed,
                failed: r.failed,
            }),
            excluded_rows: excluded(&ex.design.excluded),
            skipped_rows: skipped(&p.skipped, names),
            score_spread: e.spread.as_ref().map(spread_record),
            subgroups: e.subgroups.as_ref().map(|g| subgroups_record(g, names)),
            influence: e.influence.as_ref().map(|inf| influence_records(p, e, inf)),
            warnings: warnings(&e.warnings, names),
            dependence: ex
                .dependent
                .as_ref()
                .map(|d| DependenceRecord::from(&d.summary.dependence)),
            inference: ex.dependent.as_ref().map(|d| d.summary.inference.name()),
            robust_omnibus: ex
                .dependent
                .as_ref()
                .filter(|_| ex.design.x.ncols() > 1)
                .map(|d| {
                    d.robust_omnibus.map(|h| RobustOmnibusRecord {
                        statistic: h.statistic,
                        df_num: h.df_num,
                        df_den: h.df_den,
                        p: h.p,
                    })
                }),
        }
    }
}

/// The coefficients with their cluster-robust tests, when the model has them.
fn with_robust(
    mut records: Vec<CoefficientRecord>,
    ex: &crate::metareg::Explanation,
) -> Vec<CoefficientRecord> {
    if let Some(d) = &ex.dependent {
        for (r, c) in records.iter_mut().zip(&d.summary.robust) {
            r.robust_se = Some(c.se);
            r.robust_df = c.df;
            r.robust_ci = Some([c.ci.lower, c.ci.upper]);
            r.robust_p = Some(c.p);
        }
    }
    records
}

/// A moderator as the model used it: numeric with its centre, or categorical with its
/// reference and levels.
fn moderator_record(m: &Moderator) -> ModeratorRecord {
    match m {
        Moderator::Numeric { name, centre, .. } => ModeratorRecord {
            name: name.clone(),
            kind: "numeric",
            reference: None,
            centre: Some(*centre),
            levels: Vec::new(),
        },
        Moderator::Categorical {
            name,
            reference,
            counts,
            ..
        } => ModeratorRecord {
            name: name.clone(),
            kind: "categorical",
            reference: Some(reference.clone()),
            centre: None,
            levels: counts
                .iter()
                .map(|(l, k)| LevelRecord {
                    level: l.clone(),
                    k: *k,
                })
                .collect(),
        },
    }
}

/// The score-variance test.
fn spread_record(s: &ScoreSpread) -> SpreadRecord {
    SpreadRecord {
        scale: "bonett",
        metric: s.metric.name(),
        k: s.rows.len(),
        slope: s.slope.estimate,
        se: s.slope.se,
        ci: [s.slope.ci.lower, s.slope.ci.upper],
        p_zero: s.p_zero,
        p_minus_two: s.p_minus_two,
        tau2_share: s.tau2_share,
        tau2: s.fit.tau2.tau2,
        tau2_without: s.tau2_without,
        reading: s.reading,
        reading_text: s.reading.sentence(),
        typical_sd: s.typical_sd,
        sd_reliability: s.sd_reliability,
        coefficients: coefficients(&s.names, &s.fit, None),
        excluded_rows: excluded(&s.excluded),
    }
}

/// The benchmark per group and the tests of their difference.
fn subgroups_record(g: &Subgroups, names: &dyn SettingNames) -> SubgroupsRecord {
    SubgroupsRecord {
        column: g.column.clone(),
        groups: g
            .groups
            .iter()
            .map(|grp| group_record(grp, names))
            .collect(),
        q_between: g.between.map(|b| TestRecord {
            statistic: b.q,
            df: Some(b.df),
            p: b.p,
        }),
        moderator_test: g.moderator_test.map(|t| omnibus_record(t, None)),
        excluded_rows: excluded(&g.excluded),
    }
}

/// One group's benchmark, or why it has none.
fn group_record(grp: &Group, names: &dyn SettingNames) -> GroupRecord {
    match &grp.result {
        Ok(b) => GroupRecord {
            level: grp.level.clone(),
            k: b.pool.k,
            rows: grp.rows.clone(),
            estimate: Some(b.pool.estimate),
            ci: Some([b.pool.ci.lower, b.pool.ci.upper]),
            pi: b.pool.prediction.interval().map(|i| [i.lower, i.upper]),
            tau2: Some(b.pool.tau2.tau2),
            i2: Some(b.pool.i2),
            reliability: b.coefficient.as_ref().map(ReliabilityRecord::from),
            note: None,
        },
        Err(why) => GroupRecord {
            level: grp.level.clone(),
            k: grp.rows.len(),
            rows: grp.rows.clone(),
            estimate: None,
            ci: None,
            pi: None,
            tau2: None,
            i2: None,
            reliability: None,
            note: Some(why.render(names)),
        },
    }
}

/// Each study left out in turn, named by its row.
fn influence_records(p: &Prepared, e: &Explained, inf: &[StudyInfluence]) -> Vec<InfluenceRecord> {
    inf.iter()
        .map(|s| {
            let rec = &p.records[e.main.design.used[s.index]];
            InfluenceRecord {
                row: rec.row,
                study: rec.label.clone(),
                residual: s.residual,
                rstudent: s.rstudent,
                cooks_distance: s.cooks_distance,
                without_coefficients: s.without.as_ref().map(|w| w.beta.clone()),
                without_tau2: s.without.as_ref().map(|w| w.tau2),
                without_i2: s.without.as_ref().map(|w| w.i2),
                outlier: s.outlier,
                influential: s.influential,
            }
        })
        .collect()
}
