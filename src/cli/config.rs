//! Validated configurations built from the raw arguments before any work runs.

use super::args::{
    CheckArgs, ExplainArgs, ItemsArgs, ModelArgs, ModeratorArgs, PoolArgs, SheetArgs, TemplateArgs,
};
use super::output::Failure;
use relyard::Error;
use relyard::benchmark::BenchmarkOptions;
use relyard::items::{ItemReadOptions, Missing};
use relyard::metareg::spread::SpreadMetric;
use relyard::metareg::{ModeratorKind, ModeratorSpec};
use relyard::placement::NewStudy;
use relyard::pool::{CiMethod, FitOptions, Model, PoolOptions};
use relyard::sheet::{CoefType, ColumnMap, Role, SdMetric, SheetOptions, parse_delimiter};
use relyard::transform::TransformKind;
use std::collections::BTreeMap;
use std::path::PathBuf;

fn bad(msg: impl Into<String>) -> Failure {
    Failure::Lib(Error::InvalidOption(msg.into()))
}

/// Where the sheet is and how to read it.
#[derive(Debug)]
pub struct SheetConfig {
    pub path: PathBuf,
    pub options: SheetOptions,
    pub skip_invalid: bool,
}

impl SheetConfig {
    fn from_args(a: SheetArgs) -> Result<Self, Failure> {
        let mut columns = ColumnMap::new();
        for spec in &a.columns {
            columns.insert_spec(spec).map_err(bad)?;
        }
        let delimiter = a
            .delimiter
            .as_deref()
            .map(parse_delimiter)
            .transpose()
            .map_err(|e| bad(format!("--delimiter: {e}")))?;
        Ok(SheetConfig {
            path: a.sheet,
            options: SheetOptions {
                delimiter,
                columns,
                worksheet: a.worksheet,
            },
            skip_invalid: a.skip_invalid,
        })
    }
}

/// Turn the model options into benchmark options.
fn benchmark_options(m: ModelArgs, skip_invalid: bool) -> Result<BenchmarkOptions, Failure> {
    let transform = m
        .transform
        .as_deref()
        .map(|t| t.parse::<TransformKind>())
        .transpose()
        .map_err(|e| bad(format!("--transform: {e}")))?;
    let model: Model = m.tau2.parse().map_err(|e| bad(format!("--tau2: {e}")))?;
    let ci: CiMethod = m.ci.parse().map_err(|e| bad(format!("--ci: {e}")))?;
    if !(m.level > 0.0 && m.level < 1.0) {
        let hint = if m.level > 1.0 && m.level < 100.0 {
            format!(" (for {}% write {})", m.level, m.level / 100.0)
        } else {
            String::new()
        };
        return Err(bad(format!(
            "--level must lie strictly between 0 and 1{hint} (got {})",
            m.level
        )));
    }
    if m.allow_mixed_types && transform.is_none() {
        return Err(bad(
            "--allow-mixed-types needs --transform as well: say on which scale the two kinds \
             of coefficients are to be pooled",
        ));
    }
    Ok(BenchmarkOptions {
        transform,
        allow_mixed_types: m.allow_mixed_types,
        skip_invalid,
        pool: PoolOptions {
            model,
            ci,
            level: m.level,
        },
    })
}

/// The fit options of a benchmark's model.
pub fn fit_options(b: &BenchmarkOptions) -> FitOptions {
    FitOptions {
        model: b.pool.model,
        ci: b.pool.ci,
        level: b.pool.level,
        tau2_interval: true,
    }
}

/// Moderators as the library wants them, and the SD metric.
#[derive(Debug)]
pub struct ModeratorConfig {
    pub specs: Vec<ModeratorSpec>,
    pub spread_metric: Option<SpreadMetric>,
}

/// The new study's moderator values from `--at NAME=VALUE` options (names matched to the
/// moderators ignoring case).
pub fn at_values(
    specs: &[String],
    moderators: &ModeratorConfig,
) -> Result<BTreeMap<String, String>, Failure> {
    let mut at = BTreeMap::new();
    for spec in specs {
        let (name, value) = spec
            .split_once('=')
            .ok_or_else(|| bad(format!("--at takes NAME=VALUE (got \"{spec}\")")))?;
        let name = moderators
            .specs
            .iter()
            .find(|s| s.name.eq_ignore_ascii_case(name.trim()))
            .map(|s| s.name.clone())
            .unwrap_or_else(|| name.trim().to_string());
        if at.insert(name.clone(), value.trim().to_string()).is_some() {
            return Err(bad(format!("--at {name} is given twice")));
        }
    }
    Ok(at)
}

impl ModeratorConfig {
    pub fn from_args(a: ModeratorArgs) -> Result<Self, Failure> {
        let mut specs: Vec<ModeratorSpec> = a
            .moderators
            .iter()
            .map(|m| ModeratorSpec::auto(m.trim()))
            .collect();
        for c in &a.categorical {
            let spec = specs
                .iter_mut()
                .find(|s| s.name.eq_ignore_ascii_case(c.trim()))
                .ok_or_else(|| {
                    bad(format!(
                        "--categorical {c}: {c} is not given as --moderator"
                    ))
                })?;
            spec.kind = ModeratorKind::Categorical;
        }
        for r in &a.references {
            let (name, level) = r
                .split_once('=')
                .ok_or_else(|| bad(format!("--reference takes NAME=LEVEL (got \"{r}\")")))?;
            let spec = specs
                .iter_mut()
                .find(|s| s.name.eq_ignore_ascii_case(name.trim()))
                .ok_or_else(|| {
                    bad(format!(
                        "--reference {r}: {name} is not given as --moderator"
                    ))
                })?;
            if spec.reference.is_some() {
                return Err(bad(format!("--reference for {name} is given twice")));
            }
            spec.reference = Some(level.trim().to_string());
        }
        let spread_metric = a
            .spread_metric
            .as_deref()
            .map(|m| m.parse::<SpreadMetric>())
            .transpose()
            .map_err(|e| bad(format!("--spread-metric: {e}")))?;
        Ok(ModeratorConfig {
            specs,
            spread_metric,
        })
    }
}

/// `relyard pool`.
#[derive(Debug)]
pub struct PoolConfig {
    pub sheet: SheetConfig,
    pub benchmark: BenchmarkOptions,
    pub measure: Option<String>,
    pub show_studies: bool,
    pub json: bool,
}

fn measure_name(m: Option<String>) -> Option<String> {
    m.map(|m| m.trim().to_string()).filter(|m| !m.is_empty())
}

impl PoolConfig {
    pub fn from_args(a: PoolArgs) -> Result<Self, Failure> {
        let sheet = SheetConfig::from_args(a.sheet)?;
        let benchmark = benchmark_options(a.model, sheet.skip_invalid)?;
        Ok(PoolConfig {
            sheet,
            benchmark,
            measure: measure_name(a.measure),
            show_studies: a.studies,
            json: a.json,
        })
    }
}

/// `relyard explain`.
#[derive(Debug)]
pub struct ExplainConfig {
    pub sheet: SheetConfig,
    pub benchmark: BenchmarkOptions,
    pub moderators: ModeratorConfig,
    pub score_spread: bool,
    pub by: Option<String>,
    pub influence: bool,
    pub permutations: Option<usize>,
    pub seed: u64,
    pub json: bool,
}

impl ExplainConfig {
    pub fn from_args(a: ExplainArgs) -> Result<Self, Failure> {
        let sheet = SheetConfig::from_args(a.sheet)?;
        let benchmark = benchmark_options(a.model, sheet.skip_invalid)?;
        let moderators = ModeratorConfig::from_args(a.moderators)?;
        if moderators.specs.is_empty() && !a.score_spread && a.by.is_none() && !a.influence {
            return Err(bad(
                "nothing to explain: give --moderator NAME, --score-spread, --by COLUMN or \
                 --influence",
            ));
        }
        if let Some(n) = a.permutations {
            if moderators.specs.is_empty() {
                return Err(bad(
                    "--permutations tests moderators; give at least one --moderator",
                ));
            }
            if n == 0 {
                return Err(bad("--permutations must be at least 1"));
            }
        }
        if moderators.spread_metric.is_some() && !a.score_spread {
            return Err(bad("--spread-metric applies to --score-spread"));
        }
        Ok(ExplainConfig {
            sheet,
            benchmark,
            moderators,
            score_spread: a.score_spread,
            by: a.by.map(|b| b.trim().to_string()),
            influence: a.influence,
            permutations: a.permutations,
            seed: a.seed,
            json: a.json,
        })
    }
}

/// `relyard check`.
#[derive(Debug)]
pub struct CheckConfig {
    pub sheet: SheetConfig,
    pub benchmark: BenchmarkOptions,
    pub moderators: ModeratorConfig,
    pub study: NewStudy,
    pub at: BTreeMap<String, String>,
    pub measure: Option<String>,
    pub json: bool,
}

impl CheckConfig {
    pub fn from_args(a: CheckArgs) -> Result<Self, Failure> {
        let sheet = SheetConfig::from_args(a.sheet)?;
        let benchmark = benchmark_options(a.model, sheet.skip_invalid)?;
        let moderators = ModeratorConfig::from_args(a.moderators)?;
        if !a.coef.is_finite() {
            return Err(bad("--coef must be a finite number"));
        }
        let coef_type = CoefType::parse_cell(&a.study.coef_type).ok_or_else(|| {
            let names: Vec<&str> = CoefType::ALL.iter().map(|t| t.name()).collect();
            bad(format!(
                "--coef-type {}: unknown coefficient type (use one of: {})",
                a.study.coef_type,
                names.join(", ")
            ))
        })?;
        let sd_metric = a
            .study
            .sd_metric
            .as_deref()
            .map(|m| {
                SdMetric::parse_cell(m)
                    .ok_or_else(|| bad(format!("--sd-metric {m}: use sum or mean")))
            })
            .transpose()?;
        if let Some(sd) = a.study.sd
            && !(sd.is_finite() && sd > 0.0)
        {
            return Err(bad(format!("--sd must be a number above 0 (got {sd})")));
        }
        if a.study.sd.is_none()
            && (sd_metric.is_some() || a.study.scale_min.is_some() || a.study.scale_max.is_some())
        {
            return Err(bad(
                "--sd-metric, --scale-min and --scale-max describe --sd; give --sd too",
            ));
        }
        if let (Some(lo), Some(hi)) = (a.study.scale_min, a.study.scale_max)
            && lo >= hi
        {
            return Err(bad("--scale-max must be above --scale-min"));
        }
        let at = at_values(&a.study.at, &moderators)?;
        Ok(CheckConfig {
            sheet,
            benchmark,
            moderators,
            study: NewStudy {
                coef: a.coef,
                coef_type,
                n: a.n,
                items: a.study.items,
                sd: a.study.sd,
                sd_metric,
                scale_min: a.study.scale_min,
                scale_max: a.study.scale_max,
            },
            at,
            measure: measure_name(a.measure),
            json: a.json,
        })
    }
}

/// `relyard items`.
#[derive(Debug)]
pub struct ItemsConfig {
    pub path: PathBuf,
    pub read: ItemReadOptions,
    pub bootstrap: Option<usize>,
    pub seed: u64,
    pub level: f64,
    pub json: bool,
}

impl ItemsConfig {
    pub fn from_args(a: ItemsArgs) -> Result<Self, Failure> {
        let delimiter = a
            .delimiter
            .as_deref()
            .map(parse_delimiter)
            .transpose()
            .map_err(|e| bad(format!("--delimiter: {e}")))?;
        let scale = match (a.scale_min, a.scale_max) {
            (Some(lo), Some(hi)) if lo < hi => Some((lo, hi)),
            (Some(_), Some(_)) => return Err(bad("--scale-max must be above --scale-min")),
            (None, None) => None,
            _ => return Err(bad("give both --scale-min and --scale-max, or neither")),
        };
        if !(a.level > 0.0 && a.level < 1.0) {
            return Err(bad(format!(
                "--level must lie strictly between 0 and 1 (got {})",
                a.level
            )));
        }
        if a.bootstrap.is_some_and(|b| b < 2) {
            return Err(bad(
                "--bootstrap needs at least 2 replicates (1,000 or more for an interval)",
            ));
        }
        let items: Vec<String> = a
            .items
            .iter()
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .collect();
        Ok(ItemsConfig {
            path: a.data,
            read: ItemReadOptions {
                delimiter,
                items: (!items.is_empty()).then_some(items),
                reverse: a
                    .reverse
                    .iter()
                    .map(|s| s.trim().to_string())
                    .filter(|s| !s.is_empty())
                    .collect(),
                scale,
                missing: if a.pairwise {
                    Missing::Pairwise
                } else {
                    Missing::Listwise
                },
                keep_rows: a.bootstrap.is_some(),
            },
            bootstrap: a.bootstrap,
            seed: a.seed,
            level: a.level,
            json: a.json,
        })
    }
}

/// `relyard template`.
#[derive(Debug)]
pub struct TemplateConfig {
    pub sheet_path: PathBuf,
    pub dictionary_path: PathBuf,
    pub extra_columns: Vec<String>,
    pub force: bool,
}

impl TemplateConfig {
    pub fn from_args(a: TemplateArgs) -> Result<Self, Failure> {
        let mut extra: Vec<String> = Vec::new();
        for e in &a.extra_columns {
            let name = e.trim();
            if name.is_empty() {
                return Err(bad("--extra-column needs a name"));
            }
            if name.contains([',', ';', '\t', '"', '\n']) {
                return Err(bad(format!(
                    "--extra-column \"{name}\": a column name cannot hold a delimiter or quote"
                )));
            }
            if name.parse::<Role>().is_ok() {
                return Err(bad(format!(
                    "--extra-column \"{name}\" is already a standard column of the sheet"
                )));
            }
            if extra.iter().any(|x| x.eq_ignore_ascii_case(name)) {
                return Err(bad(format!("--extra-column \"{name}\" is given twice")));
            }
            extra.push(name.to_string());
        }
        let stem = a
            .path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "coding-sheet".into());
        let dictionary_path = a.path.with_file_name(format!("{stem}-dictionary.csv"));
        Ok(TemplateConfig {
            sheet_path: a.path,
            dictionary_path,
            extra_columns: extra,
            force: a.force,
        })
    }
}
