//! Settings as the library names them, and messages that point to them.
//!
//! The library never speaks one face's language. An error or a warning that points to a
//! setting holds the setting itself (a [`Setting`]), and each face names it its own way:
//! the command line as an option (`--tau2`), a browser page as the label of a control.
//! [`PlainNames`] names them in plain English for every other reader (and for `Display`).

use std::borrow::Cow;
use std::fmt;

/// Every setting an analysis can be given, by what it means (not by how a face spells it).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
#[non_exhaustive]
pub enum Setting {
    // The coding sheet.
    /// The coding sheet's file.
    SheetFile,
    /// The sheet's own names for the standard columns.
    ColumnMap,
    /// The delimiter of a text file.
    Delimiter,
    /// The worksheet of a workbook.
    Worksheet,
    /// The bound on how far a workbook may unpack.
    WorkbookBytes,
    /// The bound on a worksheet's cells with content.
    WorkbookCells,
    /// Leaving invalid rows out instead of stopping.
    SkipInvalid,
    /// The subset of rows analysed (column = value).
    Subset,
    // The model.
    /// The analysis scale.
    Transform,
    /// The τ² estimator (or the common-effect model).
    Tau2Method,
    /// How confidence intervals are formed.
    IntervalMethod,
    /// The confidence level.
    Level,
    /// Pooling internal-consistency and correlation-type coefficients together.
    MixedTypes,
    /// How rows that share a sample or a cluster are pooled.
    Dependence,
    /// The assumed correlation of sampling errors within a sample.
    SamplingCorrelation,
    /// Cluster-robust or model-based inference.
    Inference,
    // Moderators and the explanation.
    /// The moderators of a meta-regression.
    Moderators,
    /// Moderators treated as categories.
    Categorical,
    /// The reference level of a categorical moderator.
    ReferenceLevel,
    /// Whether numeric moderators are centred at their means.
    Centring,
    /// The metric score SDs are put on.
    SpreadMetric,
    /// The score-variance test.
    ScoreSpread,
    /// Benchmarks per level of a column.
    Subgroups,
    /// Leave-one-out diagnostics.
    Influence,
    /// The number of permutations.
    Permutations,
    /// The seed of everything random.
    Seed,
    /// The name of the measure.
    Measure,
    // The new study.
    /// The new study's coefficient.
    StudyCoef,
    /// The new study's sample size.
    StudyN,
    /// The new study's number of items.
    StudyItems,
    /// The kind of the new study's coefficient.
    StudyCoefType,
    /// The new study's score SD.
    StudySd,
    /// Whether the new study's SD is for sum or mean scores.
    StudySdMetric,
    /// The lowest possible item response of the new study's scale.
    StudyScaleMin,
    /// The highest possible item response of the new study's scale.
    StudyScaleMax,
    /// The new study's moderator values.
    StudyModerators,
    /// The known cluster the new study belongs to.
    InCluster,
    // Raw item data.
    /// The item data file.
    ItemFile,
    /// The item columns used.
    ItemColumns,
    /// The columns (occasions or raters) of an intraclass correlation's table.
    IccColumns,
    /// Items to reverse-key.
    ReverseKeyed,
    /// The lowest possible response.
    ResponseMin,
    /// The highest possible response.
    ResponseMax,
    /// Pairwise rather than listwise deletion.
    Pairwise,
    /// Values that mean "missing".
    MissingCodes,
    /// Groups of items (subscales) for the multidimensional models.
    FactorGroups,
    /// Bootstrap replicates.
    Bootstrap,
    // The correction.
    /// The observed correlation to correct.
    Correlation,
    /// The sample size of the correlation or of the study behind a summary.
    CorrectionN,
    /// The reliability of x.
    ReliabilityX,
    /// The reliability of y.
    ReliabilityY,
    /// The reliability of each variable of a regression.
    Reliabilities,
    /// A study's raw data.
    RawData,
    /// A study's summary (covariance or correlation matrix).
    Summary,
    /// The regression's outcome.
    Outcome,
    /// The regression's predictors.
    Predictors,
    /// Monte Carlo draws or bootstrap samples.
    Draws,
    /// Points per reliability in a sensitivity table.
    Grid,
    // Comparing alphas and planning.
    /// Samples given one by one.
    Samples,
    /// The number of items of a planned study.
    PlanItems,
    /// The planning value of alpha.
    PlanningValue,
    /// The desired width of an interval.
    Width,
    /// The alpha to test against.
    NullValue,
    /// The desired power.
    Power,
    /// The significance level.
    Significance,
    /// A one-sided test.
    OneSided,
    // Files written.
    /// The folder a report is written into.
    OutputFolder,
    /// Replacing files that exist.
    Replace,
    /// Extra columns of a template sheet.
    ExtraColumns,
    /// Where a template is written.
    TemplatePath,
}

impl Setting {
    /// The setting in plain English, e.g. "the τ² estimator".
    pub fn describe(self) -> &'static str {
        use Setting::*;
        match self {
            SheetFile => "the coding sheet",
            ColumnMap => "the column mapping",
            Delimiter => "the delimiter",
            Worksheet => "the worksheet",
            WorkbookBytes => "the bound on a workbook's unpacked size",
            WorkbookCells => "the bound on a worksheet's cells",
            SkipInvalid => "leaving invalid rows out",
            Subset => "the subset of rows",
            Transform => "the analysis scale (transform)",
            Tau2Method => "the τ² estimator",
            IntervalMethod => "the interval method",
            Level => "the confidence level",
            MixedTypes => "pooling mixed coefficient types",
            Dependence => "the handling of dependent rows",
            SamplingCorrelation => "the sampling correlation within a sample",
            Inference => "the inference of the multilevel model",
            Moderators => "the moderators",
            Categorical => "the categorical moderators",
            ReferenceLevel => "the reference level",
            Centring => "the centring of numeric moderators",
            SpreadMetric => "the SD metric",
            ScoreSpread => "the score-spread test",
            Subgroups => "the subgroup column",
            Influence => "the influence diagnostics",
            Permutations => "the number of permutations",
            Seed => "the seed",
            Measure => "the name of the measure",
            StudyCoef => "the new study's coefficient",
            StudyN => "the new study's sample size",
            StudyItems => "the new study's number of items",
            StudyCoefType => "the new study's coefficient type",
            StudySd => "the new study's score SD",
            StudySdMetric => "the new study's SD metric",
            StudyScaleMin => "the new study's lowest item response",
            StudyScaleMax => "the new study's highest item response",
            StudyModerators => "the new study's moderator values",
            InCluster => "the new study's cluster",
            ItemFile => "the item data",
            ItemColumns => "the item columns",
            IccColumns => "the columns (occasions or raters)",
            ReverseKeyed => "the reverse-keyed items",
            ResponseMin => "the lowest possible response",
            ResponseMax => "the highest possible response",
            Pairwise => "pairwise deletion",
            MissingCodes => "the missing-value codes",
            FactorGroups => "the groups of items (subscales)",
            Bootstrap => "the bootstrap replicates",
            Correlation => "the observed correlation",
            CorrectionN => "the sample size",
            ReliabilityX => "the reliability of x",
            ReliabilityY => "the reliability of y",
            Reliabilities => "the reliabilities",
            RawData => "the raw data",
            Summary => "the summary matrix",
            Outcome => "the outcome",
            Predictors => "the predictors",
            Draws => "the number of draws",
            Grid => "the sensitivity grid",
            Samples => "the samples",
            PlanItems => "the number of items",
            PlanningValue => "the planning value",
            Width => "the interval width",
            NullValue => "the null value",
            Power => "the power",
            Significance => "the significance level",
            OneSided => "a one-sided test",
            OutputFolder => "the output folder",
            Replace => "replacing existing files",
            ExtraColumns => "the extra columns",
            TemplatePath => "the template's path",
        }
    }
}

/// How a face names settings.
pub trait SettingNames {
    /// The setting alone, e.g. `--tau2` or "the τ² estimator".
    fn name(&self, setting: Setting) -> Cow<'static, str>;

    /// The setting with a value, e.g. `--tau2 pm` or "the τ² estimator pm".
    fn with_value(&self, setting: Setting, value: &str) -> String {
        format!("{} {value}", self.name(setting))
    }
}

/// Settings named in plain English (used by `Display`).
#[derive(Debug, Clone, Copy, Default)]
pub struct PlainNames;

impl SettingNames for PlainNames {
    fn name(&self, setting: Setting) -> Cow<'static, str> {
        Cow::Borrowed(setting.describe())
    }

    fn with_value(&self, setting: Setting, value: &str) -> String {
        format!("{} \"{value}\"", setting.describe())
    }
}

/// One piece of a message: text, a setting, or a setting with a value.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Piece {
    /// Plain text.
    Text(String),
    /// A setting, named by the face.
    Setting(Setting),
    /// A setting with the value to give it, named by the face.
    Value(Setting, String),
}

impl From<&str> for Piece {
    fn from(s: &str) -> Self {
        Piece::Text(s.to_string())
    }
}

impl From<String> for Piece {
    fn from(s: String) -> Self {
        Piece::Text(s)
    }
}

impl From<Setting> for Piece {
    fn from(s: Setting) -> Self {
        Piece::Setting(s)
    }
}

/// A setting with a value, as a piece of a message (`--tau2 pm` on the command line).
pub fn given(setting: Setting, value: impl Into<String>) -> Piece {
    Piece::Value(setting, value.into())
}

/// A message for the reader: text with the settings it points to left for the face to name.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Message(Vec<Piece>);

impl Message {
    /// A message from its pieces.
    pub fn new(pieces: Vec<Piece>) -> Self {
        Message(pieces)
    }

    /// The message with each setting named by `names`.
    pub fn render(&self, names: &dyn SettingNames) -> String {
        let mut out = String::new();
        for p in &self.0 {
            match p {
                Piece::Text(t) => out.push_str(t),
                Piece::Setting(s) => out.push_str(&names.name(*s)),
                Piece::Value(s, v) => out.push_str(&names.with_value(*s, v)),
            }
        }
        out
    }

    /// The settings the message points to, in order.
    pub fn settings(&self) -> impl Iterator<Item = Setting> + '_ {
        self.0.iter().filter_map(|p| match p {
            Piece::Setting(s) | Piece::Value(s, _) => Some(*s),
            Piece::Text(_) => None,
        })
    }

    /// The same message with `prefix` put before it.
    pub fn prefixed(mut self, prefix: impl Into<Piece>) -> Self {
        self.0.insert(0, prefix.into());
        self
    }

    /// This message followed by another.
    pub fn then(mut self, other: Message) -> Self {
        self.0.extend(other.0);
        self
    }

    /// The same message with `suffix` put after it.
    pub fn followed_by(mut self, suffix: impl Into<Piece>) -> Self {
        self.0.push(suffix.into());
        self
    }
}

impl From<&str> for Message {
    fn from(s: &str) -> Self {
        Message(vec![Piece::from(s)])
    }
}

impl From<String> for Message {
    fn from(s: String) -> Self {
        Message(vec![Piece::from(s)])
    }
}

impl fmt::Display for Message {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.render(&PlainNames))
    }
}

/// A [`Message`] from pieces: text (`&str` or `String`), a [`Setting`], or [`given`].
///
/// `msg!["the sheet needs ", Setting::Transform, " to be set"]`
macro_rules! msg {
    ($($piece:expr),* $(,)?) => {
        $crate::setting::Message::new(vec![$($crate::setting::Piece::from($piece)),*])
    };
}
pub(crate) use msg;

#[cfg(test)]
mod tests {
    use super::*;

    struct Options;
    impl SettingNames for Options {
        fn name(&self, s: Setting) -> Cow<'static, str> {
            match s {
                Setting::Tau2Method => "--tau2".into(),
                other => other.describe().into(),
            }
        }
    }

    #[test]
    fn faces_name_the_settings_their_own_way() {
        let m = msg![
            "try ",
            given(Setting::Tau2Method, "pm"),
            " or change ",
            Setting::Tau2Method
        ];
        assert_eq!(m.render(&Options), "try --tau2 pm or change --tau2");
        assert_eq!(
            m.to_string(),
            "try the τ² estimator \"pm\" or change the τ² estimator"
        );
        assert_eq!(
            m.settings().collect::<Vec<_>>(),
            [Setting::Tau2Method, Setting::Tau2Method]
        );
    }
}
