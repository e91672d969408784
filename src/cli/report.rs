//! `relyard report`: the benchmark, its moderators, a new study's placement and a
//! correction, written as report.html, report.md, results.json and figure files.
//!
//! Each part is computed by the same code as its own command (`pool`, `explain`, `check`,
//! `correct`), and the report is written from those commands' JSON documents.

use super::args::{CheckArgs, ExplainArgs, PoolArgs, ReportArgs};
use super::config::{
    CheckConfig, ExplainConfig, ModeratorConfig, PoolConfig, at_values, fit_options,
};
use super::output::{Failure, print, warn_all, write_new_bytes, write_new_file};
use relyard::Error;
use relyard::metareg::Moderator;
use relyard::report::check::CheckDocument;
use relyard::report::correct::CorrelationDocument;
use relyard::report::document::{RenderedFigure, ReportContent};
use relyard::report::explain::ExplainDocument;
use relyard::report::figures;
use relyard::report::json::PoolDocument;
use relyard::report::regema::{RunScope, checklist};
use sha2::{Digest, Sha256};

fn bad(msg: impl Into<String>) -> Failure {
    Failure::Lib(Error::InvalidOption(msg.into()))
}

fn value<T: serde::Serialize>(doc: &T) -> Result<serde_json::Value, Failure> {
    serde_json::to_value(doc)
        .map_err(|e| Failure::Lib(Error::Numerical(format!("could not form JSON: {e}"))))
}

/// A file stem not yet taken (moderator names that differ only in punctuation).
fn unique(name: String, taken: &mut Vec<String>) -> String {
    let mut candidate = name.clone();
    let mut i = 2;
    while taken.contains(&candidate) {
        candidate = format!("{name}-{i}");
        i += 1;
    }
    taken.push(candidate.clone());
    candidate
}

/// Stems of the figures relyard writes (earlier ones are cleared with --force).
fn is_report_figure(stem: &str) -> bool {
    matches!(
        stem,
        "forest" | "precision" | "score-spread" | "placement" | "correction"
    ) || stem.starts_with("moderator-")
}

pub fn run(a: ReportArgs) -> Result<(), Failure> {
    let options: Vec<String> = std::env::args_os()
        .skip(1)
        .map(|s| s.to_string_lossy().into_owned())
        .collect();
    let out = a.out.clone();
    let names = ["report.html", "report.md", "results.json"];
    if !a.force
        && let Some(existing) = names.iter().map(|n| out.join(n)).find(|p| p.exists())
    {
        return Err(bad(format!(
            "{} already exists; choose another --out folder or pass --force to replace the report",
            existing.display()
        )));
    }
    if (a.r.is_some() || a.coef.is_some()) && a.n.is_none() {
        return Err(bad("--coef and --r need --n, the new study's sample size"));
    }
    if a.r.is_some() && a.rel_y.is_none() {
        return Err(bad(
            "--r needs --rel-y, the reliability of the other score (e.g. 0.85, or 0.85,n=200,items=6)",
        ));
    }
    if a.rel_y.is_some() && a.r.is_none() {
        return Err(bad("--rel-y belongs to a correction: give --r too"));
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
                return Err(bad(format!(
                    "{name} describes the new study: give its --coef and --n too"
                )));
            }
        }
        if !a.study.at.is_empty() && a.r.is_none() {
            return Err(bad(
                "--at gives the new study's moderator values: give its --coef and --n, or --r",
            ));
        }
    }
    if a.r.is_some() && a.draws < 100 {
        return Err(bad(
            "--draws needs at least 100 (percentile intervals from fewer are meaningless)",
        ));
    }
    let at = at_values(
        &a.study.at,
        &ModeratorConfig::from_args(a.moderators.clone())?,
    )?;
    let bytes = relyard::sheet::read_sheet_bytes(&a.sheet.sheet)?;
    let sha256: String = Sha256::digest(&bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect();

    // The benchmark, as relyard pool.
    let pool_config = PoolConfig::from_args(PoolArgs {
        sheet: a.sheet.clone(),
        model: a.model.clone(),
        measure: a.measure.clone(),
        studies: false,
        json: true,
    })?;
    // The sheet is read and its studies prepared once; every part starts from them (the
    // parts' options for the sheet and the model are the same).
    let sheet = relyard::sheet::coding_sheet_from_bytes(
        &pool_config.sheet.path,
        bytes,
        &pool_config.sheet.options,
    )?;
    let prepared = relyard::benchmark::prepare(sheet, &pool_config.benchmark)?;
    let (bench, paragraph) = super::pool::compute_from(&pool_config, prepared.clone())?;
    let mut warnings = bench.warnings.clone();
    let benchmark = value(&PoolDocument::new(&bench, &paragraph, &bench.warnings))?;
    let mut figs = vec![figures::forest(&bench), figures::funnel(&bench)];
    let level = pool_config.benchmark.pool.level;

    // Moderators and score spread, as relyard explain.
    let mut scope = RunScope::default();
    let explain = if !a.moderators.moderators.is_empty() || a.score_spread {
        let config = ExplainConfig::from_args(ExplainArgs {
            sheet: a.sheet.clone(),
            model: a.model.clone(),
            moderators: a.moderators.clone(),
            score_spread: a.score_spread,
            by: None,
            influence: false,
            permutations: None,
            seed: a.seed,
            json: true,
        })?;
        let e = super::explain::compute_from(&config, prepared.clone())?;
        warnings.extend(e.warnings.iter().cloned());
        scope.moderators = !a.moderators.moderators.is_empty();
        scope.score_spread = e.spread.is_some();
        let opts = fit_options(&config.benchmark);
        let mut taken = Vec::new();
        for m in &e.main.design.moderators {
            if let Moderator::Numeric { name, .. } = m {
                let mut f = figures::moderator(&e.prepared, name, &opts)?;
                f.name = unique(f.name, &mut taken);
                figs.push(f);
            }
        }
        if let Some(s) = &e.spread {
            figs.push(figures::score_spread(&e.prepared, s));
        }
        Some(value(&ExplainDocument::new(&e.parts()))?)
    } else {
        None
    };

    // The new study, as relyard check.
    let placement = match (a.coef, a.n) {
        (Some(coef), Some(n)) => {
            let config = CheckConfig::from_args(CheckArgs {
                sheet: a.sheet.clone(),
                model: a.model.clone(),
                moderators: a.moderators.clone(),
                coef,
                n,
                study: a.study.clone(),
                measure: a.measure.clone(),
                json: true,
            })?;
            let (checked, pl, paragraph) = super::check::compute_from(&config, prepared.clone())?;
            warnings.extend(pl.warnings.iter().cloned());
            figs.push(figures::placement(&pl));
            Some(value(&CheckDocument::new(
                &checked,
                &pl,
                &paragraph,
                &pl.warnings,
            ))?)
        }
        _ => None,
    };

    // The correction, as relyard correct.
    let correction = match (a.r, a.n, &a.rel_y) {
        (Some(r), Some(n), Some(rel_y)) => {
            // The measure's reliability: the new study's own coefficient when given, else
            // the benchmark shown in this report (same sheet options and model, at the
            // new study's moderator values when given).
            let rel_x = match (a.coef, a.study.items) {
                (Some(c), Some(k)) => super::correct::source(
                    "--coef",
                    &format!("{c},n={n},items={k},kind={}", a.study.coef_type),
                    level,
                )?,
                (Some(c), None) => super::correct::source(
                    "--coef",
                    &format!("{c},kind={}", a.study.coef_type),
                    level,
                )?,
                _ => relyard::correct::reliability::benchmark_source(
                    &prepared,
                    &at,
                    &fit_options(&pool_config.benchmark),
                    &bench.file,
                )?,
            };
            let rel_y = super::correct::source("--rel-y", rel_y, level)?;
            let (input, c, w) = super::correct::correlation_result(
                r,
                n,
                (rel_x, rel_y),
                a.draws,
                a.seed,
                level,
                5,
            )?;
            warnings.extend(w.iter().cloned());
            figs.push(figures::sensitivity(
                &c,
                input.rel_x.point(),
                input.rel_y.point(),
            ));
            Some(value(&CorrelationDocument::new(
                &c,
                n,
                &input.rel_x,
                &input.rel_y,
                level,
                &w,
            ))?)
        }
        _ => None,
    };
    warn_all(&warnings);

    let rendered = figs
        .into_iter()
        .map(|figure| {
            let svg = figure.svg()?;
            Ok(RenderedFigure { figure, svg })
        })
        .collect::<relyard::Result<Vec<_>>>()?;
    let title = match &a.measure {
        Some(m) => format!("Reliability benchmark report: {m}"),
        None => format!("Reliability benchmark report: {}", bench.file),
    };
    let content = ReportContent {
        title,
        input_file: bench.file.clone(),
        input_sha256: sha256,
        options,
        benchmark,
        explain,
        placement,
        correction,
        figures: rendered,
        checklist: checklist(scope),
    };

    let fig_dir = out.join("figures");
    std::fs::create_dir_all(&fig_dir)
        .map_err(|e| Failure::Lib(Error::io(format!("creating {}", fig_dir.display()), e)))?;
    let files: Vec<std::path::PathBuf> = content
        .figures
        .iter()
        .flat_map(|f| ["svg", "png"].map(|x| fig_dir.join(format!("{}.{x}", f.figure.name))))
        .collect();
    if !a.force
        && let Some(p) = files.iter().find(|p| p.exists())
    {
        return Err(bad(format!(
            "{} already exists; choose another --out folder or pass --force to replace the report",
            p.display()
        )));
    }
    if a.force {
        // Figures of an earlier report that this one does not have would be stale.
        if let Ok(entries) = std::fs::read_dir(&fig_dir) {
            for e in entries.flatten() {
                let p = e.path();
                let ours = p
                    .extension()
                    .and_then(|x| x.to_str())
                    .is_some_and(|x| x == "svg" || x == "png")
                    && p.file_stem()
                        .and_then(|s| s.to_str())
                        .is_some_and(is_report_figure);
                if ours && !files.contains(&p) {
                    let _ = std::fs::remove_file(&p);
                }
            }
        }
    }
    for f in &content.figures {
        write_new_file(
            &fig_dir.join(format!("{}.svg", f.figure.name)),
            &f.svg,
            a.force,
        )?;
        write_new_bytes(
            &fig_dir.join(format!("{}.png", f.figure.name)),
            &f.figure.png()?,
            a.force,
        )?;
    }
    let results = relyard::report::layout::to_json_string(&content.results());
    write_new_file(&out.join("results.json"), &results, a.force)?;
    write_new_file(&out.join("report.md"), &content.markdown(), a.force)?;
    write_new_file(&out.join("report.html"), &content.html(), a.force)?;
    print(&format!(
        "wrote {} (open it in a browser), report.md, results.json and {} figures in {}\n",
        out.join("report.html").display(),
        content.figures.len(),
        fig_dir.display()
    ))
}
