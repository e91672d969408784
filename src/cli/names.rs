//! The command line's names for the analysis's settings: what a message that points to a
//! setting says on a terminal.

use relyard::Setting;
use relyard::setting::SettingNames;
use std::borrow::Cow;

/// Settings named as the options that set them.
#[derive(Debug, Clone, Copy, Default)]
pub struct OptionNames;

impl SettingNames for OptionNames {
    fn name(&self, s: Setting) -> Cow<'static, str> {
        use Setting::*;
        Cow::Borrowed(match s {
            SheetFile => "the SHEET argument",
            ColumnMap => "--column",
            Delimiter => "--delimiter",
            Worksheet => "--worksheet",
            WorkbookBytes => "--workbook-max-mb",
            WorkbookCells => "--workbook-max-cells",
            SkipInvalid => "--skip-invalid",
            Subset => "--where",
            Transform => "--transform",
            Tau2Method => "--tau2",
            IntervalMethod => "--ci",
            Level => "--level",
            MixedTypes => "--allow-mixed-types",
            Dependence => "--dependence",
            SamplingCorrelation => "--sampling-correlation",
            Inference => "--inference",
            Moderators => "--moderator",
            Categorical => "--categorical",
            ReferenceLevel => "--reference",
            Centring => "--uncentred",
            SpreadMetric => "--spread-metric",
            ScoreSpread => "--score-spread",
            Subgroups => "--by",
            Influence => "--influence",
            Permutations => "--permutations",
            Seed => "--seed",
            Measure => "--measure",
            StudyCoef => "--coef",
            StudyN => "--n",
            StudyItems => "--items",
            StudyCoefType => "--coef-type",
            StudySd => "--sd",
            StudySdMetric => "--sd-metric",
            StudyScaleMin => "--scale-min",
            StudyScaleMax => "--scale-max",
            StudyModerators => "--at",
            InCluster => "--in-cluster",
            ItemFile => "the DATA argument",
            ItemColumns => "--items",
            IccColumns => "--columns",
            ReverseKeyed => "--reverse",
            ResponseMin => "--scale-min",
            ResponseMax => "--scale-max",
            Pairwise => "--pairwise",
            MissingCodes => "--missing-code",
            FactorGroups => "--factor",
            Bootstrap => "--bootstrap",
            Correlation => "--r",
            CorrectionN => "--n",
            ReliabilityX => "--rel-x",
            ReliabilityY => "--rel-y",
            Reliabilities => "--rel",
            RawData => "--data",
            Summary => "--summary",
            Outcome => "--outcome",
            Predictors => "--predictor/--outcome",
            Draws => "--draws",
            Grid => "--grid",
            Samples => "--sample",
            PlanItems => "--items",
            PlanningValue => "--planning",
            Width => "--width",
            NullValue => "--null",
            Power => "--power",
            Significance => "--significance",
            OneSided => "--one-sided",
            OutputFolder => "--out",
            Replace => "--force",
            ExtraColumns => "--extra-column",
            TemplatePath => "the PATH argument",
            _ => return Cow::Borrowed(s.describe()),
        })
    }

    fn with_value(&self, s: Setting, value: &str) -> String {
        match s {
            // A regression's variables are named one by one.
            Setting::Predictors => format!("--predictor/--outcome {value}"),
            Setting::SheetFile | Setting::ItemFile | Setting::TemplatePath => value.to_string(),
            _ => format!("{} {value}", self.name(s)),
        }
    }
}
