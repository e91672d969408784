//! Raw command-line arguments as clap parses them. Enumerated options are value enums;
//! values are checked and turned into the analysis's `Settings` in `config`. Each
//! option is documented once, here; a default is shown by clap (not repeated in the text).

use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// The analysis scale (`--transform`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TransformArg {
    /// ln(1 − coefficient).
    Bonett,
    /// (1 − coefficient)^(1/3).
    HakstianWhalen,
    /// atanh(coefficient).
    FisherZ,
    /// The coefficient itself.
    Raw,
    /// The sheet's coef and var already hold effects and their variances.
    None,
}

/// The τ² estimator, or the common-effect model (`--tau2`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Tau2Arg {
    /// Restricted maximum likelihood.
    Reml,
    /// Maximum likelihood.
    Ml,
    /// DerSimonian–Laird.
    Dl,
    /// Paule–Mandel.
    Pm,
    /// Sidik–Jonkman.
    Sj,
    /// Hedges' unweighted method of moments.
    He,
    /// A common-effect model (τ² = 0 assumed).
    Common,
}

/// How confidence intervals are formed (`--ci`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CiArg {
    /// t quantiles, SE scaled by the weighted residual mean square.
    KnappHartung,
    /// As knapp-hartung with the scale factor kept at 1 or more.
    KnappHartungFloor,
    /// Normal quantiles.
    Wald,
}

/// How rows that share a sample or a cluster are pooled (`--dependence`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DependenceArg {
    /// A multilevel model: variance between clusters and within them, sampling errors of
    /// one sample correlated.
    Multilevel,
    /// One composite per sample (the mean of its rows), pooled as independent.
    Aggregate,
    /// Every row taken as independent (intervals too narrow).
    Ignore,
}

/// Where a multilevel model's standard errors come from (`--inference`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum InferenceArg {
    /// Cluster-robust (CR2) standard errors with Satterthwaite degrees of freedom.
    Robust,
    /// The model's own standard errors.
    Model,
}

/// The metric score SDs are put on (`--spread-metric`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SpreadMetricArg {
    /// SD of the mean item score.
    PerItem,
    /// Percent of maximum possible.
    Pomp,
}

/// Whether an SD is for sum or mean scores (`--sd-metric`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SdMetricArg {
    /// Sum scores.
    #[value(alias = "total")]
    Sum,
    /// Mean (average-item) scores.
    #[value(alias = "average")]
    Mean,
}

/// A kind of coefficient (`--coef-type`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CoefTypeArg {
    /// Coefficient alpha.
    Alpha,
    /// Standardized alpha.
    #[value(name = "alpha_std", alias = "alpha-std")]
    AlphaStd,
    /// KR-20.
    #[value(alias = "kr-20")]
    Kr20,
    /// Omega.
    Omega,
    /// A test–retest correlation.
    #[value(alias = "test-retest", alias = "test_retest")]
    Retest,
    /// An inter-rater correlation.
    #[value(alias = "inter-rater", alias = "inter_rater")]
    Interrater,
    /// A split-half coefficient.
    #[value(name = "split_half", alias = "split-half", alias = "splithalf")]
    SplitHalf,
}

/// A delimiter (`--delimiter`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DelimiterArg {
    /// A comma.
    #[value(name = "comma", alias = ",")]
    Comma,
    /// A semicolon.
    #[value(name = "semicolon", alias = ";")]
    Semicolon,
    /// A tab.
    #[value(name = "tab", alias = "\t")]
    Tab,
}

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
    /// Explain differences between studies: moderators, score spread, subgroups, influence.
    Explain(ExplainArgs),
    /// Place a new study against the benchmark: expected range, percentile and verdict.
    Check(CheckArgs),
    /// Reliability from raw item data: alpha, omega, tau-equivalence, item statistics.
    Items(ItemsArgs),
    /// Intraclass correlations of a table of scores (rows persons or targets, columns
    /// occasions or raters): every form with its interval and test, the SEM and the
    /// smallest detectable change.
    Icc(IccArgs),
    /// Test whether independent alphas are equal (Feldt; Hakstian–Whalen).
    Compare(CompareArgs),
    /// Sample size for estimating or testing coefficient alpha.
    Plan(PlanArgs),
    /// What-if correction for measurement error: a correlation or a regression's slopes.
    Correct(CorrectArgs),
    /// Write an empty coding sheet and its data dictionary.
    Template(TemplateArgs),
    /// Write a shareable report (HTML, Markdown, JSON and figures) of a benchmark, its
    /// moderators, a new study's placement and a correction.
    Report(ReportArgs),
    /// Start the browser interface on this machine (127.0.0.1 only) and print its address.
    Serve(ServeArgs),
}

/// Options of `relyard serve`.
#[derive(Debug, Args)]
pub struct ServeArgs {
    /// Port to listen on, on 127.0.0.1 only (a free port is chosen when not given).
    #[arg(long, value_name = "N")]
    pub port: Option<u16>,

    /// Open the page in the default browser.
    #[arg(long)]
    pub open: bool,

    /// Start with the invented demo sheet loaded.
    #[arg(long)]
    pub demo: bool,

    /// Largest upload accepted: a number of bytes or a size such as 200MB (the default),
    /// 20MB or 1GB.
    #[arg(long, value_name = "SIZE", default_value = "200MB")]
    pub max_upload: String,
}

/// Options for reading a coding sheet, shared by the commands that read one.
#[derive(Debug, Clone, Args)]
pub struct SheetArgs {
    /// The coding sheet: CSV (comma, semicolon or tab delimited; UTF-8) or a workbook (.xlsx,
    /// .xls, .ods).
    #[arg(value_name = "SHEET")]
    pub sheet: PathBuf,

    /// Use the sheet's own column name for a standard column, e.g. coef=reported_alpha
    /// (repeatable). Standard columns: study, coef, n, items, coef_type, sd, sd_metric,
    /// scale_min, scale_max, var.
    #[arg(long = "column", value_name = "ROLE=NAME")]
    pub columns: Vec<String>,

    /// The sheet's delimiter, when it is text (detected from the header row when not
    /// given).
    #[arg(long, value_name = "DELIMITER", ignore_case = true)]
    pub delimiter: Option<DelimiterArg>,

    /// For a workbook (.xlsx, .xlsm, .xlsb, .xls, .ods): the worksheet holding the coding
    /// sheet (the first visible one when not given).
    #[arg(long, value_name = "NAME")]
    pub worksheet: Option<String>,

    #[command(flatten)]
    pub workbook: WorkbookBoundArgs,

    /// Pool the valid rows and list each row left out with its reason, instead of
    /// stopping at the first bad sheet.
    #[arg(long)]
    pub skip_invalid: bool,

    /// Analyse only the rows whose COLUMN holds VALUE (repeatable: every condition must
    /// hold), e.g. coef_type=alpha or language=original; case and surrounding spaces do
    /// not matter.
    #[arg(long = "where", value_name = "COLUMN=VALUE")]
    pub subset: Vec<String>,
}

/// The benchmark model, shared by the commands that fit one.
#[derive(Debug, Clone, Args)]
pub struct ModelArgs {
    /// Analysis scale (when not given: bonett for internal-consistency coefficients,
    /// fisher-z for retest and inter-rater correlations; none: the sheet's coef and var
    /// already hold the effect and its sampling variance).
    #[arg(long, value_name = "TRANSFORM", ignore_case = true)]
    pub transform: Option<TransformArg>,

    /// Between-study variance estimator, or common for a common-effect model.
    #[arg(
        long,
        value_name = "METHOD",
        default_value = "reml",
        ignore_case = true
    )]
    pub tau2: Tau2Arg,

    /// How confidence intervals are formed (knapp-hartung-floor keeps the Knapp–Hartung
    /// scale factor at 1 or more).
    #[arg(
        long,
        value_name = "METHOD",
        default_value = "knapp-hartung",
        ignore_case = true
    )]
    pub ci: CiArg,

    /// Confidence level for every interval, between 0 and 1.
    #[arg(long, value_name = "LEVEL", default_value_t = 0.95)]
    pub level: f64,

    /// Pool internal-consistency and correlation-type coefficients together (needs
    /// --transform).
    #[arg(long)]
    pub allow_mixed_types: bool,

    /// How rows that share a sample or a cluster (the sheet's sample and cluster columns)
    /// are pooled (when not given: multilevel when the sheet has those columns).
    #[arg(long, value_name = "METHOD", ignore_case = true)]
    pub dependence: Option<DependenceArg>,

    /// Assumed correlation between the sampling errors of coefficients from one sample,
    /// at least 0 and below 1 (common practice, no source; the results at 0, 0.3, 0.6 and
    /// 0.9 are always shown too).
    #[arg(long, value_name = "R", default_value_t = 0.6)]
    pub sampling_correlation: f64,

    /// Standard errors of the multilevel model: robust (CR2 with Satterthwaite degrees of
    /// freedom, the default) or the model's own.
    #[arg(long, value_name = "KIND", ignore_case = true)]
    pub inference: Option<InferenceArg>,
}

/// Moderators of a meta-regression, shared by explain and check.
#[derive(Debug, Clone, Args)]
pub struct ModeratorArgs {
    /// A column that may explain differences between studies (repeatable). Numeric when
    /// every value is a number, categorical otherwise (treatment coding against a
    /// reference level). The standard columns n, items, sd, scale_min and scale_max can
    /// serve too.
    #[arg(long = "moderator", value_name = "NAME")]
    pub moderators: Vec<String>,

    /// Treat this moderator as categorical even if its values are numbers (repeatable).
    #[arg(long = "categorical", value_name = "NAME")]
    pub categorical: Vec<String>,

    /// Reference level of a categorical moderator, NAME=LEVEL (repeatable; when not given,
    /// the level with most studies).
    #[arg(long = "reference", value_name = "NAME=LEVEL")]
    pub references: Vec<String>,

    /// Metric the score SDs are put on for the score-spread model (when not given: pomp
    /// when every study gives its response scale, else per-item).
    #[arg(long, value_name = "METRIC", ignore_case = true)]
    pub spread_metric: Option<SpreadMetricArg>,

    /// Report the intercept where every numeric moderator is 0, instead of at the
    /// moderators' means (the numeric moderators are then not centred).
    #[arg(long)]
    pub uncentred: bool,
}

#[derive(Debug, Args)]
pub struct PoolArgs {
    #[command(flatten)]
    pub sheet: SheetArgs,

    #[command(flatten)]
    pub model: ModelArgs,

    /// Name of the measure, used in the paragraph (e.g. "the Team Candor Scale").
    #[arg(long, value_name = "NAME")]
    pub measure: Option<String>,

    /// Also list every pooled study with its value on the analysis scale, variance and
    /// weight.
    #[arg(long)]
    pub studies: bool,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ExplainArgs {
    #[command(flatten)]
    pub sheet: SheetArgs,

    #[command(flatten)]
    pub model: ModelArgs,

    #[command(flatten)]
    pub moderators: ModeratorArgs,

    /// Test whether differences in score spread explain the differences between
    /// coefficients (regression of ln(1 − coefficient) on ln(SD); always on the Bonett
    /// scale).
    #[arg(long)]
    pub score_spread: bool,

    /// A benchmark per value of this column, with a test of the difference between groups.
    #[arg(long, value_name = "COLUMN")]
    pub by: Option<String>,

    /// Leave each study out in turn: studentized residuals, Cook's distances, outliers.
    #[arg(long)]
    pub influence: bool,

    /// Permutation test of the moderators with this many permutations (spread over all
    /// cores; a progress bar shows on a terminal).
    #[arg(long, value_name = "N")]
    pub permutations: Option<usize>,

    /// Seed of the permutations (results are the same for a seed whatever the number of
    /// threads).
    #[arg(long, value_name = "SEED", default_value_t = 1)]
    pub seed: u64,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct CheckArgs {
    #[command(flatten)]
    pub sheet: SheetArgs,

    #[command(flatten)]
    pub model: ModelArgs,

    #[command(flatten)]
    pub moderators: ModeratorArgs,

    /// The new study's observed coefficient.
    #[arg(long, value_name = "X", allow_negative_numbers = true)]
    pub coef: f64,

    /// The new study's sample size.
    #[arg(long, value_name = "N")]
    pub n: u64,

    #[command(flatten)]
    pub study: StudyArgs,

    /// Name of the measure, used in the paragraph.
    #[arg(long, value_name = "NAME")]
    pub measure: Option<String>,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ItemsArgs {
    /// The item data: one row per respondent, one column per item, a header of item names
    /// (CSV: comma, semicolon or tab delimited, UTF-8; or a workbook: .xlsx, .xls, .ods).
    /// Read in one pass; `-` or a pipe works too.
    #[arg(value_name = "DATA")]
    pub data: PathBuf,

    /// The item columns to use, comma-separated (every column when not given; a text
    /// column with a different value for every respondent is taken as an identifier and
    /// left out).
    #[arg(long, value_name = "A,B,C", value_delimiter = ',')]
    pub items: Vec<String>,

    /// Items to reverse-key, comma-separated (needs --scale-min and --scale-max; a
    /// reversed response is min + max − x).
    #[arg(long, value_name = "X,Y", value_delimiter = ',')]
    pub reverse: Vec<String>,

    /// Lowest possible response (responses outside the scale are errors).
    #[arg(long, value_name = "MIN", allow_negative_numbers = true)]
    pub scale_min: Option<f64>,

    /// Highest possible response.
    #[arg(long, value_name = "MAX", allow_negative_numbers = true)]
    pub scale_max: Option<f64>,

    /// Use each pair of items' complete responses for their covariance, instead of only
    /// respondents who answered every item.
    #[arg(long)]
    pub pairwise: bool,

    /// A response that means "missing", such as -99 (repeatable).
    #[arg(long = "missing-code", value_name = "X", allow_negative_numbers = true)]
    pub missing_codes: Vec<f64>,

    /// For a workbook: the worksheet holding the data (the first visible one when not given).
    #[arg(long, value_name = "NAME")]
    pub worksheet: Option<String>,

    #[command(flatten)]
    pub workbook: WorkbookBoundArgs,

    /// Bootstrap interval for omega with this many replicates. The bootstrap keeps the
    /// complete rows in memory (the rest of the analysis does not); runs on all cores.
    #[arg(long, value_name = "N")]
    pub bootstrap: Option<usize>,

    /// Seed of the bootstrap (the same seed gives the same interval on any machine).
    #[arg(long, value_name = "SEED", default_value_t = 1)]
    pub seed: u64,

    /// Confidence level of the intervals, between 0 and 1.
    #[arg(long, value_name = "LEVEL", default_value_t = 0.95)]
    pub level: f64,

    /// The file's delimiter, when it is text (detected from the header row when not given).
    #[arg(long, value_name = "DELIMITER", ignore_case = true)]
    pub delimiter: Option<DelimiterArg>,

    /// Treat the items as ordinal (few categories): polychoric correlations and ordinal
    /// alpha besides the coefficients of the observed scores.
    #[arg(long)]
    pub ordinal: bool,

    /// Print only a methods-section paragraph for the coefficient reported, with its
    /// references (the JSON always holds it as `paragraph`).
    #[arg(long, conflicts_with = "json")]
    pub paragraph: bool,

    /// A subscale: its name and its items, e.g. --factor calm=q1,q2,q3 (repeat for each
    /// subscale; every item analysed belongs to exactly one). Adds a bifactor and a
    /// correlated-factors model with omega total, omega hierarchical and each subscale's
    /// omegas.
    #[arg(long = "factor", value_name = "NAME=ITEMS")]
    pub factors: Vec<String>,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct IccArgs {
    /// The table: one row per person (or target), one column per occasion (or rater), a
    /// header of column names (CSV or a workbook: .xlsx, .xls, .ods); rows with a missing
    /// cell are left out and counted.
    #[arg(value_name = "DATA")]
    pub data: PathBuf,

    /// The columns to use, comma-separated (every column when not given; a text column
    /// with a different value in every row is taken as an identifier and left out).
    #[arg(long, value_name = "A,B,C", value_delimiter = ',')]
    pub columns: Vec<String>,

    /// A value that means "missing", such as -99 (repeatable).
    #[arg(long = "missing-code", value_name = "X", allow_negative_numbers = true)]
    pub missing_codes: Vec<f64>,

    /// For a workbook: the worksheet holding the table (the first visible one when not
    /// given).
    #[arg(long, value_name = "NAME")]
    pub worksheet: Option<String>,

    #[command(flatten)]
    pub workbook: WorkbookBoundArgs,

    /// Confidence level of the intervals, between 0 and 1.
    #[arg(long, value_name = "LEVEL", default_value_t = 0.95)]
    pub level: f64,

    /// The file's delimiter, when it is text (detected from the header row when not given).
    #[arg(long, value_name = "DELIMITER", ignore_case = true)]
    pub delimiter: Option<DelimiterArg>,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct CompareArgs {
    /// A coding sheet whose rows are the samples (columns study, coef, n, items).
    #[arg(value_name = "SHEET")]
    pub sheet: Option<PathBuf>,

    /// A sample as ALPHA,N,ITEMS or LABEL=ALPHA,N,ITEMS (repeatable; at least two in all).
    #[arg(long = "sample", value_name = "ALPHA,N,ITEMS")]
    pub samples: Vec<String>,

    /// Use the sheet's own column name for a standard column, e.g. coef=reported_alpha.
    #[arg(long = "column", value_name = "ROLE=NAME")]
    pub columns: Vec<String>,

    /// For a workbook: the worksheet holding the samples (the first visible one when not given).
    #[arg(long, value_name = "NAME")]
    pub worksheet: Option<String>,

    #[command(flatten)]
    pub workbook: WorkbookBoundArgs,

    /// Compare the valid rows and list each row left out with its reason.
    #[arg(long)]
    pub skip_invalid: bool,

    /// Compare only the rows whose COLUMN holds VALUE (repeatable).
    #[arg(long = "where", value_name = "COLUMN=VALUE")]
    pub subset: Vec<String>,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct PlanArgs {
    /// Number of items.
    #[arg(long, value_name = "K")]
    pub items: u32,

    /// The planning value of alpha (the value expected; a conservative, low one is safer).
    #[arg(long, value_name = "ALPHA", allow_negative_numbers = true)]
    pub planning: f64,

    /// Desired width of the confidence interval (upper minus lower limit).
    #[arg(long, value_name = "W", conflicts_with_all = ["null", "power"])]
    pub width: Option<f64>,

    /// Confidence level for --width, between 0 and 1.
    #[arg(long, value_name = "LEVEL", default_value_t = 0.95)]
    pub level: f64,

    /// The alpha to test against (a test of alpha = NULL with power at the planning value).
    #[arg(long, value_name = "ALPHA", allow_negative_numbers = true)]
    pub null: Option<f64>,

    /// Desired power of the test.
    #[arg(long, value_name = "POWER", default_value_t = 0.8)]
    pub power: f64,

    /// Significance level of the test.
    #[arg(long, value_name = "A", default_value_t = 0.05)]
    pub significance: f64,

    /// A one-sided test (the default is two-sided).
    #[arg(long)]
    pub one_sided: bool,

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

/// Item data of the two scores of a correlation to correct (`correct`, `report`).
#[derive(Debug, Clone, Args)]
pub struct ScoreItemArgs {
    /// Item data of x (one row per respondent, one column per item): the correlation is
    /// also corrected with each coefficient they give — alpha, omega, the greatest lower
    /// bound, omega total and hierarchical with --x-factor — side by side; without
    /// --rel-x, the coefficient its reading recommends is used.
    #[arg(long, value_name = "FILE")]
    pub items_x: Option<PathBuf>,

    /// Item data of y, as for --items-x.
    #[arg(long, value_name = "FILE")]
    pub items_y: Option<PathBuf>,

    /// The item columns of --items-x, comma-separated (every column when not given).
    #[arg(long, value_name = "A,B,C", value_delimiter = ',')]
    pub x_columns: Vec<String>,

    /// The item columns of --items-y.
    #[arg(long, value_name = "A,B,C", value_delimiter = ',')]
    pub y_columns: Vec<String>,

    /// Items of --items-x to reverse-key (needs --scale-min and --scale-max).
    #[arg(long, value_name = "X,Y", value_delimiter = ',')]
    pub x_reverse: Vec<String>,

    /// Items of --items-y to reverse-key.
    #[arg(long, value_name = "X,Y", value_delimiter = ',')]
    pub y_reverse: Vec<String>,

    /// A subscale of --items-x, as NAME=ITEM,ITEM,… (repeat; adds omega total and omega
    /// hierarchical).
    #[arg(long = "x-factor", value_name = "NAME=ITEMS")]
    pub x_factors: Vec<String>,

    /// A subscale of --items-y.
    #[arg(long = "y-factor", value_name = "NAME=ITEMS")]
    pub y_factors: Vec<String>,

    /// Lowest possible item response, for reverse keying (it applies to the item data whose
    /// items are reversed, --x-reverse or --y-reverse).
    #[arg(long, value_name = "MIN", allow_negative_numbers = true)]
    pub items_scale_min: Option<f64>,

    /// Highest possible item response, for reverse keying.
    #[arg(long, value_name = "MAX", allow_negative_numbers = true)]
    pub items_scale_max: Option<f64>,
}

#[derive(Debug, Args)]
pub struct CorrectArgs {
    /// An observed correlation to correct (with --n, --rel-x and --rel-y).
    #[arg(long, value_name = "R", allow_negative_numbers = true)]
    pub r: Option<f64>,

    /// Sample size (of the correlation, or of the study behind --summary).
    #[arg(long, value_name = "N")]
    pub n: Option<u64>,

    /// Reliability of x: a value (0.78), an estimate with its sample (0.78,n=180,items=10),
    /// or a benchmark (sheet=PATH, optionally ,at=NAME=VALUE for each moderator); add
    /// ,kind=alpha when it is coefficient alpha.
    #[arg(long, value_name = "SPEC")]
    pub rel_x: Option<String>,

    /// Reliability of y, as for --rel-x.
    #[arg(long, value_name = "SPEC")]
    pub rel_y: Option<String>,

    /// Item data of the two scores, for the coefficients side by side.
    #[command(flatten)]
    pub score_items: ScoreItemArgs,

    /// A study's raw data (CSV or a workbook: one row per respondent, scale scores in
    /// columns).
    #[arg(long, value_name = "FILE", conflicts_with = "summary")]
    pub data: Option<PathBuf>,

    /// A study's summary: a CSV with a header `variable,<names>…[,sd]` and a covariance (or
    /// correlation) matrix, one row per variable (needs --n).
    #[arg(long, value_name = "FILE")]
    pub summary: Option<PathBuf>,

    /// The regression's outcome (a column of --data or a variable of --summary).
    #[arg(long, value_name = "NAME")]
    pub outcome: Option<String>,

    /// A predictor (repeatable).
    #[arg(long = "predictor", value_name = "NAME")]
    pub predictors: Vec<String>,

    /// Reliability of a variable, NAME=SPEC (repeatable; one per predictor, and optionally
    /// the outcome; NAME=1 for a variable measured without error).
    #[arg(long = "rel", value_name = "NAME=SPEC")]
    pub rels: Vec<String>,

    /// Monte Carlo draws (or bootstrap samples for --data); spread over all cores.
    #[arg(long, value_name = "N", default_value_t = 10_000)]
    pub draws: usize,

    /// Seed of the draws (the same seed gives the same intervals on any machine).
    #[arg(long, value_name = "SEED", default_value_t = 1)]
    pub seed: u64,

    /// Confidence level of the intervals.
    #[arg(long, value_name = "LEVEL", default_value_t = 0.95)]
    pub level: f64,

    /// Points per reliability in the sensitivity table.
    #[arg(long, value_name = "N", default_value_t = 5)]
    pub grid: usize,

    /// Delimiter of --data, when it is text (detected when not given).
    #[arg(long, value_name = "DELIMITER", ignore_case = true)]
    pub delimiter: Option<DelimiterArg>,

    /// For --data in a workbook: the worksheet (the first visible one when not given).
    #[arg(long, value_name = "NAME")]
    pub worksheet: Option<String>,

    #[command(flatten)]
    pub workbook: WorkbookBoundArgs,

    /// A value in --data that means "missing", such as -99 (repeatable).
    #[arg(long = "missing-code", value_name = "X", allow_negative_numbers = true)]
    pub missing_codes: Vec<f64>,

    /// Print one JSON object instead of the readable summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
pub struct ReportArgs {
    #[command(flatten)]
    pub sheet: SheetArgs,

    #[command(flatten)]
    pub model: ModelArgs,

    #[command(flatten)]
    pub moderators: ModeratorArgs,

    /// Include the score-variance test (do differences in score spread explain the
    /// differences between coefficients?).
    #[arg(long)]
    pub score_spread: bool,

    /// The new study's observed coefficient: adds where it falls against the benchmark.
    #[arg(long, value_name = "X", allow_negative_numbers = true)]
    pub coef: Option<f64>,

    /// The new study's sample size (with --coef or --r).
    #[arg(long, value_name = "N")]
    pub n: Option<u64>,

    #[command(flatten)]
    pub study: StudyArgs,

    /// The new study's observed correlation of this measure with another score: adds a
    /// what-if correction (with --n and --rel-y). The measure's reliability is the new
    /// study's --coef (with --n and --items) when given, else the benchmark.
    #[arg(long, value_name = "R", allow_negative_numbers = true)]
    pub r: Option<f64>,

    /// Reliability of the other score, as for relyard correct --rel-y.
    #[arg(long, value_name = "SPEC")]
    pub rel_y: Option<String>,

    /// Item data of the two scores, for the coefficients side by side.
    #[command(flatten)]
    pub score_items: ScoreItemArgs,

    /// Monte Carlo draws for the correction.
    #[arg(long, value_name = "N", default_value_t = 10000)]
    pub draws: usize,

    /// Seed of the draws.
    #[arg(long, value_name = "SEED", default_value_t = 1)]
    pub seed: u64,

    /// Name of the measure, used in the title and the paragraphs.
    #[arg(long, value_name = "NAME")]
    pub measure: Option<String>,

    /// Folder to write report.html, report.md, results.json and figures/ into (created
    /// when missing).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,

    /// Replace an existing report in the folder.
    #[arg(long)]
    pub force: bool,
}

/// What else is known of the new study besides its coefficient and sample size (shared by
/// `check` and `report`).
#[derive(Debug, Clone, Args)]
pub struct StudyArgs {
    /// The new study's number of items (needed for internal-consistency coefficients).
    #[arg(long, value_name = "K")]
    pub items: Option<u32>,

    /// The kind of the new study's coefficient.
    #[arg(long, value_name = "TYPE", default_value = "alpha", ignore_case = true)]
    pub coef_type: CoefTypeArg,

    /// The new study's score SD (then --sd-metric, and for the POMP metric --scale-min and
    /// --scale-max): says how much of a shortfall its score spread accounts for.
    #[arg(long, value_name = "S")]
    pub sd: Option<f64>,

    /// Whether --sd is for sum or mean scores.
    #[arg(long, value_name = "METRIC", ignore_case = true)]
    pub sd_metric: Option<SdMetricArg>,

    /// Lowest possible response to one item of the new study's scale.
    #[arg(long, value_name = "X", allow_negative_numbers = true)]
    pub scale_min: Option<f64>,

    /// Highest possible response to one item of the new study's scale.
    #[arg(long, value_name = "X", allow_negative_numbers = true)]
    pub scale_max: Option<f64>,

    /// The new study's value of a moderator, NAME=VALUE (repeatable; one per --moderator).
    #[arg(long = "at", value_name = "NAME=VALUE")]
    pub at: Vec<String>,

    /// The study belongs to this cluster of the coding sheet (a paper, lab or data set
    /// already in it): its expected range is then for a new sample of that cluster, not
    /// of a new one.
    #[arg(long, value_name = "NAME")]
    pub in_cluster: Option<String>,
}

/// Bounds on what a workbook may hold (see docs/limits.md).
#[derive(Debug, Args, Clone, Copy, Default)]
pub struct WorkbookBoundArgs {
    /// For a workbook: how many megabytes its parts may unpack to [default: 256].
    #[arg(long = "workbook-max-mb", value_name = "MB")]
    pub max_mb: Option<u64>,

    /// For a workbook: how many cells with content its worksheet may hold
    /// [default: 10,000,000].
    #[arg(long = "workbook-max-cells", value_name = "N")]
    pub max_cells: Option<u64>,
}

impl WorkbookBoundArgs {
    /// The library's limits: the defaults, raised (or lowered) as asked.
    pub fn limits(self) -> relyard::sheet::WorkbookLimits {
        let d = relyard::sheet::WorkbookLimits::default();
        relyard::sheet::WorkbookLimits {
            unpacked_bytes: self
                .max_mb
                .map_or(d.unpacked_bytes, |m| m.saturating_mul(1 << 20)),
            cells: self.max_cells.unwrap_or(d.cells),
        }
    }
}
