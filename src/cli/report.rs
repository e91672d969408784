//! `relyard report`: one run of the analysis with every part the options ask for,
//! rendered as report.html, report.md, results.json and figure files.

use super::args::ReportArgs;
use super::files::{check_targets, read_manifest, write_report};
use super::names::OptionNames;
use super::output::{Failure, print, warn_all};
use super::progress::Bar;
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

/// An argument quoted for a POSIX shell when it needs it, so that the command can be run
/// as printed.
pub(super) fn shell_quote(arg: &str) -> String {
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
    // Refuse early, before the analysis runs, when the report's main files are in the way.
    let main_files = ["results.json", "report.md", "report.html"];
    check_targets(&out, main_files, &read_manifest(&out), force)?;
    let settings = super::config::report(a)?;
    let analysis = run(&settings, &Bar::default())?;
    warn_all(&analysis.warnings());
    let files = report_files(&analysis, options, command)?;
    write_report(&out, &files, force)?;
    print(&format!(
        "wrote {} (open it in a browser), report.md, results.json and {} figures in {}\n",
        out.join("report.html").display(),
        files.iter().filter(|(n, _)| n.ends_with(".svg")).count(),
        out.join("figures").display()
    ))
}

/// The report's files, by their names inside the report's folder (figures first, the page
/// last), for a run of `relyard report` with `options` (reproduced by `command`).
pub(super) fn report_files(
    analysis: &Analysis,
    options: Vec<String>,
    command: String,
) -> relyard::Result<Vec<(String, Vec<u8>)>> {
    let rendered = report_figures(analysis)
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
    let title = match &analysis.settings.measure {
        Some(m) => format!("Reliability benchmark report: {m}"),
        None => format!("Reliability benchmark report: {file}"),
    };
    let page = ReportPage {
        analysis,
        title,
        options,
        command,
        figures: rendered,
        names: &OptionNames,
    };
    let mut files: Vec<(String, Vec<u8>)> = Vec::new();
    for f in &page.figures {
        files.push((
            format!("figures/{}.svg", f.figure.name),
            f.svg.clone().into_bytes(),
        ));
        files.push((format!("figures/{}.png", f.figure.name), f.figure.png()?));
    }
    let results = relyard::output::layout::to_json_string(&page.results());
    files.push(("results.json".into(), results.into_bytes()));
    files.push(("report.md".into(), page.markdown().into_bytes()));
    // The page last: it is what a reader opens.
    files.push(("report.html".into(), page.html().into_bytes()));
    Ok(files)
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
