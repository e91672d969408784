//! The JSON documents: serialisable types kept apart from the internal ones. The keys
//! are a documented contract (docs/output-schema.md); change them only with the
//! schema version.

use super::INDIVIDUAL_DECISIONS_CAUTION;
use super::paragraph::Paragraph;
use crate::benchmark::Benchmark;
use crate::pool::{CiMethod, Interval, Model, Termination};
use crate::sheet::delimiter_name;
use crate::transform::{BackInterval, TransformKind};
use crate::warning::{Warning, WarningRecord};
use serde::Serialize;

/// Version of the JSON layout; raised whenever a key changes meaning or disappears.
pub const SCHEMA_VERSION: &str = "1.0";

/// `relyard pool --json`.
#[derive(Debug, Clone, Serialize)]
pub struct PoolDocument {
    /// The header shared by every document.
    #[serde(flatten)]
    pub head: DocumentHead,
    /// Number of studies pooled.
    pub k: usize,
    /// Sum of the sample sizes of the pooled studies that report one.
    pub n_total: u64,
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
    /// Rows left out with --skip-invalid.
    pub skipped_rows: Vec<SkippedRecord>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
    /// The adaptable paragraph.
    pub paragraph: String,
    /// References cited by the paragraph.
    pub references: Vec<String>,
    /// The caution about decisions on individuals.
    pub caution: &'static str,
}

/// The keys every document starts with: layout version, command, input and model.
#[derive(Debug, Clone, Serialize)]
pub struct DocumentHead {
    /// Layout version.
    pub schema_version: &'static str,
    /// The command that produced the document.
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// The input sheet.
    pub input: InputSummary,
    /// Transform name.
    pub transform: &'static str,
    /// The analysis scale as a formula.
    pub transform_formula: &'static str,
    /// Which keys are on which scale.
    pub scales: &'static str,
    /// "random" or "common".
    pub model: &'static str,
    /// τ² estimator name, or "common".
    pub tau2_method: &'static str,
    /// CI method name.
    pub ci_method: &'static str,
    /// Confidence level.
    pub level: f64,
}

impl DocumentHead {
    /// The head of a document.
    pub fn new(
        command: &'static str,
        input: InputSummary,
        transform: TransformKind,
        scales: &'static str,
        model: Model,
        ci: CiMethod,
        level: f64,
    ) -> Self {
        DocumentHead {
            schema_version: SCHEMA_VERSION,
            command,
            relyard_version: env!("CARGO_PKG_VERSION"),
            input,
            transform: transform.name(),
            transform_formula: transform.get().formula(),
            scales,
            model: match model {
                Model::Common => "common",
                Model::Random(_) => "random",
            },
            tau2_method: model.name(),
            ci_method: ci.name(),
            level,
        }
    }
}

impl InputSummary {
    /// The input summary of prepared studies.
    pub fn of(p: &crate::benchmark::Prepared) -> Self {
        InputSummary {
            file: p.file.clone(),
            delimiter: delimiter_name(p.delimiter),
            rows_read: p.rows_read,
            rows_used: p.records.len(),
            rows_skipped: p.skipped.len(),
        }
    }
}

/// The input file.
#[derive(Debug, Clone, Serialize)]
pub struct InputSummary {
    /// File name as given.
    pub file: String,
    /// Delimiter name.
    pub delimiter: &'static str,
    /// Non-empty data rows in the file.
    pub rows_read: usize,
    /// Rows pooled.
    pub rows_used: usize,
    /// Rows left out.
    pub rows_skipped: usize,
}

/// A z or t test.
#[derive(Debug, Clone, Serialize)]
pub struct TestRecord {
    /// Statistic.
    pub statistic: f64,
    /// Degrees of freedom (null for z).
    pub df: Option<f64>,
    /// Two-sided p value.
    pub p: f64,
}

/// How τ² was reached.
#[derive(Debug, Clone, Serialize)]
pub struct Tau2FitRecord {
    /// Iterations (0 for closed forms).
    pub iterations: usize,
    /// closed_form, converged or iteration_limit.
    pub termination: Termination,
    /// True when τ² sits at 0.
    pub at_zero: bool,
}

/// The coefficient-scale results.
#[derive(Debug, Clone, Serialize)]
pub struct ReliabilityRecord {
    /// Back-transformed pooled value.
    pub estimate: f64,
    /// Back-transformed CI.
    pub ci: [f64; 2],
    /// Back-transformed PI (null when k = 2).
    pub pi: Option<[f64; 2]>,
    /// Back-transformed PI at the upper end of τ²'s CI, when τ² is estimated at 0.
    pub pi_at_tau2_upper: Option<[f64; 2]>,
}

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

/// A skipped row.
#[derive(Debug, Clone, Serialize)]
pub struct SkippedRecord {
    /// Spreadsheet row.
    pub row: usize,
    /// Every reason.
    pub reasons: Vec<String>,
}

fn pair(i: Interval) -> [f64; 2] {
    [i.lower, i.upper]
}

fn back_pair(i: BackInterval) -> [f64; 2] {
    [i.lower, i.upper]
}

impl PoolDocument {
    /// Build the document from a benchmark and its paragraph.
    pub fn new(b: &Benchmark, paragraph: &Paragraph, warnings: &[Warning]) -> Self {
        let p = &b.pool;
        PoolDocument {
            head: DocumentHead::new(
                "pool",
                InputSummary {
                    file: b.file.clone(),
                    delimiter: delimiter_name(b.delimiter),
                    rows_read: b.rows_read,
                    rows_used: b.studies.len(),
                    rows_skipped: b.skipped.len(),
                },
                b.transform,
                "estimate, se, ci, test, tau2, tau2_ci, tau, q and pi are on the transformed \
                 scale named by transform; reliability holds the same results on the \
                 coefficient's own scale",
                p.options.model,
                p.options.ci,
                p.options.level,
            ),
            k: p.k,
            n_total: b.n_total,
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
            tau2_fit: Tau2FitRecord {
                iterations: p.tau2.iterations,
                termination: p.tau2.termination,
                at_zero: p.tau2.at_zero,
            },
            i2: p.i2,
            i2_ci: p.i2_ci.map(pair),
            h2: p.h2,
            typical_within_variance: p.heterogeneity.typical_variance,
            q: p.heterogeneity.q,
            q_df: p.heterogeneity.df,
            q_p: p.heterogeneity.p,
            pi: p.prediction.interval().map(pair),
            pi_df: match p.prediction {
                crate::pool::Prediction::Available { df, .. } => Some(df),
                crate::pool::Prediction::TooFewStudies | crate::pool::Prediction::CommonEffect => {
                    None
                }
            },
            pi_at_tau2_upper: p.prediction_at_tau2_upper.map(pair),
            reliability: b.coefficient.map(|c| ReliabilityRecord {
                estimate: c.estimate,
                ci: back_pair(c.ci),
                pi: c.pi.map(back_pair),
                pi_at_tau2_upper: c.pi_at_tau2_upper.map(back_pair),
            }),
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
            skipped_rows: b
                .skipped
                .iter()
                .map(|s| SkippedRecord {
                    row: s.row,
                    reasons: s.reasons.clone(),
                })
                .collect(),
            warnings: warnings.iter().map(WarningRecord::from).collect(),
            paragraph: paragraph.text.clone(),
            references: paragraph.references.clone(),
            caution: INDIVIDUAL_DECISIONS_CAUTION,
        }
    }
}
