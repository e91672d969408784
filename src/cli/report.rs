//! `relyard report`: one run of the analysis with every part the options ask for,
//! rendered as report.html, report.md, results.json and figure files.

use super::args::ReportArgs;
use super::names::OptionNames;
use super::output::{Failure, UsageError, print, warn_all, write_new_bytes, write_new_file};
use super::progress::Bar;
use relyard::Error;
use relyard::analysis::{Analysis, Correction, run};
use relyard::output::figures;
use relyard::output::page::{RenderedFigure, ReportPage};
use relyard::plot::Figure;

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

/// An argument quoted for a POSIX shell when it needs it, so that the command can be run
/// as printed.
fn shell_quote(arg: &str) -> String {
    let plain = !arg.is_empty()
        && arg
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "-_./=,:+@%".contains(c));
    if plain {
        arg.to_string()
    } else {
        format!("'{}'", arg.replace('\'', "'\\''"))
    }
}

/// Every figure the analysis has data for, in page order.
fn report_figures(a: &Analysis) -> Vec<Figure> {
    let mut figs = Vec::new();
    if let Some(b) = &a.benchmark {
        figs.push(figures::forest(b));
        figs.push(figures::funnel(b));
    }
    if let (Some(e), Some(p)) = (&a.explanation, &a.prepared) {
        let mut taken = Vec::new();
        for m in &e.marginal {
            if let Some(mut f) = figures::moderator(p, m) {
                f.name = unique(f.name, &mut taken);
                figs.push(f);
            }
        }
        if let Some(s) = &e.spread {
            figs.push(figures::score_spread(p, s));
        }
    }
    if let Some(pl) = &a.placement {
        figs.push(figures::placement(pl));
    }
    if let Some(Correction::Correlation { input, result, .. }) = &a.correction {
        figs.push(figures::sensitivity(
            result,
            input.rel_x.point(),
            input.rel_y.point(),
        ));
    }
    figs
}

pub fn run_report(a: ReportArgs) -> Result<(), Failure> {
    let (options, command) = command_line();
    let (out, force) = (a.out.clone(), a.force);
    let names = ["report.html", "report.md", "results.json"];
    refuse_existing(names.iter().map(|n| out.join(n)), force)?;
    let settings = super::config::report(a)?;
    let analysis = run(&settings, &Bar::default())?;
    warn_all(&analysis.warnings());
    let rendered = report_figures(&analysis)
        .into_iter()
        .map(|figure| {
            let svg = figure.svg()?;
            Ok(RenderedFigure { figure, svg })
        })
        .collect::<relyard::Result<Vec<_>>>()?;
    let file = analysis
        .prepared
        .as_ref()
        .map(|p| p.file().to_string())
        .unwrap_or_default();
    let title = match &settings.measure {
        Some(m) => format!("Reliability benchmark report: {m}"),
        None => format!("Reliability benchmark report: {file}"),
    };
    let page = ReportPage {
        analysis: &analysis,
        title,
        options,
        command,
        figures: rendered,
        names: &OptionNames,
    };
    let fig_dir = out.join("figures");
    write_figures(&fig_dir, &page.figures, force)?;
    let results = relyard::output::layout::to_json_string(&page.results());
    write_new_file(&out.join("results.json"), &results, force)?;
    write_new_file(&out.join("report.md"), &page.markdown(), force)?;
    write_new_file(&out.join("report.html"), &page.html(), force)?;
    print(&format!(
        "wrote {} (open it in a browser), report.md, results.json and {} figures in {}\n",
        out.join("report.html").display(),
        page.figures.len(),
        fig_dir.display()
    ))
}

/// The arguments as given, and the command that re-runs them, quoted for a shell.
fn command_line() -> (Vec<String>, String) {
    let options: Vec<String> = std::env::args_os()
        .skip(1)
        .map(|s| s.to_string_lossy().into_owned())
        .collect();
    let command = std::iter::once("relyard".to_string())
        .chain(options.iter().map(|o| shell_quote(o)))
        .collect::<Vec<_>>()
        .join(" ");
    (options, command)
}

/// Refuse to go on when one of these files exists and `--force` was not given.
fn refuse_existing(
    files: impl IntoIterator<Item = std::path::PathBuf>,
    force: bool,
) -> Result<(), Failure> {
    if force {
        return Ok(());
    }
    match files.into_iter().find(|p| p.exists()) {
        Some(existing) => Err(Failure::Usage(UsageError(format!(
            "{} already exists; choose another --out folder or pass --force to replace the report",
            existing.display()
        )))),
        None => Ok(()),
    }
}

/// Write every figure as SVG and PNG into `fig_dir`; with `--force`, figures of an earlier
/// report that this one does not have are removed, since they would be stale.
fn write_figures(
    fig_dir: &std::path::Path,
    figures: &[RenderedFigure],
    force: bool,
) -> Result<(), Failure> {
    std::fs::create_dir_all(fig_dir)
        .map_err(|e| Failure::Lib(Error::io(format!("creating {}", fig_dir.display()), e)))?;
    let files: Vec<std::path::PathBuf> = figures
        .iter()
        .flat_map(|f| ["svg", "png"].map(|x| fig_dir.join(format!("{}.{x}", f.figure.name))))
        .collect();
    refuse_existing(files.iter().cloned(), force)?;
    if force && let Ok(entries) = std::fs::read_dir(fig_dir) {
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
    for f in figures {
        write_new_file(
            &fig_dir.join(format!("{}.svg", f.figure.name)),
            &f.svg,
            force,
        )?;
        write_new_bytes(
            &fig_dir.join(format!("{}.png", f.figure.name)),
            &f.figure.png()?,
            force,
        )?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn arguments_are_quoted_for_the_shell() {
        assert_eq!(shell_quote("--tau2"), "--tau2");
        assert_eq!(shell_quote("the Team Scale"), "'the Team Scale'");
        assert_eq!(shell_quote("it's"), "'it'\\''s'");
        assert_eq!(shell_quote("year=2010"), "year=2010");
        assert_eq!(shell_quote(""), "''");
    }
}
