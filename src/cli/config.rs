//! Validated configurations built from the raw arguments before any work runs.

use super::args::{PoolArgs, SheetArgs, TemplateArgs};
use super::output::Failure;
use relyard::Error;
use relyard::benchmark::BenchmarkOptions;
use relyard::pool::{CiMethod, Model, PoolOptions};
use relyard::sheet::{ColumnMap, Role, SheetOptions, parse_delimiter};
use relyard::transform::TransformKind;
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
            options: SheetOptions { delimiter, columns },
            skip_invalid: a.skip_invalid,
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

impl PoolConfig {
    pub fn from_args(a: PoolArgs) -> Result<Self, Failure> {
        let sheet = SheetConfig::from_args(a.sheet)?;
        let transform = a
            .transform
            .as_deref()
            .map(|t| t.parse::<TransformKind>())
            .transpose()
            .map_err(|e| bad(format!("--transform: {e}")))?;
        let model: Model = a.tau2.parse().map_err(|e| bad(format!("--tau2: {e}")))?;
        let ci: CiMethod = a.ci.parse().map_err(|e| bad(format!("--ci: {e}")))?;
        if !(a.level > 0.0 && a.level < 1.0) {
            let hint = if a.level > 1.0 && a.level < 100.0 {
                format!(" (for {}% write {})", a.level, a.level / 100.0)
            } else {
                String::new()
            };
            return Err(bad(format!(
                "--level must lie strictly between 0 and 1{hint} (got {})",
                a.level
            )));
        }
        if a.allow_mixed_types && transform.is_none() {
            return Err(bad(
                "--allow-mixed-types needs --transform as well: say on which scale the two kinds \
                 of coefficients are to be pooled",
            ));
        }
        let measure = a
            .measure
            .map(|m| m.trim().to_string())
            .filter(|m| !m.is_empty());
        let skip_invalid = sheet.skip_invalid;
        Ok(PoolConfig {
            sheet,
            benchmark: BenchmarkOptions {
                transform,
                allow_mixed_types: a.allow_mixed_types,
                skip_invalid,
                pool: PoolOptions {
                    model,
                    ci,
                    level: a.level,
                },
            },
            measure,
            show_studies: a.studies,
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
