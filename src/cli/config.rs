//! The raw arguments turned into the analysis's `Settings` before any work runs: every
//! command goes args → config → `analysis::run` → a rendering.

use super::args::{
    CheckArgs, CiArg, CoefTypeArg, CompareArgs, CorrectArgs, DelimiterArg, DependenceArg,
    ExplainArgs, IccArgs, InferenceArg, ItemsArgs, ModelArgs, ModeratorArgs, PlanArgs, PoolArgs,
    ReportArgs, ScoreItemArgs, SdMetricArg, SheetArgs, SpreadMetricArg, StudyArgs, Tau2Arg,
    TemplateArgs, TransformArg,
};
use super::output::{Failure, UsageError};
use relyard::Level;
use relyard::analysis::{
    ComparisonSettings, CorrectionSettings, ExplainSettings, FactorSpec, ItemSettings,
    ModelSettings, ModeratorSettings, NewStudySettings, PlanSettings, RegressionData, Settings,
    SheetSettings, SubsetRule,
};
use relyard::compare::AlphaSample;
use relyard::correct::ReliabilitySpec;
use relyard::items::{ItemReadOptions, Missing};
use relyard::metareg::spread::SpreadMetric;
use relyard::metareg::{Centring, ModeratorKind, ModeratorSpec};
use relyard::placement::NewStudy;
use relyard::pool::dependence::{DependenceMethod, DependenceOptions, Inference};
use relyard::pool::{CiMethod, Model, Tau2Estimator};
use relyard::sheet::{CoefType, ColumnMap, Role, SdMetric, SheetOptions, same_name};
use relyard::transform::TransformKind;
use std::collections::BTreeMap;
use std::path::PathBuf;

fn usage(msg: impl Into<String>) -> Failure {
    Failure::Usage(UsageError(msg.into()))
}

impl From<TransformArg> for TransformKind {
    fn from(t: TransformArg) -> Self {
        match t {
            TransformArg::Bonett => TransformKind::Bonett,
            TransformArg::HakstianWhalen => TransformKind::HakstianWhalen,
            TransformArg::FisherZ => TransformKind::FisherZ,
            TransformArg::Raw => TransformKind::Raw,
            TransformArg::None => TransformKind::None,
        }
    }
}

impl From<Tau2Arg> for Model {
    fn from(t: Tau2Arg) -> Self {
        match t {
            Tau2Arg::Reml => Model::Random(Tau2Estimator::Reml),
            Tau2Arg::Ml => Model::Random(Tau2Estimator::Ml),
            Tau2Arg::Dl => Model::Random(Tau2Estimator::Dl),
            Tau2Arg::Pm => Model::Random(Tau2Estimator::Pm),
            Tau2Arg::Sj => Model::Random(Tau2Estimator::Sj),
            Tau2Arg::He => Model::Random(Tau2Estimator::He),
            Tau2Arg::Common => Model::Common,
        }
    }
}

impl From<CiArg> for CiMethod {
    fn from(c: CiArg) -> Self {
        match c {
            CiArg::KnappHartung => CiMethod::KnappHartung,
            CiArg::KnappHartungFloor => CiMethod::KnappHartungFloor,
            CiArg::Wald => CiMethod::Wald,
        }
    }
}

impl From<SpreadMetricArg> for SpreadMetric {
    fn from(m: SpreadMetricArg) -> Self {
        match m {
            SpreadMetricArg::PerItem => SpreadMetric::PerItem,
            SpreadMetricArg::Pomp => SpreadMetric::Pomp,
        }
    }
}

impl From<SdMetricArg> for SdMetric {
    fn from(m: SdMetricArg) -> Self {
        match m {
            SdMetricArg::Sum => SdMetric::Sum,
            SdMetricArg::Mean => SdMetric::Mean,
        }
    }
}

impl From<CoefTypeArg> for CoefType {
    fn from(t: CoefTypeArg) -> Self {
        match t {
            CoefTypeArg::Alpha => CoefType::Alpha,
            CoefTypeArg::AlphaStd => CoefType::AlphaStd,
            CoefTypeArg::Kr20 => CoefType::Kr20,
            CoefTypeArg::Omega => CoefType::Omega,
            CoefTypeArg::Retest => CoefType::Retest,
            CoefTypeArg::Interrater => CoefType::Interrater,
            CoefTypeArg::SplitHalf => CoefType::SplitHalf,
        }
    }
}

impl From<DelimiterArg> for u8 {
    fn from(d: DelimiterArg) -> Self {
        match d {
            DelimiterArg::Comma => b',',
            DelimiterArg::Semicolon => b';',
            DelimiterArg::Tab => b'\t',
        }
    }
}

/// `NAME=VALUE` pairs of a repeatable option, names matched as column names are.
fn pairs(option: &str, what: &str, specs: &[String]) -> Result<Vec<(String, String)>, Failure> {
    let mut out: Vec<(String, String)> = Vec::new();
    for spec in specs {
        let (name, value) = spec
            .split_once('=')
            .ok_or_else(|| usage(format!("{option} takes {what} (got \"{spec}\")")))?;
        let (name, value) = (name.trim(), value.trim());
        if name.is_empty() {
            return Err(usage(format!("{option} {spec}: the name is empty")));
        }
        if out.iter().any(|(n, _)| same_name(n, name)) {
            return Err(usage(format!("{option} {name} is given twice")));
        }
        out.push((name.to_string(), value.to_string()));
    }
    Ok(out)
}

/// A confidence level.
fn level(x: f64) -> Result<Level, Failure> {
    Ok(Level::new(x)?)
}

/// Where the sheet is and how to read it.
fn sheet_settings(a: SheetArgs) -> Result<SheetSettings, Failure> {
    let mut columns = ColumnMap::new();
    for spec in &a.columns {
        columns
            .insert_spec(spec)
            .map_err(|e| usage(format!("--column: {e}")))?;
    }
    let subset = pairs("--where", "COLUMN=VALUE", &a.subset)?
        .into_iter()
        .map(|(column, value)| SubsetRule { column, value })
        .collect();
    Ok(SheetSettings {
        path: a.sheet,
        bytes: None,
        read: SheetOptions {
            delimiter: a.delimiter.map(u8::from),
            columns,
            worksheet: a.worksheet,
            workbook: a.workbook.limits(),
        },
        skip_invalid: a.skip_invalid,
        subset,
    })
}

/// The benchmark model.
fn model_settings(m: &ModelArgs) -> Result<ModelSettings, Failure> {
    if m.allow_mixed_types && m.transform.is_none() {
        return Err(usage(
            "--allow-mixed-types needs --transform as well: say on which scale the two kinds \
             of coefficients are to be pooled",
        ));
    }
    let r = m.sampling_correlation;
    if !(0.0..1.0).contains(&r) {
        return Err(usage(format!(
            "--sampling-correlation {r}: the sampling correlation must be at least 0 and \
             below 1"
        )));
    }
    Ok(ModelSettings {
        transform: m.transform.map(TransformKind::from),
        model: m.tau2.into(),
        interval: m.ci.into(),
        mixed_types: m.allow_mixed_types,
        dependence: DependenceOptions {
            method: m.dependence.map(|d| match d {
                DependenceArg::Multilevel => DependenceMethod::Multilevel,
                DependenceArg::Aggregate => DependenceMethod::Aggregate,
                DependenceArg::Ignore => DependenceMethod::Ignore,
            }),
            sampling_correlation: r,
            inference: m.inference.map(|i| match i {
                InferenceArg::Robust => Inference::Robust,
                InferenceArg::Model => Inference::Model,
            }),
        },
    })
}

/// Moderators as the analysis wants them.
fn moderator_settings(a: ModeratorArgs) -> Result<ModeratorSettings, Failure> {
    let mut specs: Vec<ModeratorSpec> = a
        .moderators
        .iter()
        .map(|m| ModeratorSpec::auto(m.trim()))
        .collect();
    for c in &a.categorical {
        let spec = specs
            .iter_mut()
            .find(|s| same_name(&s.name, c))
            .ok_or_else(|| {
                usage(format!(
                    "--categorical {c}: {c} is not given as --moderator"
                ))
            })?;
        spec.kind = ModeratorKind::Categorical;
    }
    for (name, level) in pairs("--reference", "NAME=LEVEL", &a.references)? {
        let spec = specs
            .iter_mut()
            .find(|s| same_name(&s.name, &name))
            .ok_or_else(|| {
                usage(format!(
                    "--reference {name}={level}: {name} is not given as --moderator"
                ))
            })?;
        spec.reference = Some(level);
    }
    Ok(ModeratorSettings {
        specs,
        spread_metric: a.spread_metric.map(SpreadMetric::from),
        centring: if a.uncentred {
            Centring::None
        } else {
            Centring::Means
        },
    })
}

/// The new study's moderator values from `--at NAME=VALUE`, named as the moderators are.
fn at_values(
    specs: &[String],
    moderators: &ModeratorSettings,
) -> Result<BTreeMap<String, String>, Failure> {
    Ok(pairs("--at", "NAME=VALUE", specs)?
        .into_iter()
        .map(|(name, value)| {
            let name = moderators
                .specs
                .iter()
                .find(|s| same_name(&s.name, &name))
                .map(|s| s.name.clone())
                .unwrap_or(name);
            (name, value)
        })
        .collect())
}

fn measure_name(m: Option<String>) -> Option<String> {
    m.map(|m| m.trim().to_string()).filter(|m| !m.is_empty())
}

/// A sheet-based run's settings: the sheet, the model and the level.
fn base(sheet: SheetArgs, model: &ModelArgs) -> Result<Settings, Failure> {
    Ok(Settings {
        sheet: Some(sheet_settings(sheet)?),
        model: model_settings(model)?,
        level: level(model.level)?,
        ..Settings::default()
    })
}

/// `relyard pool`.
pub fn pool(a: PoolArgs) -> Result<Settings, Failure> {
    let mut s = base(a.sheet, &a.model)?;
    s.benchmark = true;
    s.measure = measure_name(a.measure);
    Ok(s)
}

/// `relyard explain`.
pub fn explain(a: ExplainArgs) -> Result<Settings, Failure> {
    let mut s = base(a.sheet, &a.model)?;
    s.moderators = moderator_settings(a.moderators)?;
    if s.moderators.specs.is_empty() && !a.score_spread && a.by.is_none() && !a.influence {
        return Err(usage(
            "nothing to explain: give --moderator NAME, --score-spread, --by COLUMN or \
             --influence",
        ));
    }
    if let Some(n) = a.permutations {
        if s.moderators.specs.is_empty() {
            return Err(usage(
                "--permutations tests moderators; give at least one --moderator",
            ));
        }
        if n == 0 {
            return Err(usage("--permutations must be at least 1"));
        }
    }
    if s.moderators.spread_metric.is_some() && !a.score_spread {
        return Err(usage("--spread-metric applies to --score-spread"));
    }
    s.explain = Some(ExplainSettings {
        score_spread: a.score_spread,
        by: a.by.map(|b| b.trim().to_string()),
        influence: a.influence,
        permutations: a.permutations,
    });
    s.seed = a.seed;
    Ok(s)
}

/// The new study from `--coef`, `--n` and what else is known of it.
fn new_study(
    coef: f64,
    n: u64,
    study: &StudyArgs,
    moderators: &ModeratorSettings,
) -> Result<NewStudySettings, Failure> {
    if !coef.is_finite() {
        return Err(usage("--coef must be a finite number"));
    }
    if let Some(sd) = study.sd
        && !(sd.is_finite() && sd > 0.0)
    {
        return Err(usage(format!("--sd must be a number above 0 (got {sd})")));
    }
    if study.sd.is_none()
        && (study.sd_metric.is_some() || study.scale_min.is_some() || study.scale_max.is_some())
    {
        return Err(usage(
            "--sd-metric, --scale-min and --scale-max describe --sd; give --sd too",
        ));
    }
    if let (Some(lo), Some(hi)) = (study.scale_min, study.scale_max)
        && lo >= hi
    {
        return Err(usage("--scale-max must be above --scale-min"));
    }
    Ok(NewStudySettings {
        study: NewStudy {
            coef,
            coef_type: study.coef_type.into(),
            n,
            items: study.items,
            sd: study.sd,
            sd_metric: study.sd_metric.map(SdMetric::from),
            scale_min: study.scale_min,
            scale_max: study.scale_max,
        },
        at: at_values(&study.at, moderators)?,
        in_cluster: study
            .in_cluster
            .as_ref()
            .map(|c| c.trim().to_string())
            .filter(|c| !c.is_empty()),
    })
}

/// `relyard check`.
pub fn check(a: CheckArgs) -> Result<Settings, Failure> {
    let mut s = base(a.sheet, &a.model)?;
    s.moderators = moderator_settings(a.moderators)?;
    s.new_study = Some(new_study(a.coef, a.n, &a.study, &s.moderators)?);
    s.measure = measure_name(a.measure);
    Ok(s)
}

/// A file argument, with `-` for standard input.
fn input_path(p: PathBuf) -> PathBuf {
    if p.as_os_str() == "-" {
        PathBuf::from("/dev/stdin")
    } else {
        p
    }
}

/// `relyard items`.
/// `relyard icc`.
pub fn icc(a: IccArgs) -> Result<Settings, Failure> {
    if let Some(c) = a.missing_codes.iter().find(|c| !c.is_finite()) {
        return Err(usage(format!("--missing-code {c} is not a finite number")));
    }
    let columns: Vec<String> = a
        .columns
        .iter()
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .collect();
    Ok(Settings {
        icc: Some(ItemSettings {
            path: input_path(a.data),
            bytes: None,
            read: ItemReadOptions {
                delimiter: a.delimiter.map(u8::from),
                items: (!columns.is_empty()).then_some(columns),
                missing_codes: a.missing_codes,
                worksheet: a.worksheet,
                workbook: a.workbook.limits(),
                ..ItemReadOptions::default()
            },
            bootstrap: None,
            ordinal: false,
            factors: Vec::new(),
        }),
        level: level(a.level)?,
        ..Settings::default()
    })
}

pub fn items(a: ItemsArgs) -> Result<Settings, Failure> {
    let scale = match (a.scale_min, a.scale_max) {
        (Some(lo), Some(hi)) if lo < hi => Some((lo, hi)),
        (Some(_), Some(_)) => return Err(usage("--scale-max must be above --scale-min")),
        (None, None) => None,
        _ => return Err(usage("give both --scale-min and --scale-max, or neither")),
    };
    if a.bootstrap.is_some_and(|b| b < 2) {
        return Err(usage(
            "--bootstrap needs at least 2 replicates (1,000 or more for an interval)",
        ));
    }
    if let Some(c) = a.missing_codes.iter().find(|c| !c.is_finite()) {
        return Err(usage(format!("--missing-code {c} is not a finite number")));
    }
    let names = |v: &[String]| -> Vec<String> {
        v.iter()
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .collect()
    };
    let items = names(&a.items);
    if a.ordinal && a.pairwise {
        return Err(usage(
            "--ordinal counts the respondents who answered every item, so it does not go with \
             --pairwise",
        ));
    }
    Ok(Settings {
        items: Some(ItemSettings {
            path: input_path(a.data),
            bytes: None,
            read: ItemReadOptions {
                delimiter: a.delimiter.map(u8::from),
                items: (!items.is_empty()).then_some(items),
                reverse: names(&a.reverse),
                scale,
                missing: if a.pairwise {
                    Missing::Pairwise
                } else {
                    Missing::Listwise
                },
                missing_codes: a.missing_codes,
                worksheet: a.worksheet,
                workbook: a.workbook.limits(),
                ..ItemReadOptions::default()
            },
            bootstrap: a.bootstrap,
            ordinal: a.ordinal,
            factors: a
                .factors
                .iter()
                .enumerate()
                .map(|(i, f)| parse_factor(f, i, &a.factors))
                .collect::<Result<_, _>>()?,
        }),
        level: level(a.level)?,
        seed: a.seed,
        ..Settings::default()
    })
}

/// Parse `--factor NAME=ITEM,ITEM,…` (the `index`-th of `all`, for the repeated-name check).
fn parse_factor(spec: &str, index: usize, all: &[String]) -> Result<FactorSpec, Failure> {
    let Some((name, items)) = spec.split_once('=') else {
        return Err(usage(format!(
            "--factor {spec:?}: give a group's name and its items, as NAME=ITEM,ITEM,…"
        )));
    };
    let name = name.trim();
    let items: Vec<String> = items
        .split(',')
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .collect();
    if name.is_empty() || items.is_empty() {
        return Err(usage(format!(
            "--factor {spec:?}: give a group's name and at least one item, as NAME=ITEM,ITEM,…"
        )));
    }
    if let Some(twice) = items
        .iter()
        .enumerate()
        .find(|(i, it)| items[..*i].contains(it))
    {
        return Err(usage(format!(
            "--factor {spec:?}: {} is named twice in the group",
            twice.1
        )));
    }
    let earlier = all[..index]
        .iter()
        .any(|s| s.split_once('=').is_some_and(|(n, _)| n.trim() == name));
    if earlier {
        return Err(usage(format!(
            "--factor: the group name {name:?} is given twice"
        )));
    }
    Ok(FactorSpec {
        name: name.to_string(),
        items,
    })
}

/// Parse `ALPHA,N,ITEMS` or `LABEL=ALPHA,N,ITEMS`.
fn parse_sample(spec: &str, index: usize) -> Result<AlphaSample, Failure> {
    let (label, rest) = match spec.split_once('=') {
        Some((l, r)) => (l.trim().to_string(), r),
        None => (format!("sample {index}"), spec),
    };
    let parts: Vec<&str> = rest.split(',').map(str::trim).collect();
    let bad = || {
        usage(format!(
            "--sample {spec}: write ALPHA,N,ITEMS, e.g. 0.81,120,10"
        ))
    };
    if parts.len() != 3 {
        return Err(bad());
    }
    Ok(AlphaSample {
        label,
        alpha: parts[0].parse().map_err(|_| bad())?,
        n: parts[1].parse().map_err(|_| bad())?,
        items: parts[2].parse().map_err(|_| bad())?,
    })
}

/// `relyard compare`.
pub fn compare(a: CompareArgs) -> Result<Settings, Failure> {
    let sheet = match a.sheet {
        Some(path) => Some(sheet_settings(SheetArgs {
            sheet: path,
            columns: a.columns,
            delimiter: None,
            worksheet: a.worksheet,
            workbook: a.workbook,
            skip_invalid: a.skip_invalid,
            subset: a.subset,
        })?),
        None => {
            if !a.columns.is_empty() || !a.subset.is_empty() || a.skip_invalid {
                return Err(usage(
                    "--column, --where and --skip-invalid describe a sheet; name the sheet",
                ));
            }
            None
        }
    };
    let mut samples = Vec::new();
    for (i, spec) in a.samples.iter().enumerate() {
        samples.push(parse_sample(spec, i + 1)?);
    }
    if sheet.is_none() && samples.len() < 2 {
        return Err(usage(
            "compare needs at least two samples (a sheet, or --sample ALPHA,N,ITEMS twice)",
        ));
    }
    Ok(Settings {
        sheet,
        comparison: Some(ComparisonSettings { samples }),
        ..Settings::default()
    })
}

/// `relyard plan`.
pub fn plan(a: PlanArgs) -> Result<Settings, Failure> {
    let plan = match (a.width, a.null) {
        (Some(width), None) => PlanSettings::Width {
            items: a.items,
            planning: a.planning,
            width,
        },
        (None, Some(null)) => PlanSettings::Test {
            items: a.items,
            planning: a.planning,
            null,
            power: a.power,
            significance: a.significance,
            one_sided: a.one_sided,
        },
        _ => {
            return Err(usage(
                "say what to plan for: --width W (an interval of that width) or --null ALPHA (a \
                 test against that value)",
            ));
        }
    };
    Ok(Settings {
        plan: Some(plan),
        level: level(a.level)?,
        ..Settings::default()
    })
}

/// A reliability from its command-line spec.
fn reliability(option: &str, spec: &str) -> Result<ReliabilitySpec, Failure> {
    ReliabilitySpec::parse(spec).map_err(|e| usage(format!("{option}: {e}")))
}

/// The draws of a correction: enough for percentile intervals.
fn check_draws(draws: usize) -> Result<(), Failure> {
    if draws < 100 {
        return Err(usage(
            "--draws needs at least 100 (percentile intervals from fewer are meaningless)",
        ));
    }
    Ok(())
}

/// `relyard correct`.
pub fn correct(a: CorrectArgs) -> Result<Settings, Failure> {
    if a.grid < 2 {
        return Err(usage("--grid needs at least 2 points"));
    }
    check_draws(a.draws)?;
    let correction = match (a.r, &a.data, &a.summary) {
        (Some(r), None, None) => correlation(&a, r)?,
        (None, Some(_), None) | (None, None, Some(_)) => regression(&a)?,
        (None, None, None) => {
            return Err(usage(
                "say what to correct: --r with --n, --rel-x and --rel-y (a correlation), or \
                 --data / --summary with --outcome, --predictor and --rel (a regression)",
            ));
        }
        _ => {
            return Err(usage(
                "--r corrects a correlation; --data and --summary a regression: give one",
            ));
        }
    };
    Ok(Settings {
        correction: Some(correction),
        level: level(a.level)?,
        seed: a.seed,
        ..Settings::default()
    })
}

fn correlation(a: &CorrectArgs, r: f64) -> Result<CorrectionSettings, Failure> {
    let n =
        a.n.ok_or_else(|| usage("--r needs --n, the correlation's sample size"))?;
    let si = &a.score_items;
    if a.rel_x.is_none() && si.items_x.is_none() {
        return Err(usage(
            "--r needs the reliability of x: --rel-x, or its item data with --items-x",
        ));
    }
    if a.rel_y.is_none() && si.items_y.is_none() {
        return Err(usage(
            "--r needs the reliability of y: --rel-y, or its item data with --items-y",
        ));
    }
    if !a.predictors.is_empty() || a.outcome.is_some() || !a.rels.is_empty() {
        return Err(usage(
            "--predictor, --outcome and --rel belong to a regression (--data or --summary)",
        ));
    }
    let spec =
        |flag: &str, s: &Option<String>| s.as_ref().map(|s| reliability(flag, s)).transpose();
    Ok(CorrectionSettings::Correlation {
        r,
        n,
        rel_x: spec("--rel-x", &a.rel_x)?,
        rel_y: spec("--rel-y", &a.rel_y)?,
        items_x: score_items(si, &a.missing_codes, Score::X)?,
        items_y: score_items(si, &a.missing_codes, Score::Y)?,
        draws: a.draws,
        grid: a.grid,
    })
}

/// Which score of a correlation.
#[derive(Clone, Copy)]
enum Score {
    X,
    Y,
}

/// The item data of one score of a correlation to correct, with its own columns, reverse
/// keying and subscales (the scale's bounds and missing-value codes shared).
fn score_items(
    a: &ScoreItemArgs,
    missing_codes: &[f64],
    which: Score,
) -> Result<Option<Box<ItemSettings>>, Failure> {
    let (file, columns, reverse, factors) = match which {
        Score::X => (&a.items_x, &a.x_columns, &a.x_reverse, &a.x_factors),
        Score::Y => (&a.items_y, &a.y_columns, &a.y_reverse, &a.y_factors),
    };
    let Some(file) = file else {
        return Ok(None);
    };
    if let Some(c) = missing_codes.iter().find(|c| !c.is_finite()) {
        return Err(usage(format!("--missing-code {c} is not a finite number")));
    }
    // The scale's bounds serve reverse keying: they apply to a score with reversed items.
    let scale = match (a.items_scale_min, a.items_scale_max) {
        _ if reverse.is_empty() => None,
        (Some(lo), Some(hi)) if lo < hi => Some((lo, hi)),
        (Some(_), Some(_)) => {
            return Err(usage("--items-scale-max must be above --items-scale-min"));
        }
        _ => {
            return Err(usage(
                "reverse keying needs the scale's bounds: give --items-scale-min and \
                 --items-scale-max",
            ));
        }
    };
    let names = |v: &[String]| -> Vec<String> {
        v.iter()
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .collect()
    };
    let columns = names(columns);
    Ok(Some(Box::new(ItemSettings {
        path: input_path(file.clone()),
        bytes: None,
        read: ItemReadOptions {
            items: (!columns.is_empty()).then_some(columns),
            reverse: names(reverse),
            scale,
            missing_codes: missing_codes.to_vec(),
            ..ItemReadOptions::default()
        },
        bootstrap: None,
        ordinal: false,
        factors: factors
            .iter()
            .enumerate()
            .map(|(i, f)| parse_factor(f, i, factors))
            .collect::<Result<_, _>>()?,
    })))
}

fn regression(a: &CorrectArgs) -> Result<CorrectionSettings, Failure> {
    let outcome = a
        .outcome
        .clone()
        .ok_or_else(|| usage("a regression needs --outcome"))?;
    if a.predictors.is_empty() {
        return Err(usage("a regression needs at least one --predictor"));
    }
    for (i, p) in a.predictors.iter().enumerate() {
        if a.predictors[..i].contains(p) {
            return Err(usage(format!("--predictor {p} is given twice")));
        }
    }
    if a.predictors.contains(&outcome) {
        return Err(usage(format!(
            "{outcome} is both the outcome and a predictor"
        )));
    }
    if a.rel_x.is_some() || a.rel_y.is_some() {
        return Err(usage(
            "--rel-x and --rel-y belong to a correlation; use --rel NAME=SPEC for a regression",
        ));
    }
    let (predictors, outcome_reliability) = regression_reliabilities(a, &outcome)?;
    let si = &a.score_items;
    if (si.items_x.is_some() || si.items_y.is_some()) && a.predictors.len() != 1 {
        return Err(usage(
            "--items-x and --items-y compare coefficients for a regression with one predictor \
             (x) and its outcome (y); give one --predictor",
        ));
    }
    Ok(CorrectionSettings::Regression {
        data: regression_data(a)?,
        outcome,
        predictors,
        outcome_reliability,
        items_x: score_items(si, &a.missing_codes, Score::X)?,
        items_y: score_items(si, &a.missing_codes, Score::Y)?,
        draws: a.draws,
        grid: a.grid,
    })
}

/// Each predictor's reliability and the outcome's, from `--rel NAME=SPEC`.
#[allow(clippy::type_complexity)]
fn regression_reliabilities(
    a: &CorrectArgs,
    outcome: &str,
) -> Result<(Vec<(String, ReliabilitySpec)>, Option<ReliabilitySpec>), Failure> {
    let mut rels: BTreeMap<String, String> = BTreeMap::new();
    for spec in &a.rels {
        let (name, value) = spec
            .split_once('=')
            .ok_or_else(|| usage(format!("--rel takes NAME=SPEC (got \"{spec}\")")))?;
        if rels
            .insert(name.trim().to_string(), value.trim().to_string())
            .is_some()
        {
            return Err(usage(format!("--rel {name} is given twice")));
        }
    }
    let mut predictors = Vec::new();
    for p in &a.predictors {
        let spec = rels.remove(p).ok_or_else(|| {
            usage(format!(
                "--rel {p}=… is missing: give each predictor's reliability (1 for a predictor \
                 measured without error)"
            ))
        })?;
        predictors.push((p.clone(), reliability(&format!("--rel {p}"), &spec)?));
    }
    let outcome_reliability = match rels.remove(outcome) {
        Some(spec) => Some(reliability(&format!("--rel {outcome}"), &spec)?),
        None => None,
    };
    if let Some(extra) = rels.keys().next() {
        return Err(usage(format!(
            "--rel {extra}=…: {extra} is neither a predictor nor the outcome"
        )));
    }
    Ok((predictors, outcome_reliability))
}

/// The regression's data: raw data (`--data`) or a summary matrix with its n.
fn regression_data(a: &CorrectArgs) -> Result<RegressionData, Failure> {
    Ok(match (&a.data, &a.summary) {
        (Some(path), _) => {
            if a.n.is_some() {
                return Err(usage("--n comes from the data with --data; leave it out"));
            }
            RegressionData::Raw {
                path: input_path(path.clone()),
                bytes: None,
                read: ItemReadOptions {
                    delimiter: a.delimiter.map(u8::from),
                    missing_codes: a.missing_codes.clone(),
                    worksheet: a.worksheet.clone(),
                    workbook: a.workbook.limits(),
                    ..ItemReadOptions::default()
                },
            }
        }
        (None, Some(path)) => {
            let n =
                a.n.ok_or_else(|| usage("--summary needs --n, the study's sample size"))?;
            if n < 5 {
                return Err(usage("--n must be at least 5"));
            }
            RegressionData::Summary {
                path: path.clone(),
                bytes: None,
                n,
            }
        }
        (None, None) => unreachable!("checked by the caller"),
    })
}

/// `relyard report`: every part the options ask for, in one run.
pub fn report(a: ReportArgs) -> Result<Settings, Failure> {
    check_report_parts(&a)?;
    let mut s = base(a.sheet, &a.model)?;
    s.benchmark = true;
    s.figures = true;
    s.seed = a.seed;
    s.measure = measure_name(a.measure);
    s.moderators = moderator_settings(a.moderators)?;
    if s.moderators.spread_metric.is_some() && !a.score_spread {
        return Err(usage("--spread-metric applies to --score-spread"));
    }
    if !s.moderators.specs.is_empty() || a.score_spread {
        s.explain = Some(ExplainSettings {
            score_spread: a.score_spread,
            ..ExplainSettings::default()
        });
    }
    let at = at_values(&a.study.at, &s.moderators)?;
    if let (Some(coef), Some(n)) = (a.coef, a.n) {
        s.new_study = Some(new_study(coef, n, &a.study, &s.moderators)?);
    }
    let items_y = score_items(&a.score_items, &[], Score::Y)?;
    if let (Some(r), Some(n), true) = (a.r, a.n, a.rel_y.is_some() || items_y.is_some()) {
        s.correction = Some(CorrectionSettings::Correlation {
            r,
            n,
            rel_x: Some(report_measure_reliability(a.coef, n, &a.study, at)?),
            rel_y: a
                .rel_y
                .as_ref()
                .map(|y| reliability("--rel-y", y))
                .transpose()?,
            items_x: score_items(&a.score_items, &[], Score::X)?,
            items_y,
            draws: a.draws,
            grid: 5,
        });
    }
    Ok(s)
}

/// The report's parts need each other: a new study needs --coef and --n, a correction
/// --r, --n and --rel-y; options that describe a part need that part.
fn check_report_parts(a: &ReportArgs) -> Result<(), Failure> {
    if (a.r.is_some() || a.coef.is_some()) && a.n.is_none() {
        return Err(usage(
            "--coef and --r need --n, the new study's sample size",
        ));
    }
    let items = &a.score_items;
    if a.r.is_some() && a.rel_y.is_none() && items.items_y.is_none() {
        return Err(usage(
            "--r needs --rel-y, the reliability of the other score (e.g. 0.85, or \
             0.85,n=200,items=6), or its item data with --items-y",
        ));
    }
    if (a.rel_y.is_some() || items.items_x.is_some() || items.items_y.is_some()) && a.r.is_none() {
        return Err(usage(
            "--rel-y, --items-x and --items-y belong to a correction: give --r too",
        ));
    }
    if a.coef.is_none() {
        for (given, name) in [
            (a.study.items.is_some(), "--items"),
            (a.study.sd.is_some(), "--sd"),
            (a.study.sd_metric.is_some(), "--sd-metric"),
            (
                a.study.scale_min.is_some() || a.study.scale_max.is_some(),
                "--scale-min/--scale-max",
            ),
        ] {
            if given {
                return Err(usage(format!(
                    "{name} describes the new study: give its --coef and --n too"
                )));
            }
        }
        if !a.study.at.is_empty() && a.r.is_none() {
            return Err(usage(
                "--at gives the new study's moderator values: give its --coef and --n, or --r",
            ));
        }
    }
    if a.r.is_some() {
        check_draws(a.draws)?;
    }
    Ok(())
}

/// The measure's reliability in the report's correction: the new study's own coefficient
/// when given, else the benchmark of this report (same sheet, model and moderators, at
/// --at).
fn report_measure_reliability(
    coef: Option<f64>,
    n: u64,
    study: &StudyArgs,
    at: BTreeMap<String, String>,
) -> Result<ReliabilitySpec, Failure> {
    let kind = Some(CoefType::from(study.coef_type));
    let rel_x = match (coef, study.items) {
        (Some(value), Some(items)) => ReliabilitySpec::Estimate {
            value,
            n,
            items,
            kind,
        },
        (Some(value), None) => ReliabilitySpec::Point { value, kind },
        _ => ReliabilitySpec::ThisBenchmark { at },
    };
    if let ReliabilitySpec::Point { value, .. } | ReliabilitySpec::Estimate { value, .. } = rel_x
        && !(value > 0.0 && value <= 1.0)
    {
        return Err(usage(format!(
            "--coef {value} cannot serve as the measure's reliability in the correction (it \
             must lie above 0 and at most 1)"
        )));
    }
    Ok(rel_x)
}

/// `relyard template`.
#[derive(Debug)]
pub struct TemplateConfig {
    pub sheet_path: PathBuf,
    /// The dictionary's own file (`None` for a workbook, which holds it as a worksheet).
    pub dictionary_path: Option<PathBuf>,
    pub extra_columns: Vec<String>,
    pub force: bool,
}

impl TemplateConfig {
    pub fn from_args(a: TemplateArgs) -> Result<Self, Failure> {
        let mut extra: Vec<String> = Vec::new();
        for e in &a.extra_columns {
            let name = e.trim();
            if name.is_empty() {
                return Err(usage("--extra-column needs a name"));
            }
            if name.contains([',', ';', '\t', '"', '\n']) {
                return Err(usage(format!(
                    "--extra-column \"{name}\": a column name cannot hold a delimiter or quote"
                )));
            }
            if name.parse::<Role>().is_ok() {
                return Err(usage(format!(
                    "--extra-column \"{name}\" is already a standard column of the sheet"
                )));
            }
            if extra.iter().any(|x| same_name(x, name)) {
                return Err(usage(format!("--extra-column \"{name}\" is given twice")));
            }
            extra.push(name.to_string());
        }
        let stem = a
            .path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "coding-sheet".into());
        let extension = a
            .path
            .extension()
            .map(|e| e.to_string_lossy().to_ascii_lowercase())
            .unwrap_or_default();
        let dictionary_path = match extension.as_str() {
            "xlsx" => None,
            "xls" | "xlsm" | "xlsb" | "ods" | "numbers" => {
                return Err(usage(format!(
                    "{}: template writes a CSV file (with its dictionary beside it) or an .xlsx \
                     workbook (with the dictionary on a second worksheet), not .{extension}; \
                     give a name ending in .csv or .xlsx",
                    a.path.display()
                )));
            }
            _ => Some(a.path.with_file_name(format!("{stem}-dictionary.csv"))),
        };
        Ok(TemplateConfig {
            sheet_path: a.path,
            dictionary_path,
            extra_columns: extra,
            force: a.force,
        })
    }
}
