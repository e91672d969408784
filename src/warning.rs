//! Warnings: results that stand but need the reader's attention. Each message says
//! what happened and what to do about it.

use crate::format;
use crate::setting::msg;
use crate::setting::{Message, PlainNames, Setting, SettingNames, given};
use serde::Serialize;
use std::fmt;

/// Something the user should know about a result that was nevertheless produced.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Warning {
    /// Few studies: τ² and the prediction interval are imprecise.
    FewStudies {
        /// Number of studies pooled.
        k: usize,
    },
    /// Fewer than five clusters in a multilevel fit.
    FewClusters {
        /// Clusters.
        clusters: usize,
    },
    /// Two clusters: a multilevel fit's prediction interval needs at least three.
    NoClusterPrediction {
        /// Clusters.
        clusters: usize,
    },
    /// Two studies: the prediction interval needs at least three.
    NoPredictionInterval {
        /// Number of studies pooled.
        k: usize,
    },
    /// τ² was estimated at its lower bound of zero.
    Tau2AtZero {
        /// Estimator name.
        estimator: String,
    },
    /// An iterative fit stopped before meeting its tolerance.
    NotConverged {
        /// What was being fitted.
        what: String,
        /// Iterations used.
        iterations: usize,
    },
    /// A model of the items (a factor model, the greatest lower bound) stopped before
    /// meeting its tolerance.
    ItemModelNotConverged {
        /// What was being fitted.
        what: String,
        /// Iterations used.
        iterations: usize,
    },
    /// An interval end lay beyond a coefficient of 1 on the way back and was set to 1.
    IntervalCapped {
        /// Which interval.
        interval: String,
    },
    /// The common-effect model assumes no between-study variation.
    CommonEffectAssumed,
    /// The common-effect model was chosen although Q rejects it.
    CommonEffectContradicted {
        /// Cochran's Q.
        q: f64,
        /// Its degrees of freedom.
        df: f64,
        /// Its p value.
        p: f64,
    },
    /// The τ² estimate lies outside its Q-profile interval.
    Tau2OutsideInterval {
        /// The estimate.
        tau2: f64,
        /// Interval lower end.
        lower: f64,
        /// Interval upper end.
        upper: f64,
    },
    /// Studies were left out of a model (listed, not lost).
    RowsLeftOutOfModel {
        /// Spreadsheet rows.
        rows: Vec<usize>,
        /// Why.
        why: String,
    },
    /// The Knapp–Hartung scale factor is below 1: its interval is narrower than Wald's.
    KnappHartungBelowOne {
        /// The scale factor q.
        scale: f64,
    },
    /// The expected range reaches below a coefficient of 0.
    RangeBelowZero {
        /// Its lower end.
        lower: f64,
    },
    /// A value lies outside the range the benchmark studies cover.
    Extrapolation {
        /// What (e.g. "year = 1900").
        what: String,
        /// Lowest value among the benchmark studies.
        lower: f64,
        /// Highest value among the benchmark studies.
        upper: f64,
    },
    /// An optional part of a run could not be done; the rest stands.
    PartFailed {
        /// Which part.
        what: String,
        /// Why.
        why: Message,
    },
    /// Alpha computed from the items is negative.
    NegativeAlpha {
        /// Its value.
        alpha: f64,
    },
    /// Items load negatively on the common factor.
    NegativeLoading {
        /// The items.
        items: Vec<String>,
    },
    /// A corrected value is impossible (beyond ±1, or a non-positive-definite matrix).
    Inadmissible {
        /// What.
        what: String,
        /// Why.
        why: String,
    },
    /// Some Monte Carlo or bootstrap draws gave an impossible correction.
    InadmissibleDraws {
        /// Their share.
        share: f64,
    },
    /// A reliability is a lower bound (coefficient alpha or its kin).
    LowerBoundReliability {
        /// Which variable.
        which: String,
        /// Share of it that is alpha-type (1 for a single value; a benchmark's share).
        share: f64,
    },
    /// The corrected regression is unstable (standardized slopes beyond ±1, or many
    /// impossible draws).
    UnstableCorrection,
    /// Rows of raw data were left out for missing values.
    RowsWithMissingValues {
        /// Rows left out.
        rows: u64,
        /// Missing cells.
        cells: u64,
    },
    /// A warning about one group's benchmark (`--by`).
    InGroup {
        /// The column the groups come from.
        column: String,
        /// The group.
        level: String,
        /// The group benchmark's warning.
        warning: Box<Warning>,
    },
    /// A column counts 1, 2, 3, … like a respondent number.
    IdentifierColumn {
        /// The column.
        column: String,
        /// Its first value (0 or 1).
        first: f64,
        /// Its last value.
        last: f64,
    },
    /// A text column with one value per respondent was taken as an identifier.
    IdentifierLeftOut {
        /// The column.
        column: String,
    },
    /// An item has a value far from its others (a missing-value code?).
    ExtremeResponse {
        /// The column.
        column: String,
        /// The value.
        value: f64,
    },
    /// Negative coefficients were reported: valid, but unusual.
    NegativeCoefficients {
        /// Spreadsheet rows.
        rows: Vec<usize>,
    },
    /// The same study label appears on several rows.
    DuplicateLabel {
        /// The label.
        label: String,
        /// Spreadsheet rows.
        rows: Vec<usize>,
    },
    /// The sheet groups its rows into samples or clusters, and they were pooled as
    /// independent at the user's request.
    DependenceIgnored {
        /// Rows.
        rows: usize,
        /// Samples.
        samples: usize,
        /// Clusters.
        clusters: usize,
    },
    /// Composites of each sample were pooled, and some clusters hold several samples.
    ClusterDependenceRemains {
        /// Samples (composites).
        samples: usize,
        /// Clusters.
        clusters: usize,
    },
    /// No cluster has two rows: the variance within clusters cannot be told apart.
    WithinVarianceNotIdentified {
        /// Clusters.
        clusters: usize,
    },
    /// A cluster-robust test has few Satterthwaite degrees of freedom.
    FewRobustDf {
        /// The degrees of freedom.
        df: f64,
    },
    /// Rows of one sample give different sample sizes.
    SampleSizesDiffer {
        /// The first such sample.
        sample: String,
        /// Its spreadsheet rows.
        rows: Vec<usize>,
        /// How many other samples do the same.
        others: usize,
    },
    /// A part of the analysis does not yet model the sheet's dependent rows.
    DependenceNotModelled {
        /// Which part.
        part: String,
    },
    /// Rows with problems were left out at the user's request.
    RowsSkipped {
        /// How many.
        count: usize,
    },
    /// The workbook's first worksheets are hidden: the first visible one was read.
    HiddenWorksheetsPassedOver {
        /// The worksheet read.
        read: String,
        /// The hidden worksheets before it.
        hidden: Vec<String>,
    },
    /// Cells of the worksheet hold formulas: their stored values were used.
    FormulaCells {
        /// The worksheet.
        worksheet: String,
        /// How many cells hold a formula.
        count: u64,
        /// The first of them ("C4").
        first: String,
    },
    /// Entirely empty rows were passed over.
    EmptyRowsIgnored {
        /// Spreadsheet rows.
        rows: Vec<usize>,
    },
    /// The coding sheet has a `var` column that this transform does not use.
    VarColumnUnused {
        /// Spreadsheet rows holding a value.
        rows: Vec<usize>,
        /// The transform in use.
        transform: String,
    },
    /// Coefficients of both families were pooled because the user allowed it.
    MixedFamiliesPooled,
    /// The chosen transform was designed for the other family of coefficients.
    TransformFamilyMismatch {
        /// The transform in use.
        transform: String,
        /// The family it was designed for.
        designed_for: String,
        /// Spreadsheet rows of the other family.
        rows: Vec<usize>,
    },
    /// Values of a categorical moderator that differ only in case or spaces were taken as
    /// one level.
    LevelSpellings {
        /// The moderator.
        moderator: String,
        /// The level they were merged into (its first spelling).
        level: String,
        /// Every spelling seen.
        spellings: Vec<String>,
        /// Spreadsheet rows with a spelling other than the first.
        rows: Vec<usize>,
    },
    /// Numeric moderators are strongly collinear.
    Collinearity {
        /// The moderators involved.
        moderators: Vec<String>,
        /// The largest variance inflation factor (generalized for categorical moderators,
        /// on the one-column scale).
        vif: f64,
    },
}

impl Warning {
    /// A stable snake_case code for scripts.
    pub fn code(&self) -> &'static str {
        match self {
            Warning::FewStudies { .. } => "few_studies",
            Warning::NoPredictionInterval { .. } | Warning::NoClusterPrediction { .. } => {
                "no_prediction_interval"
            }
            Warning::FewClusters { .. } => "few_clusters",
            Warning::Tau2AtZero { .. } => "tau2_at_zero",
            Warning::NotConverged { .. } => "not_converged",
            Warning::ItemModelNotConverged { .. } => "item_model_not_converged",
            Warning::IntervalCapped { .. } => "interval_capped",
            Warning::CommonEffectAssumed => "common_effect_assumed",
            Warning::CommonEffectContradicted { .. } => "common_effect_contradicted",
            Warning::Tau2OutsideInterval { .. } => "tau2_outside_interval",
            Warning::KnappHartungBelowOne { .. } => "knapp_hartung_below_one",
            Warning::RangeBelowZero { .. } => "range_below_zero",
            Warning::Extrapolation { .. } => "extrapolation",
            Warning::NegativeAlpha { .. } => "negative_alpha",
            Warning::InGroup { warning, .. } => warning.code(),
            Warning::IdentifierColumn { .. } => "identifier_column",
            Warning::ExtremeResponse { .. } => "extreme_response",
            Warning::Inadmissible { .. } => "inadmissible",
            Warning::InadmissibleDraws { .. } => "inadmissible_draws",
            Warning::LowerBoundReliability { .. } => "lower_bound_reliability",
            Warning::UnstableCorrection => "unstable_correction",
            Warning::RowsWithMissingValues { .. } => "rows_with_missing_values",
            Warning::NegativeLoading { .. } => "negative_loading",
            Warning::PartFailed { .. } => "part_failed",
            Warning::RowsLeftOutOfModel { .. } => "rows_left_out_of_model",
            Warning::NegativeCoefficients { .. } => "negative_coefficients",
            Warning::DuplicateLabel { .. } => "duplicate_label",
            Warning::RowsSkipped { .. } => "rows_skipped",
            Warning::DependenceIgnored { .. } => "dependence_ignored",
            Warning::ClusterDependenceRemains { .. } => "cluster_dependence_remains",
            Warning::WithinVarianceNotIdentified { .. } => "within_variance_not_identified",
            Warning::FewRobustDf { .. } => "few_robust_df",
            Warning::SampleSizesDiffer { .. } => "sample_sizes_differ",
            Warning::DependenceNotModelled { .. } => "dependence_not_modelled",
            Warning::EmptyRowsIgnored { .. } => "empty_rows_ignored",
            Warning::HiddenWorksheetsPassedOver { .. } => "hidden_worksheets_passed_over",
            Warning::FormulaCells { .. } => "formula_cells",
            Warning::VarColumnUnused { .. } => "var_column_unused",
            Warning::MixedFamiliesPooled => "mixed_families_pooled",
            Warning::TransformFamilyMismatch { .. } => "transform_family_mismatch",
            Warning::IdentifierLeftOut { .. } => "identifier_left_out",
            Warning::LevelSpellings { .. } => "level_spellings",
            Warning::Collinearity { .. } => "collinearity",
        }
    }
}

/// Rows as "row 3", "rows 3, 7 and 9", or the first few and a count.
pub(crate) fn list_rows(rows: &[usize]) -> String {
    const SHOWN: usize = 8;
    let shown: Vec<String> = rows.iter().take(SHOWN).map(|r| r.to_string()).collect();
    let more = rows.len().saturating_sub(SHOWN);
    match (shown.len(), more) {
        (0, _) => "no rows".to_string(),
        (1, _) => format!("row {}", shown[0]),
        (_, 0) => {
            let (last, first) = shown.split_last().expect("at least two");
            format!("rows {} and {last}", first.join(", "))
        }
        (_, m) => format!("rows {} and {m} more", shown.join(", ")),
    }
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message().render(&PlainNames))
    }
}

impl Warning {
    /// True for warnings that change how the main result reads (dependent rows, few
    /// studies, a lower-bound coefficient, an assumed model, …): the readable summaries
    /// repeat them at their end, so that a summary saved to a file keeps them.
    pub fn changes_reading(&self) -> bool {
        if let Warning::InGroup { warning, .. } = self {
            return warning.changes_reading();
        }
        matches!(
            self,
            Warning::FewStudies { .. }
                | Warning::NoPredictionInterval { .. }
                | Warning::NoClusterPrediction { .. }
                | Warning::FewClusters { .. }
                | Warning::NotConverged { .. }
                | Warning::ItemModelNotConverged { .. }
                | Warning::CommonEffectAssumed
                | Warning::CommonEffectContradicted { .. }
                | Warning::RangeBelowZero { .. }
                | Warning::Extrapolation { .. }
                | Warning::Inadmissible { .. }
                | Warning::LowerBoundReliability { .. }
                | Warning::UnstableCorrection
                | Warning::DuplicateLabel { .. }
                | Warning::DependenceIgnored { .. }
                | Warning::ClusterDependenceRemains { .. }
                | Warning::FewRobustDf { .. }
                | Warning::DependenceNotModelled { .. }
                | Warning::MixedFamiliesPooled
                | Warning::Collinearity { .. }
                | Warning::FormulaCells { .. }
                | Warning::HiddenWorksheetsPassedOver { .. }
        )
    }

    /// The warning's text, with the settings it points to left for the face to name.
    pub fn message(&self) -> Message {
        use Setting as S;
        match self {
            Warning::FewStudies { k } => msg![format!(
                "only {k} studies were pooled: the between-study variance and the prediction \
                 interval rest on very little information; read them as rough and look at the \
                 width of the τ² interval"
            )],
            Warning::FewClusters { clusters } => msg![format!(
                "only {clusters} clusters were pooled: the variance between clusters, the \
                 cluster-robust tests and the prediction interval rest on very little \
                 information (the clusters, not the rows, are the independent units); read \
                 them as rough"
            )],
            Warning::NoClusterPrediction { clusters } => msg![format!(
                "with {clusters} clusters no prediction interval can be given (its t quantile \
                 has clusters − 2 = 0 degrees of freedom); code more papers or samples to \
                 state an expected range"
            )],
            Warning::NoPredictionInterval { k } => msg![format!(
                "with k = {k} studies no prediction interval can be given (its t quantile has \
                 k − 2 = 0 degrees of freedom); code more studies to state an expected range"
            )],
            Warning::Tau2AtZero { estimator } => msg![format!(
                "τ² was estimated at its lower bound of 0 ({estimator}): the coefficients vary no \
                 more than sampling error predicts, so the prediction interval reflects only the \
                 uncertainty of the pooled value; with few studies this is weak evidence that \
                 the true coefficients are equal"
            )],
            Warning::NotConverged { what, iterations } => msg![
                format!(
                    "{what} did not converge within {iterations} iterations: the numbers shown \
                     are the last iterate and may be wrong; try another τ² estimator (e.g. "
                ),
                given(S::Tau2Method, "pm"),
                ") and compare"
            ],
            Warning::ItemModelNotConverged { what, iterations } => format!(
                "{what} did not converge within {iterations} iterations: its numbers are the \
                 last iterate and may be wrong; do not report them (a covariance matrix near \
                 singular, or far more items than the data support, is the usual cause)"
            )
            .into(),
            Warning::IntervalCapped { interval } => msg![
                format!(
                    "the {interval} reached past a coefficient of 1 when mapped back and was cut \
                     at 1; a transform that keeps coefficients below 1 ("
                ),
                given(S::Transform, "bonett"),
                " or ",
                given(S::Transform, "fisher-z"),
                ") avoids this"
            ],
            Warning::CommonEffectAssumed => msg![
                "the common-effect model assumes that every study estimates the same true \
                 coefficient; its intervals ignore between-study variation, so the expected \
                 range for a new setting is too narrow unless that assumption holds"
            ],
            Warning::CommonEffectContradicted { q, df, p } => msg![
                format!(
                    "Cochran's Q ({q:.2} on {df} df, p {}) rejects the common-effect model's \
                     assumption of one true value; use a random-effects model (e.g. ",
                    format::p_value(*p)
                ),
                given(S::Tau2Method, "reml"),
                ") for a benchmark"
            ],
            Warning::Tau2OutsideInterval { tau2, lower, upper } => msg![
                format!(
                    "the τ² estimate ({}) lies outside its Q-profile interval ({} to {}); the \
                     interval rests on the generalized Q statistic, the estimate on another \
                     criterion (ML in particular is biased downwards with few studies); compare \
                     with ",
                    format::significant(*tau2, 3),
                    format::significant(*lower, 3),
                    format::significant(*upper, 3)
                ),
                given(S::Tau2Method, "reml"),
                " or ",
                given(S::Tau2Method, "pm")
            ],
            Warning::KnappHartungBelowOne { scale } => msg![
                format!(
                    "the Knapp–Hartung scale factor is {} (below 0.95): the studies agree more \
                     closely than their sampling variances predict (coefficients rounded to two \
                     decimals can do this), so its intervals are narrower than the Wald \
                     intervals{}; ",
                    format::significant(*scale, 3),
                    if *scale < 1e-6 {
                        " and here have almost no width"
                    } else {
                        ""
                    }
                ),
                given(S::IntervalMethod, "knapp-hartung-floor"),
                " keeps the factor at 1 or more"
            ],
            Warning::RangeBelowZero { lower } => msg![format!(
                "the expected range reaches down to a coefficient of {} (below 0): the studies \
                 differ so much that the benchmark says little about a new setting; look for \
                 moderators that explain the differences",
                format::fixed(*lower, 2)
            )],
            Warning::Extrapolation { what, lower, upper } => msg![format!(
                "{what} lies outside the range of the benchmark studies ({} to {}): the \
                 expectation there is an extrapolation and rests on the model's form, not on \
                 studies like this one",
                format::trimmed(*lower, 4),
                format::trimmed(*upper, 4)
            )],
            Warning::Inadmissible { what, why } => msg![format!(
                "the {what} is impossible: {why}. The likely causes are reliabilities that are \
                 too low (for example coefficient alpha, a lower bound, when the items are not \
                 tau-equivalent) or a sample too small for the observed value; no corrected \
                 number is reported as if it were fine"
            )],
            Warning::InadmissibleDraws { share } => msg![format!(
                "{}% of the draws gave an impossible correction (beyond ±1, an impossible \
                 true-score matrix, or a resample that could not be fitted); read the intervals \
                 with care",
                format::fixed(100.0 * share, 1)
            )],
            Warning::LowerBoundReliability { which, share } => msg![format!(
                "the reliability of {which} is {}coefficient alpha (or a kin of it), a lower \
                 bound unless the items are tau-equivalent: the correction is then too large \
                 (over-correction); if the item data are at hand, relyard items says whether \
                 omega should be used instead",
                if *share < 1.0 {
                    format!(
                        "in part ({}% of the benchmark's studies) ",
                        format::fixed(100.0 * share, 0)
                    )
                } else {
                    String::new()
                }
            )],
            Warning::UnstableCorrection => msg![
                "the correction is unstable here: with correlated, unreliable predictors it \
                 amplifies small differences (standardized slopes beyond ±1 or many impossible \
                 draws); report it as a what-if, not as an estimate"
            ],
            Warning::RowsWithMissingValues { rows, cells } => msg![format!(
                "{} left out for {} (only complete rows are used)",
                if *rows == 1 {
                    "1 respondent was".to_string()
                } else {
                    format!("{} respondents were", format::thousands(*rows))
                },
                format::count(*cells, "missing value", "missing values")
            )],
            Warning::InGroup {
                column,
                level,
                warning,
            } => warning
                .message()
                .prefixed(format!("in the group {column} = {level}: ")),
            Warning::IdentifierColumn {
                column,
                first,
                last,
            } => msg![
                format!(
                    "column {column} counts {}, {}, {}, … {} down the rows like a respondent \
                     number, yet it is analysed as an item; leave it out with ",
                    format::trimmed(*first, 6),
                    format::trimmed(first + 1.0, 6),
                    format::trimmed(first + 2.0, 6),
                    format::trimmed(*last, 9)
                ),
                S::ItemColumns
            ],
            Warning::IdentifierLeftOut { column } => msg![format!(
                "column {column} holds text with a different value for every respondent: it \
                 was taken as an identifier and left out of the items"
            )],
            Warning::ExtremeResponse { column, value } => msg![
                format!(
                    "item {column} has the value {value}, far from its other answers: if it is a \
                     missing-value code (such as −99 or 999), declare it with "
                ),
                S::MissingCodes,
                ", or declare the response scale with ",
                S::ResponseMin,
                " and ",
                S::ResponseMax,
                " to have such values reported"
            ],
            Warning::NegativeAlpha { alpha } => msg![
                format!(
                    "alpha is negative ({}): the items correlate negatively on average, which \
                     usually means items that should be reverse-scored were not (use ",
                    format::fixed(*alpha, 3)
                ),
                S::ReverseKeyed,
                " with ",
                S::ResponseMin,
                " and ",
                S::ResponseMax,
                ")"
            ],
            Warning::NegativeLoading { items } => msg![
                format!(
                    "{} negatively on the common factor: probably worded in reverse and in need \
                     of reverse scoring (",
                    if items.len() == 1 {
                        format!("{} loads", items[0])
                    } else {
                        format!("{} load", format::and_list(items))
                    }
                ),
                S::ReverseKeyed,
                " with ",
                S::ResponseMin,
                " and ",
                S::ResponseMax,
                ")"
            ],
            Warning::PartFailed { what, why } => {
                msg![format!("{what} could not be done, the rest stands: ")].then(why.clone())
            }
            Warning::RowsLeftOutOfModel { rows, why } => msg![format!(
                "{} left out of the model because {why}; {} listed with the results",
                list_rows(rows),
                if rows.len() == 1 { "it is" } else { "they are" }
            )],
            Warning::NegativeCoefficients { rows } => msg![format!(
                "negative coefficients on {}: a negative alpha is a valid estimate but usually \
                 means items that were not reverse-scored, and a negative retest or inter-rater \
                 correlation a coding error; check the source studies",
                list_rows(rows)
            )],
            Warning::DuplicateLabel { label, rows } => msg![format!(
                "the study label \"{label}\" appears on {}; if these are the same sample, pool \
                 only one of them (dependent samples make the intervals too narrow)",
                list_rows(rows)
            )],
            Warning::DependenceIgnored {
                rows,
                samples,
                clusters,
            } => msg![
                format!(
                    "the sheet says its {rows} rows come from {samples} samples in {clusters} \
                     clusters, and they were pooled as if every row were independent: the \
                     confidence and prediction intervals are TOO NARROW and the total N counts \
                     no respondent twice only because it is counted per sample; use "
                ),
                given(S::Dependence, "multilevel"),
                " (the default) or ",
                given(S::Dependence, "aggregate")
            ],
            Warning::ClusterDependenceRemains { samples, clusters } => msg![
                format!(
                    "one composite per sample was pooled ({samples} composites), but they come \
                     from only {clusters} clusters: composites of one cluster are still \
                     related, so the intervals may be too narrow; "
                ),
                given(S::Dependence, "multilevel"),
                " models the clusters"
            ],
            Warning::WithinVarianceNotIdentified { clusters } => msg![format!(
                "each of the {clusters} clusters holds one row, so the variance within clusters \
                 cannot be told from the variance between them: it is held at 0 and the model \
                 is the usual two-level one"
            )],
            Warning::FewRobustDf { df } => msg![
                format!(
                    "the cluster-robust test has only {df:.1} Satterthwaite degrees of freedom \
                     (below 4): its p value and interval are unreliable, typically because a \
                     few clusters carry most of the weight (Tipton 2015); read them with care \
                     or compare with "
                ),
                given(S::Inference, "model")
            ],
            Warning::SampleSizesDiffer {
                sample,
                rows,
                others,
            } => msg![format!(
                "the rows of sample \"{sample}\" ({}) give different sample sizes{}; the total \
                 N counts each sample once, at its largest n — check whether the rows really \
                 share their respondents",
                list_rows(rows),
                match others {
                    0 => String::new(),
                    1 => ", and so do those of one other sample".to_string(),
                    m => format!(
                        ", and so do those of {} other samples",
                        format::thousands(*m as u64)
                    ),
                }
            )],
            Warning::DependenceNotModelled { part } => msg![format!(
                "{part} does not yet model the sheet's samples and clusters: it treats every \
                 row as independent, so its intervals and tests are too narrow when rows share \
                 respondents or a cluster"
            )],
            Warning::RowsSkipped { count } => msg![
                format!(
                    "{} left out (",
                    if *count == 1 {
                        "1 row with problems was".to_string()
                    } else {
                        format!(
                            "{} rows with problems were",
                            format::thousands(*count as u64)
                        )
                    }
                ),
                S::SkipInvalid,
                "); each is listed with its reason"
            ],
            Warning::HiddenWorksheetsPassedOver { read, hidden } => msg![
                format!(
                    "the workbook's first {} hidden ({}), so worksheet \"{read}\", the first \
                     visible one, was read; to read another, name it with ",
                    if hidden.len() == 1 {
                        "worksheet is"
                    } else {
                        "worksheets are"
                    },
                    hidden
                        .iter()
                        .map(|h| format!("\"{}\"", format::quoted(h, 40)))
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
                S::Worksheet
            ],
            Warning::FormulaCells {
                worksheet,
                count,
                first,
            } => {
                let (holds, stored) = if *count == 1 {
                    (
                        "holds a formula",
                        "the value the spreadsheet program last stored for it was",
                    )
                } else {
                    (
                        "hold formulas",
                        "the values the spreadsheet program last stored for them were",
                    )
                };
                let first = if *count == 1 {
                    format!("cell {first}")
                } else {
                    format!("the first is {first}")
                };
                msg![format!(
                    "{} of worksheet \"{worksheet}\" {holds} ({first}); {stored} used — \
                     recalculate and save in the spreadsheet program if in doubt (a file written \
                     by another program may never have been calculated)",
                    format::count(*count, "cell", "cells"),
                )]
            }
            Warning::EmptyRowsIgnored { rows } => {
                msg![format!("entirely empty {} passed over", list_rows(rows))]
            }
            Warning::VarColumnUnused { rows, transform } => msg![
                format!("the var column holds values on {} but ", list_rows(rows)),
                given(S::Transform, transform.clone()),
                " computes its own sampling variances, so they were not used; use ",
                given(S::Transform, "none"),
                " to pool the sheet's own effects and variances"
            ],
            Warning::MixedFamiliesPooled => msg![
                "internal-consistency and correlation-type coefficients were pooled together (",
                S::MixedTypes,
                "); they estimate different kinds of reliability, so the benchmark mixes two \
                 questions"
            ],
            Warning::TransformFamilyMismatch {
                transform,
                designed_for,
                rows,
            } => msg![
                given(S::Transform, transform.clone()),
                format!(
                    " was designed for {designed_for}; its sampling variance is only an \
                     approximation for the coefficients on {}",
                    list_rows(rows)
                )
            ],
            Warning::LevelSpellings {
                moderator,
                level,
                spellings,
                rows,
            } => msg![format!(
                "{moderator}: the values {} on {} differ only in case or spaces and were taken \
                 as one level, \"{level}\"; make the spelling the same in the sheet if they are \
                 meant to be one",
                spellings
                    .iter()
                    .map(|s| format!("\"{s}\""))
                    .collect::<Vec<_>>()
                    .join(", "),
                list_rows(rows)
            )],
            Warning::Collinearity { moderators, vif } => {
                let who = match moderators.as_slice() {
                    [one] => format!("{one} is strongly related to the other moderators"),
                    many => format!(
                        "the moderators {} are strongly related to each other or to the others",
                        format::and_list(many)
                    ),
                };
                msg![format!(
                    "{who} (variance inflation factor {}, above {}): their separate effects are \
                     estimated imprecisely and can change sign when one is dropped; interpret \
                     them together",
                    format::significant(*vif, 3),
                    VIF_LIMIT
                )]
            }
        }
    }
}

/// A variance inflation factor above this draws a collinearity warning (common practice,
/// no source).
pub const VIF_LIMIT: f64 = 10.0;

/// A warning as it appears in JSON output.
#[derive(Debug, Clone, Serialize)]
pub struct WarningRecord {
    /// Stable code.
    pub code: &'static str,
    /// Full message.
    pub message: String,
}

impl WarningRecord {
    /// The record of a warning, its settings named by `names`.
    pub fn new(w: &Warning, names: &dyn SettingNames) -> Self {
        WarningRecord {
            code: w.code(),
            message: w.message().render(names),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn row_lists_read_naturally() {
        assert_eq!(list_rows(&[4]), "row 4");
        assert_eq!(list_rows(&[4, 9]), "rows 4 and 9");
        assert_eq!(list_rows(&[2, 3, 4]), "rows 2, 3 and 4");
        let many: Vec<usize> = (2..20).collect();
        assert!(list_rows(&many).ends_with("and 10 more"));
    }
}
