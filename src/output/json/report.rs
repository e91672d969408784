//! results.json: the documents of the report's parts, each the same typed document its own
//! command prints with `--json`, with the run's provenance.

use super::{CheckDocument, CorrectionDocument, ExplainDocument, PoolDocument};
use crate::output::page::checklist::ChecklistItem;
use serde::Serialize;

/// results.json.
#[derive(Debug, Clone, Serialize)]
pub struct ResultsDocument {
    /// Layout version.
    pub schema_version: &'static str,
    /// "report".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// The coding sheet and its SHA-256.
    pub input: ReportInput,
    /// The command line as given (each argument).
    pub options: Vec<String>,
    /// The settings in effect, defaults included.
    pub settings: String,
    /// As `relyard pool --json`.
    pub benchmark: PoolDocument,
    /// As `relyard explain --json` (null when not run).
    pub explain: Option<ExplainDocument>,
    /// As `relyard check --json` (null when not run).
    pub placement: Option<CheckDocument>,
    /// As `relyard correct --json` (null when not run).
    pub correction: Option<CorrectionDocument>,
    /// Figure files written (stems; each as .svg and .png).
    pub figures: Vec<String>,
    /// The reporting checklist.
    pub checklist: Vec<ChecklistItem>,
}

/// The input file record of results.json.
#[derive(Debug, Clone, Serialize)]
pub struct ReportInput {
    /// File as named.
    pub file: String,
    /// The worksheet read (null for a text file).
    pub sheet_name: Option<String>,
    /// SHA-256 (hex).
    pub sha256: String,
}
