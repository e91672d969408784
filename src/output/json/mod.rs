//! The JSON documents: serialisable types kept apart from the analysis types. The keys
//! are a documented contract (docs/output-schema.md; a test checks that every key printed
//! is documented and every documented key printed); change them only with the schema
//! version.

mod correct;
mod explain;
mod icc;
mod items;
mod place;
mod pool;
mod report;

pub use correct::{CorrectionDocument, CorrelationDocument, RegressionDocument, SEM_NOTE};
pub use explain::ExplainDocument;
pub use icc::IccDocument;
pub use items::{CompareDocument, GLB_CAUTION, ItemsDocument, ORDINAL_CAUTION, PlanDocument};
pub use place::CheckDocument;
pub use pool::{DependenceRecord, PoolDocument};
pub use report::{ReportInput, ResultsDocument};

use crate::Level;
use crate::benchmark::{Prepared, SkippedRow};
use crate::pool::{CiMethod, Interval, Model, Tau2Fit, Termination};
use crate::setting::SettingNames;
use crate::sheet::SheetSummary;
use crate::transform::{BackInterval, TransformKind};
use crate::warning::{Warning, WarningRecord};
use serde::Serialize;

/// Version of the JSON layout; raised whenever a key changes meaning or disappears.
pub const SCHEMA_VERSION: &str = "1.0";

/// The version of relyard that wrote a document.
pub const RELYARD_VERSION: &str = env!("CARGO_PKG_VERSION");

/// The keys every document about a coding sheet starts with: layout version, command,
/// input and model.
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
    pub level: Level,
}

/// The model a document's numbers come from.
#[derive(Debug, Clone, Copy)]
pub struct ModelUsed {
    /// The transform.
    pub transform: TransformKind,
    /// Common or random effects.
    pub model: Model,
    /// The interval method.
    pub ci: CiMethod,
    /// The level.
    pub level: Level,
}

impl DocumentHead {
    /// The head of a document.
    pub fn new(
        command: &'static str,
        input: InputSummary,
        m: ModelUsed,
        scales: &'static str,
    ) -> Self {
        DocumentHead {
            schema_version: SCHEMA_VERSION,
            command,
            relyard_version: RELYARD_VERSION,
            input,
            transform: m.transform.name(),
            transform_formula: m.transform.get().formula(),
            scales,
            model: match m.model {
                Model::Common => "common",
                Model::Random(_) => "random",
            },
            tau2_method: m.model.name(),
            ci_method: m.ci.name(),
            level: m.level,
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
    /// The worksheet read (null for a text file).
    pub sheet_name: Option<String>,
    /// Non-empty data rows in the file.
    pub rows_read: usize,
    /// Rows pooled.
    pub rows_used: usize,
    /// Rows left out.
    pub rows_skipped: usize,
    /// The subset analysed: each {column, value} (empty: every row).
    pub subset: Vec<SubsetRecord>,
    /// Rows set aside as outside the subset.
    pub rows_outside_subset: usize,
}

/// One condition of the subset analysed.
#[derive(Debug, Clone, Serialize)]
pub struct SubsetRecord {
    /// The column.
    pub column: String,
    /// The value kept.
    pub value: String,
}

impl InputSummary {
    /// The input summary of a sheet with `used` rows used and `skipped` left out.
    pub fn new(s: &SheetSummary, used: usize, skipped: usize) -> Self {
        InputSummary {
            file: s.file.clone(),
            delimiter: s.format.delimiter_name(),
            sheet_name: s.worksheet.clone(),
            rows_read: s.rows_read,
            rows_used: used,
            rows_skipped: skipped,
            subset: s
                .subset
                .iter()
                .map(|r| SubsetRecord {
                    column: r.column.clone(),
                    value: r.value.clone(),
                })
                .collect(),
            rows_outside_subset: s.rows_outside_subset,
        }
    }

    /// The input summary of prepared studies.
    pub fn of(p: &Prepared) -> Self {
        Self::new(&p.source, p.records.len(), p.skipped.len())
    }
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

impl From<&Tau2Fit> for Tau2FitRecord {
    fn from(t: &Tau2Fit) -> Self {
        Tau2FitRecord {
            iterations: t.iterations,
            termination: t.termination,
            at_zero: t.at_zero,
        }
    }
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

impl From<&crate::benchmark::CoefficientScale> for ReliabilityRecord {
    fn from(c: &crate::benchmark::CoefficientScale) -> Self {
        ReliabilityRecord {
            estimate: c.estimate,
            ci: back_pair(c.ci),
            pi: c.pi.map(back_pair),
            pi_at_tau2_upper: c.pi_at_tau2_upper.map(back_pair),
        }
    }
}

/// A row left out at the user's request.
#[derive(Debug, Clone, Serialize)]
pub struct SkippedRecord {
    /// Spreadsheet row.
    pub row: usize,
    /// Every reason.
    pub reasons: Vec<String>,
}

/// The rows left out, their reasons rendered with `names`.
pub fn skipped(rows: &[SkippedRow], names: &dyn SettingNames) -> Vec<SkippedRecord> {
    rows.iter()
        .map(|s| SkippedRecord {
            row: s.row,
            reasons: s.reasons.iter().map(|r| r.render(names)).collect(),
        })
        .collect()
}

/// Warnings as records, their settings named by `names`.
pub fn warnings(w: &[Warning], names: &dyn SettingNames) -> Vec<WarningRecord> {
    w.iter().map(|w| WarningRecord::new(w, names)).collect()
}

/// An interval as [lower, upper].
pub fn pair(i: Interval) -> [f64; 2] {
    [i.lower, i.upper]
}

/// A back-transformed interval as [lower, upper].
pub fn back_pair(i: BackInterval) -> [f64; 2] {
    [i.lower, i.upper]
}
