//! The readable summaries printed on a terminal: each leads with what the user came for,
//! then how much studies differ, then how the numbers were computed, and ends with the
//! warnings that change how the result reads (so that a summary saved to a file keeps
//! them).

mod check;
mod correct;
mod explain;
mod icc;
mod items;
mod pool;

pub use check::check_summary;
pub use correct::{CHOICE_NOTE, choice_note, correlation_summary, regression_summary};
pub use explain::explain_summary;
pub(crate) use explain::omnibus_words;
pub use icc::icc_summary;
pub use items::{compare_summary, items_summary, plan_summary};
pub use pool::benchmark_summary;

use crate::format::wrap;
use crate::output::INDIVIDUAL_DECISIONS_CAUTION;
use crate::output::prose::Paragraph;
use crate::setting::SettingNames;
use crate::sheet::SheetSummary;
use crate::warning::Warning;
use std::fmt::Write;

/// Width the text is wrapped to.
pub(crate) const WIDTH: usize = 88;

/// A section heading: its title, underlined.
fn heading(o: &mut String, title: &str) {
    let _ = writeln!(o, "{title}");
    let _ = writeln!(o, "{}", "─".repeat(title.chars().count().clamp(1, WIDTH)));
}

/// A wrapped paragraph, indented by two spaces.
fn para(o: &mut String, text: &str) {
    o.push_str(&wrap(text, WIDTH - 2, "  "));
}

/// A label and its value, the values aligned (a long value wraps under itself).
fn line(o: &mut String, label: &str, value: &str) {
    if value.chars().count() <= WIDTH - 26 {
        let _ = writeln!(o, "  {label:<24}{value}");
        return;
    }
    let indent = " ".repeat(26);
    let wrapped = wrap(value, WIDTH - 26, &indent);
    let _ = write!(o, "  {label:<24}{}", wrapped.trim_start());
    if wrapped.is_empty() {
        let _ = writeln!(o);
    }
}

/// The sheet in one line: its name, format (and worksheet), and how many rows were used.
fn sheet_line(s: &SheetSummary, used: usize, skipped: usize) -> String {
    let format = match &s.worksheet {
        Some(w) => format!("{}, worksheet \"{w}\"", s.format.describe()),
        None => s.format.describe(),
    };
    let subset = s
        .subset_words()
        .map(|w| {
            format!(
                "; subset {w} ({} {} outside it set aside)",
                s.rows_outside_subset,
                if s.rows_outside_subset == 1 {
                    "row"
                } else {
                    "rows"
                }
            )
        })
        .unwrap_or_default();
    format!(
        "{} ({format}; {} rows read, {used} used, {skipped} left out{subset})",
        s.file, s.rows_read
    )
}

/// The paragraph for the paper, its references and the caution.
fn paper(o: &mut String, title: &str, paragraph: &Paragraph) {
    let _ = writeln!(o);
    heading(o, title);
    para(o, &paragraph.text);
    let _ = writeln!(o);
    let _ = writeln!(o, "  References");
    for r in paragraph.citations() {
        o.push_str(&wrap(&r, WIDTH - 6, "      ").replacen("      ", "    ", 1));
    }
    let _ = writeln!(o);
    heading(o, "Caution");
    para(o, INDIVIDUAL_DECISIONS_CAUTION);
}

/// The warnings that change how the result reads, repeated at the end of the summary.
fn read_with_care(o: &mut String, warnings: &[Warning], names: &dyn SettingNames) {
    let shown: Vec<&Warning> = warnings.iter().filter(|w| w.changes_reading()).collect();
    if shown.is_empty() {
        return;
    }
    let _ = writeln!(o);
    heading(o, "Read with care");
    for w in shown {
        let text = w.message().render(names);
        let wrapped = wrap(&text, WIDTH - 4, "    ");
        o.push_str("  • ");
        o.push_str(wrapped.trim_start());
    }
}

/// Rows left out at the user's request, each with its reasons.
fn skipped_rows(o: &mut String, rows: &[crate::benchmark::SkippedRow], names: &dyn SettingNames) {
    if rows.is_empty() {
        return;
    }
    let _ = writeln!(o);
    heading(o, "Rows left out (invalid)");
    for s in rows {
        let reasons: Vec<String> = s.reasons.iter().map(|r| r.render(names)).collect();
        o.push_str(
            &wrap(
                &format!("row {}: {}", s.row, reasons.join("; ")),
                WIDTH - 4,
                "    ",
            )
            .replacen("    ", "  ", 1),
        );
    }
}

/// Rows left out of a model, each with its reasons.
fn excluded_rows(o: &mut String, title: &str, rows: &[crate::metareg::ExcludedRow]) {
    if rows.is_empty() {
        return;
    }
    let _ = writeln!(o, "  {title}:");
    for e in rows {
        let _ = writeln!(o, "    row {}: {}", e.row, e.reasons.join("; "));
    }
}

/// Four decimals for values on the transformed scale (small ones with three significant
/// digits).
fn t4(x: f64) -> String {
    if x.abs() >= 0.001 || x == 0.0 {
        crate::format::fixed(x, 4)
    } else {
        crate::format::significant(x, 3)
    }
}
