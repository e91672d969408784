//! `relyard pool --json`: the benchmark.

use super::{
    DocumentHead, InputSummary, ModelUsed, ReliabilityRecord, SkippedRecord, Tau2FitRecord,
    TestRecord, pair, skipped, warnings,
};
use crate::benchmark::Benchmark;
use crate::output::INDIVIDUAL_DECISIONS_CAUTION;
use crate::output::prose::Paragraph;
use crate::pool::dependence::DependenceResult;
use crate::pool::{Interval, Prediction};
use crate::setting::SettingNames;
use crate::warning::WarningRecord;
use serde::Serialize;

/// One pooled study.
#[derive(Debug, Clone, Serialize)]
pub struct StudyRecordOut {
    /// Spreadsheet row.
    pub row: usize,
    /// Label.
    pub study: String,
    /// Coefficient type.
    pub coef_type: &'static str,
    /// Reported coefficient.
    pub coef: f64,
    /// Sample size.
    pub n: Option<u64>,
    /// Items.
    pub items: Option<u32>,
    /// Transformed value.
    pub effect: f64,
    /// Sampling variance on the transformed scale.
    pub variance: f64,
    /// Weight in percent.
    pub weight_percent: f64,
}

/// An interval as [lower, upper].
fn ends(i: Interval) -> [f64; 2] {
    [i.lower, i.upper]
}

/// The likelihood-ratio test of no variance between clusters.
#[derive(Debug, Clone, Serialize)]
pub struct LrtRecord {
    /// 2 (ℓ_full − ℓ_reduced).
    pub statistic: f64,
    /// Degrees of freedom of the χ² part of the 50:50 mixture.
    pub df: f64,
    /// P value from the mixture.
    pub p: f64,
}

/// The results at one assumed sampling correlation.
#[derive(Debug, Clone, Serialize)]
pub struct SensitivityRecord {
    /// The sampling correlation.
    pub sampling_correlation: f64,
    /// Pooled value (transformed scale).
    pub estimate: f64,
    /// Its CI.
    pub ci: [f64; 2],
    /// The prediction interval.
    pub pi: Option<[f64; 2]>,
}

/// How rows that share a sample or a cluster were pooled.
#[derive(Debug, Clone, Serialize)]
pub struct DependenceRecord {
    /// "multilevel", "aggregate" or "ignore".
    pub method: &'static str,
    /// The assumed sampling correlation.
    pub sampling_correlation: f64,
    /// Rows pooled.
    pub k_rows: usize,
    /// Samples among them.
    pub k_samples: usize,
    /// Clusters among them.
    pub k_clusters: usize,
    /// Variance between clusters.
    pub tau2_cluster: Option<f64>,
    /// Variance within clusters.
    pub tau2_within: Option<f64>,
    /// Its profile-likelihood CI.
    pub tau2_cluster_ci: Option<[f64; 2]>,
    /// Its profile-likelihood CI.
    pub tau2_within_ci: Option<[f64; 2]>,
    /// Share of variance between clusters, percent.
    pub i2_cluster: Option<f64>,
    /// Share of variance within clusters, percent.
    pub i2_within: Option<f64>,
    /// Test of no variance between clusters.
    pub lrt: Option<LrtRecord>,
    /// Results at sampling correlations 0, 0.3, 0.6 and 0.9.
    pub sensitivity: Vec<SensitivityRecord>,
}

impl From<&DependenceResult> for DependenceRecord {
    fn from(d: &DependenceResult) -> Self {
        DependenceRecord {
            method: d.method.name(),
            sampling_correlation: d.sampling_correlation,
            k_rows: d.k_rows,
            k_samples: d.k_samples,
            k_clusters: d.k_clusters,
            tau2_cluster: d.tau2_cluster,
            tau2_within: d.tau2_within,
            tau2_cluster_ci: d.tau2_cluster_ci.map(|c| [c.lower, c.upper]),
            tau2_within_ci: d.tau2_within_ci.map(|c| [c.lower, c.upper]),
            i2_cluster: d.i2_cluster,
            i2_within: d.i2_within,
            lrt: d.lrt.map(|t| LrtRecord {
                statistic: t.statistic,
                df: t.df,
                p: t.p,
            }),
            sensitivity: d
                .sensitivity
                .iter()
                .map(|s| SensitivityRecord {
                    sampling_correlation: s.sampling_correlation,
                    estimate: s.estimate,
                    ci: ends(s.ci),
                    pi: s.pi.map(ends),
                })
                .collect(),
        }
    }
}

/// Cluster-robust inference for the pooled value.
#[derive(Debug, Clone, Serialize)]
pub struct RobustRecord {
    /// CR2 standard error.
    pub se: f64,
    /// Satterthwaite degrees of freedom.
    pub df: f64,
    /// Its CI.
    pub ci: [f64; 2],
    /// Two-sided p value of the test against 0.
    pub p: f64,
}

/// `relyard pool --json`.
#[derive(Debug, Clone, Serialize)]
pub struct PoolDocument {
    /// The header shared by every document.
    #[serde(flatten)]
    pub head: DocumentHead,
    /// Number of studies pooled.
    pub k: usize,
    /// The respondents of the pooled studies, each sample counted once.
    pub n_total: u64,
    /// The same count under the name of the dependent-coefficients layout.
    pub total_n: u64,
    /// Pooled studies without a sample size.
    pub n_missing: usize,
    /// Pooled value (transformed scale).
    pub estimate: f64,
    /// Its standard error under the CI method.
    pub se: f64,
    /// Confidence interval [lower, upper].
    pub ci: [f64; 2],
    /// Degrees of freedom of the CI's t quantile (null for Wald).
    pub ci_df: Option<f64>,
    /// Test of the pooled value against zero on the transformed scale.
    pub test: TestRecord,
    /// Model-based (Wald) standard error.
    pub se_wald: f64,
    /// Knapp–Hartung scale factor (null for Wald).
    pub kh_scale: Option<f64>,
    /// Between-study variance.
    pub tau2: f64,
    /// Q-profile CI for τ² (null under the common-effect model).
    pub tau2_ci: Option<[f64; 2]>,
    /// τ = sqrt(τ²).
    pub tau: f64,
    /// How τ² was reached.
    pub tau2_fit: Tau2FitRecord,
    /// I² in percent.
    pub i2: f64,
    /// I² at the ends of the τ² CI (percent).
    pub i2_ci: Option<[f64; 2]>,
    /// H².
    pub h2: f64,
    /// Typical within-study variance s² used by I² and H².
    pub typical_within_variance: f64,
    /// Cochran's Q.
    pub q: f64,
    /// Its degrees of freedom.
    pub q_df: f64,
    /// Its p value.
    pub q_p: f64,
    /// Prediction interval (null when k = 2).
    pub pi: Option<[f64; 2]>,
    /// Degrees of freedom of the PI's t quantile.
    pub pi_df: Option<f64>,
    /// When τ² is estimated at 0: the PI at the upper end of τ²'s CI (else null).
    pub pi_at_tau2_upper: Option<[f64; 2]>,
    /// The results on the coefficient scale (null for --transform none).
    pub reliability: Option<ReliabilityRecord>,
    /// Every pooled study.
    pub studies: Vec<StudyRecordOut>,
    /// Rows left out (invalid rows skipped at the user's request).
    pub skipped_rows: Vec<SkippedRecord>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
    /// The adaptable paragraph.
    pub paragraph: String,
    /// References cited by the paragraph.
    pub references: Vec<String>,
    /// The caution about decisions on individuals.
    pub caution: &'static str,
    /// How rows that share a sample or cluster were pooled (only when the sheet has a
    /// sample or cluster column).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dependence: Option<DependenceRecord>,
    /// "robust" or "model" for a multilevel fit (only when the sheet has a sample or
    /// cluster column; null unless the multilevel model was fitted).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub inference: Option<Option<&'static str>>,
    /// Cluster-robust inference for the pooled value (only with a multilevel fit).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub robust: Option<RobustRecord>,
}

impl PoolDocument {
    /// Build the document from a benchmark and its paragraph.
    pub fn new(b: &Benchmark, paragraph: &Paragraph, names: &dyn SettingNames) -> Self {
        let p = &b.pool;
        PoolDocument {
            head: DocumentHead::new(
                "pool",
                InputSummary::new(&b.source, b.studies.len(), b.skipped.len()),
                ModelUsed {
                    transform: b.transform,
                    model: p.options.model,
                    ci: p.options.ci,
                    level: p.options.level,
                },
                "estimate, se, ci, test, tau2, tau2_ci, tau, q and pi are on the transformed \
                 scale named by transform; reliability holds the same results on the \
                 coefficient's own scale",
            ),
            k: p.k,
            n_total: b.n_total,
            total_n: b.n_total,
            n_missing: b.n_missing,
            estimate: p.estimate,
            se: p.se,
            ci: pair(p.ci),
            ci_df: p.test.df,
            test: TestRecord {
                statistic: p.test.statistic,
                df: p.test.df,
                p: p.test.p,
            },
            se_wald: p.se_wald,
            kh_scale: p.kh_scale,
            tau2: p.tau2.tau2,
            tau2_ci: p.tau2_ci.map(|c| [c.lower, c.upper]),
            tau: p.tau2.tau2.sqrt(),
            tau2_fit: Tau2FitRecord::from(&p.tau2),
            i2: p.i2,
            i2_ci: p.i2_ci.map(pair),
            h2: p.h2,
            typical_within_variance: p.heterogeneity.typical_variance,
            q: p.heterogeneity.q,
            q_df: p.heterogeneity.df,
            q_p: p.heterogeneity.p,
            pi: p.prediction.interval().map(pair),
            pi_df: match p.prediction {
                Prediction::Available { df, .. } => Some(df),
                Prediction::TooFewStudies | Prediction::CommonEffect => None,
            },
            pi_at_tau2_upper: p.prediction_at_tau2_upper.map(pair),
            reliability: b.coefficient.as_ref().map(ReliabilityRecord::from),
            studies: b
                .studies
                .iter()
                .map(|s| StudyRecordOut {
                    row: s.record.row,
                    study: s.record.label.clone(),
                    coef_type: s.record.coef_type.name(),
                    coef: s.record.coef,
                    n: s.record.n,
                    items: s.record.items,
                    effect: s.effect,
                    variance: s.variance,
                    weight_percent: s.weight_percent,
                })
                .collect(),
            skipped_rows: skipped(&b.skipped, names),
            warnings: warnings(&b.warnings, names),
            paragraph: paragraph.text.clone(),
            references: paragraph.citations(),
            caution: INDIVIDUAL_DECISIONS_CAUTION,
            dependence: p.dependence.as_ref().map(DependenceRecord::from),
            inference: p.dependence.as_ref().map(|_| p.inference.map(|i| i.name())),
            robust: p.robust.map(|r| RobustRecord {
                se: r.se,
                df: r.df,
                ci: ends(r.ci),
                p: r.p,
            }),
        }
    }
}
