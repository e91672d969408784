//! Raw command-line arguments as clap parses them. Values are checked and turned into
//! typed options in `config`.

use clap::{Args, Parser, Subcommand};
use std::path::PathBuf;

/// Judge a reliability coefficient in context: build a benchmark from the coefficients
/// that prior studies reported, and state the range a new study should expect.
#[derive(Debug, Parser)]
#[command(name = "relyard", version, about, long_about = None, max_term_width = 100)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Pool the coefficients of a coding sheet into a benchmark with an expected range.
    Pool(PoolArgs),
    /// Write an empty coding sheet and its data dictionary.
    Template(TemplateArgs),
}

/// Options for reading a coding sheet, shared by the commands that read one.
#[derive(Debug, Args)]
pub struct SheetArgs {
    /// The coding sheet (CSV: comma, semicolon or tab delimited; UTF-8).
    #[arg(value_name = "SHEET")]
    pub sheet: PathBuf,

    /// Use the sheet's own column name for a standard column, e.g. coef=reported_alpha
    /// (repeatable). Standard columns: study, coef, n, items, coef_type, sd, sd_metric,
    /// scale_min, scale_max, var.
    #[arg(long = "column", value_name = "ROLE=NAME")]
    pub columns: Vec<String>,

    /// The sheet's delimiter: comma, semicolon or tab [default: detected from the header row].
    #[arg(long, value_name = "DELIMITER")]
    pub delimiter: Option<String>,

    /// Pool the valid rows and list each row left out with its reason, instead of
    /// stopping at the first bad sheet.
    #[arg(long)]
    pub skip_invalid: bool,
}

#[derive(Debug, Args)]
pub struct PoolArgs {
    #[command(flatten)]
    pub sheet: SheetArgs,

    /// Analysis scale: bonett, hakstian-whalen, fisher-z, raw, or none (the sheet's coef
    /// and var columns already hold the effect and its sampling variance)
    /// [default: bonett for internal-consistency coefficients, fisher-z for retest and
    /// inter-rater correlations].
    #[arg(long, value_name = "TRANSFORM")]
    pub transform: Option<String>,

    /// Between-study variance estimator (reml, ml, dl, pm, sj, he), or common for a
    /// common-effect model.
    #[arg(long, value_name = "METHOD", default_value = "reml")]
    pub tau2: String,

    /// Confidence interval for the pooled value: knapp-hartung or wald.
    #[arg(long, value_name = "METHOD", default_value = "knapp-hartung")]
    pub ci: String,

    /// Confidence level for every interval, between 0 and 1.
    #[arg(long, value_name = "LEVEL", default_value_t = 0.95)]
    pub level: f64,

    /// Pool internal-consistency and correlation-type coefficients together (needs
    /// --transform).
    #[arg(long)]
    pub allow_mixed_types: bool,

    /// Name of the measure, used in the paragraph (e.g. "the Team Candor Scale").
    #[arg(long, value_name = "NAME")]
    pub measure: Option<String>,

    /// Also list every pooled study with its transformed value, variance and weight.
    #[arg(long)]
    pub studies: bool,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct TemplateArgs {
    /// Where to write the empty sheet; the dictionary goes beside it as
    /// NAME-dictionary.csv.
    #[arg(value_name = "PATH", default_value = "coding-sheet.csv")]
    pub path: PathBuf,

    /// Add a moderator column with this name (repeatable), e.g. field_maturity.
    #[arg(long = "extra-column", value_name = "NAME")]
    pub extra_columns: Vec<String>,

    /// Replace files that already exist.
    #[arg(long)]
    pub force: bool,
}
