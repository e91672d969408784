//! `relyard correct`: what-if correction for measurement error.

use super::args::CorrectArgs;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::bar;
use relyard::correct::correlation::{CorrelationInput, correct_correlation};
use relyard::correct::regression::{RegressionInput, correct_regression};
use relyard::correct::summary::read_summary;
use relyard::correct::{ReliabilitySource, ReliabilitySpec, resolve};
use relyard::items::{ItemReadOptions, Missing, read_items};
use relyard::pool::{CiMethod, FitOptions, Model, Tau2Estimator};
use relyard::report::correct::{
    CorrelationDocument, RegressionDocument, correlation_summary, regression_summary,
};
use relyard::{Error, Warning};
use std::collections::BTreeMap;

fn bad(msg: impl Into<String>) -> Failure {
    Failure::Lib(Error::InvalidOption(msg.into()))
}

/// Benchmarks behind reliabilities are fitted with the defaults of `relyard pool`.
fn benchmark_fit(level: f64) -> FitOptions {
    FitOptions {
        model: Model::Random(Tau2Estimator::Reml),
        ci: CiMethod::KnappHartung,
        level,
        tau2_interval: false,
    }
}

pub fn source(option: &str, spec: &str, level: f64) -> Result<ReliabilitySource, Failure> {
    let parsed = ReliabilitySpec::parse(spec).map_err(|e| bad(format!("{option}: {e}")))?;
    Ok(resolve(&parsed, &benchmark_fit(level))?)
}

fn emit<T: serde::Serialize>(doc: &T) -> Result<(), Failure> {
    print_json(doc)
}

pub fn run(a: CorrectArgs) -> Result<(), Failure> {
    if !(a.level > 0.0 && a.level < 1.0) {
        return Err(bad(format!(
            "--level must lie strictly between 0 and 1 (got {})",
            a.level
        )));
    }
    if a.grid < 2 {
        return Err(bad("--grid needs at least 2 points"));
    }
    match (a.r, &a.data, &a.summary) {
        (Some(_), None, None) => correlation(a),
        (None, Some(_), None) | (None, None, Some(_)) => regression(a),
        (None, None, None) => Err(bad(
            "say what to correct: --r with --n, --rel-x and --rel-y (a correlation), or --data / \
             --summary with --outcome, --predictor and --rel (a regression)",
        )),
        _ => Err(bad(
            "--r corrects a correlation; --data and --summary a regression: give one",
        )),
    }
}

/// The corrected correlation and its warnings (shared with `relyard report`).
#[allow(clippy::too_many_arguments)]
pub fn correlation_result(
    r: f64,
    n: u64,
    (rel_x, rel_y): (ReliabilitySource, ReliabilitySource),
    draws: usize,
    seed: u64,
    level: f64,
    grid: usize,
) -> Result<
    (
        CorrelationInput,
        relyard::correct::correlation::CorrelationCorrection,
        Vec<Warning>,
    ),
    Failure,
> {
    let input = CorrelationInput { r, n, rel_x, rel_y };
    let pb = bar(draws, "draws");
    let c = correct_correlation(&input, draws, seed, level, grid, &|d| pb.inc(d as u64))?;
    pb.finish_and_clear();
    let mut warnings = Vec::new();
    if !c.admissible {
        warnings.push(Warning::Inadmissible {
            what: "corrected correlation".into(),
            why: format!(
                "r / √(r_xx · r_yy) = {:.3} lies beyond ±1",
                c.corrected_value
            ),
        });
    }
    if c.inadmissible_share > 0.0 {
        warnings.push(Warning::InadmissibleDraws {
            share: c.inadmissible_share,
        });
    }
    for (name, r) in [("x", &input.rel_x), ("y", &input.rel_y)] {
        if let Some(share) = r.lower_bound_share() {
            warnings.push(Warning::LowerBoundReliability {
                which: name.into(),
                share,
            });
        }
    }
    Ok((input, c, warnings))
}

fn correlation(a: CorrectArgs) -> Result<(), Failure> {
    let n =
        a.n.ok_or_else(|| bad("--r needs --n, the correlation's sample size"))?;
    if a.draws < 100 {
        return Err(bad(
            "--draws needs at least 100 (percentile intervals from fewer are meaningless)",
        ));
    }
    let (Some(rx), Some(ry)) = (&a.rel_x, &a.rel_y) else {
        return Err(bad(
            "--r needs --rel-x and --rel-y, the reliabilities of the two scores",
        ));
    };
    if !a.predictors.is_empty() || a.outcome.is_some() || !a.rels.is_empty() {
        return Err(bad(
            "--predictor, --outcome and --rel belong to a regression (--data or --summary)",
        ));
    }
    let (input, c, warnings) = correlation_result(
        a.r.expect("checked"),
        n,
        (
            source("--rel-x", rx, a.level)?,
            source("--rel-y", ry, a.level)?,
        ),
        a.draws,
        a.seed,
        a.level,
        a.grid,
    )?;
    warn_all(&warnings);
    if a.json {
        emit(&CorrelationDocument::new(
            &c,
            n,
            &input.rel_x,
            &input.rel_y,
            a.level,
            &warnings,
        ))
    } else {
        print(&correlation_summary(
            &c,
            n,
            &input.rel_x,
            &input.rel_y,
            a.level,
        ))
    }
}

fn regression(a: CorrectArgs) -> Result<(), Failure> {
    let outcome = a
        .outcome
        .clone()
        .ok_or_else(|| bad("a regression needs --outcome"))?;
    if a.predictors.is_empty() {
        return Err(bad("a regression needs at least one --predictor"));
    }
    for (i, p) in a.predictors.iter().enumerate() {
        if a.predictors[..i].contains(p) {
            return Err(bad(format!("--predictor {p} is given twice")));
        }
    }
    if a.predictors.contains(&outcome) {
        return Err(bad(format!(
            "{outcome} is both the outcome and a predictor"
        )));
    }
    if a.draws < 100 {
        return Err(bad(
            "--draws needs at least 100 (percentile intervals from fewer are meaningless)",
        ));
    }
    if a.rel_x.is_some() || a.rel_y.is_some() {
        return Err(bad(
            "--rel-x and --rel-y belong to a correlation; use --rel NAME=SPEC for a regression",
        ));
    }
    let mut rels: BTreeMap<String, String> = BTreeMap::new();
    for spec in &a.rels {
        let (name, value) = spec
            .split_once('=')
            .ok_or_else(|| bad(format!("--rel takes NAME=SPEC (got \"{spec}\")")))?;
        if rels
            .insert(name.trim().to_string(), value.trim().to_string())
            .is_some()
        {
            return Err(bad(format!("--rel {name} is given twice")));
        }
    }
    let mut rel = Vec::new();
    for p in &a.predictors {
        let spec = rels.remove(p).ok_or_else(|| {
            bad(format!("--rel {p}=… is missing: give each predictor's reliability (1 for a predictor measured without error)"))
        })?;
        rel.push(source(&format!("--rel {p}"), &spec, a.level)?);
    }
    let rel_y = match rels.remove(&outcome) {
        Some(spec) => Some(source(&format!("--rel {outcome}"), &spec, a.level)?),
        None => None,
    };
    if let Some(extra) = rels.keys().next() {
        return Err(bad(format!(
            "--rel {extra}=…: {extra} is neither a predictor nor the outcome"
        )));
    }
    let mut names = a.predictors.clone();
    names.push(outcome.clone());
    let mut extra_warnings: Vec<Warning> = Vec::new();
    let input = if let Some(path) = &a.data {
        if a.n.is_some() {
            return Err(bad("--n comes from the data with --data; leave it out"));
        }
        let delimiter = a
            .delimiter
            .as_deref()
            .map(relyard::sheet::parse_delimiter)
            .transpose()
            .map_err(|e| bad(format!("--delimiter: {e}")))?;
        let data = read_items(
            path,
            &ItemReadOptions {
                delimiter,
                items: Some(names.clone()),
                reverse: Vec::new(),
                scale: None,
                missing: Missing::Listwise,
                keep_rows: true,
            },
        )
        .map_err(|e| e.reword_option("--items", "--predictor/--outcome"))?;
        if data.missing_cells > 0 {
            extra_warnings.push(Warning::RowsWithMissingValues {
                rows: data.rows_read - data.complete_rows,
                cells: data.missing_cells,
            });
        }
        RegressionInput {
            predictors: a.predictors.clone(),
            outcome: outcome.clone(),
            cov: data.moments.cov.clone(),
            n: data.complete_rows,
            rel,
            rel_y,
            rows: data.rows.clone(),
            standardized_only: false,
            data_note: Some(format!(
                "{}: {} rows read; {} respondents with every variable used{}",
                path.display(),
                data.rows_read,
                data.complete_rows,
                if data.missing_cells > 0 {
                    format!(
                        " ({} left out for {} missing cell(s))",
                        data.rows_read - data.complete_rows,
                        data.missing_cells
                    )
                } else {
                    String::new()
                }
            )),
        }
    } else {
        let path = a.summary.as_ref().expect("checked");
        let n =
            a.n.ok_or_else(|| bad("--summary needs --n, the study's sample size"))?;
        if n < 5 {
            return Err(bad("--n must be at least 5"));
        }
        let s = read_summary(path)?;
        let idx: Result<Vec<usize>, Failure> = names
            .iter()
            .map(|v| {
                s.names.iter().position(|x| x == v).ok_or_else(|| {
                    bad(format!(
                        "{}: no variable {v} (its variables are: {})",
                        path.display(),
                        s.names.join(", ")
                    ))
                })
            })
            .collect();
        let idx = idx?;
        RegressionInput {
            predictors: a.predictors.clone(),
            outcome: outcome.clone(),
            cov: s.cov.select_rows(&idx).select_columns(&idx),
            n,
            rel,
            rel_y,
            rows: None,
            standardized_only: s.standardized_only,
            data_note: None,
        }
    };
    let variables = input.predictors.len() + 1;
    if input.n < variables as u64 + 3 {
        return Err(bad(format!(
            "n = {} is too small for {} variables: a regression with {} predictor(s) needs at least \
             {} respondents",
            input.n,
            variables,
            input.predictors.len(),
            variables + 3
        )));
    }
    let pb = bar(
        a.draws,
        if input.rows.is_some() {
            "bootstrap"
        } else {
            "draws"
        },
    );
    let c = correct_regression(&input, a.draws, a.seed, a.level, a.grid, &|d| {
        pb.inc(d as u64)
    })?;
    pb.finish_and_clear();
    let mut warnings = extra_warnings;
    if let Ok(k) = &c.estimate.corrected
        && (k.standardized.iter().any(|s| s.abs() > 1.0) || c.inadmissible_share > 0.2)
    {
        warnings.push(Warning::UnstableCorrection);
    }
    if let Err(why) = &c.estimate.corrected {
        warnings.push(Warning::Inadmissible {
            what: "corrected regression".into(),
            why: why.clone(),
        });
    }
    if c.inadmissible_share > 0.0 {
        warnings.push(Warning::InadmissibleDraws {
            share: c.inadmissible_share,
        });
    }
    let outcome_rel = input.rel_y.as_ref().map(|r| (&input.outcome, r));
    for (name, r) in input.predictors.iter().zip(&input.rel).chain(outcome_rel) {
        if let Some(share) = r.lower_bound_share() {
            warnings.push(Warning::LowerBoundReliability {
                which: name.clone(),
                share,
            });
        }
    }
    warn_all(&warnings);
    if a.json {
        emit(&RegressionDocument::new(&input, &c, a.level, &warnings))
    } else {
        print(&regression_summary(&input, &c, a.level))
    }
}
