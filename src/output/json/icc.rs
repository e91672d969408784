//! `relyard icc --json`: the intraclass correlations of a table of scores.

use super::items::ItemsInput;
use super::{RELYARD_VERSION, SCHEMA_VERSION, warnings};
use crate::analysis::IccOutcome;
use crate::icc::IccForm;
use crate::level::Level;
use crate::output::icc_words::{ICC_INDIVIDUALS_CAUTION, ICC_RATERS, ICC_TEST_RETEST};
use crate::setting::SettingNames;
use crate::warning::WarningRecord;
use serde::Serialize;

/// One form.
#[derive(Debug, Clone, Serialize)]
pub struct IccFormRecord {
    /// "one-way", "two-way-random" or "two-way-mixed".
    pub model: &'static str,
    /// "consistency" or "agreement".
    #[serde(rename = "type")]
    pub kind: &'static str,
    /// "single" or "average".
    pub unit: &'static str,
    /// The estimate.
    pub value: f64,
    /// Its confidence interval.
    pub ci: [f64; 2],
    /// The F statistic of the test of ρ = 0.
    pub f: f64,
    /// Numerator degrees of freedom.
    pub df1: f64,
    /// Denominator degrees of freedom.
    pub df2: f64,
    /// Its p value.
    pub p: f64,
}

impl From<&IccForm> for IccFormRecord {
    fn from(f: &IccForm) -> Self {
        IccFormRecord {
            model: f.model.name(),
            kind: f.kind.name(),
            unit: f.unit.name(),
            value: f.value,
            ci: [f.ci.0, f.ci.1],
            f: f.f,
            df1: f.df1,
            df2: f.df2,
            p: f.p,
        }
    }
}

/// Which form fits which design.
#[derive(Debug, Clone, Serialize)]
pub struct IccGuidance {
    /// Columns are occasions.
    pub test_retest: &'static str,
    /// Columns are raters.
    pub raters: &'static str,
}

/// `relyard icc --json`.
#[derive(Debug, Clone, Serialize)]
pub struct IccDocument {
    /// Layout version.
    pub schema_version: &'static str,
    /// "icc".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// The table as read.
    pub input: ItemsInput,
    /// Rows (persons, targets) with every column.
    pub n: usize,
    /// Columns (occasions, raters).
    pub k: usize,
    /// The columns, in order.
    pub columns: Vec<String>,
    /// Rows left out for a missing cell.
    pub rows_left_out: u64,
    /// Confidence level.
    pub level: Level,
    /// Every form.
    pub forms: Vec<IccFormRecord>,
    /// SD of all the scores.
    pub sd: f64,
    /// Standard error of measurement, SD·√(1 − ICC(A,1)).
    pub sem: f64,
    /// Smallest detectable change, 1.96·√2·SEM.
    pub sdc: f64,
    /// The form behind the SEM.
    pub sem_form: &'static str,
    /// Which form fits test–retest and which fits raters.
    pub guidance: IccGuidance,
    /// Decisions about individuals.
    pub caution: &'static str,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
}

impl IccDocument {
    /// Build the document.
    pub fn new(o: &IccOutcome, names: &dyn SettingNames) -> Self {
        let (d, a) = (&o.data, &o.analysis);
        IccDocument {
            schema_version: SCHEMA_VERSION,
            command: "icc",
            relyard_version: RELYARD_VERSION,
            input: ItemsInput::of(d),
            n: a.n,
            k: a.k,
            columns: d.names.clone(),
            rows_left_out: d.rows_read - d.complete_rows,
            level: o.level,
            forms: a.forms.iter().map(IccFormRecord::from).collect(),
            sd: a.sd,
            sem: a.sem,
            sdc: a.sdc,
            sem_form: "two-way, absolute agreement, single measures",
            guidance: IccGuidance {
                test_retest: ICC_TEST_RETEST,
                raters: ICC_RATERS,
            },
            caution: ICC_INDIVIDUALS_CAUTION,
            warnings: warnings(&o.warnings, names),
        }
    }
}
