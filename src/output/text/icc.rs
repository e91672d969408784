//! The readable summary of `relyard icc`.

use super::{WIDTH, heading, read_with_care};
use crate::analysis::IccOutcome;
use crate::format::{fixed, p_value, thousands, wrap};
use crate::output::icc_words::{ICC_INDIVIDUALS_CAUTION, ICC_RATERS, ICC_TEST_RETEST};
use crate::setting::SettingNames;
use std::fmt::Write;

/// The summary: the table read, every form with its interval and test, the SEM and the
/// smallest detectable change, which form fits which design, and the caution.
pub fn icc_summary(o_: &IccOutcome, names: &dyn SettingNames) -> String {
    let (d, a) = (&o_.data, &o_.analysis);
    let mut o = String::new();
    let _ = writeln!(
        o,
        "Intraclass correlations: {} rows (persons or targets) × {} columns (occasions or raters)",
        thousands(a.n as u64),
        a.k
    );
    let left_out = format!(
        ", {} left out for a missing cell",
        thousands(d.rows_read - d.complete_rows)
    );
    super::items::file_line(&mut o, d, &left_out);
    let _ = writeln!(o, "  columns       {}", d.names.join(", "));
    let _ = writeln!(o);
    heading(&mut o, "Every form");
    let level = format!("{} interval", o_.level.percent());
    let _ = writeln!(
        o,
        "  model           type         unit         ICC  {level:<19}test of ρ = 0"
    );
    for f in &a.forms {
        let _ = writeln!(
            o,
            "  {:<16}{:<13}{:<9}{:>7}  {:<19}F({:.0}, {:.0}) = {:.2}, p {}",
            f.model.name(),
            f.kind.name(),
            f.unit.name(),
            fixed(f.value, 3),
            format!("{} to {}", fixed(f.ci.0, 3), fixed(f.ci.1, 3)),
            f.df1,
            f.df2,
            f.f,
            p_value(f.p)
        );
    }
    o.push_str(&wrap(
        "(two-way random and two-way mixed give the same numbers; they differ in what the \
         raters or occasions stand for)",
        WIDTH - 2,
        "  ",
    ));
    let _ = writeln!(o);
    heading(&mut o, "Measurement error of one score");
    let _ = writeln!(
        o,
        "  SEM = SD·√(1 − ICC(A,1)) = {:.3} (SD of all scores {:.3}; two-way, absolute \
         agreement, single)",
        a.sem, a.sd
    );
    let _ = writeln!(
        o,
        "  smallest detectable change = 1.96·√2·SEM = {:.3}",
        a.sdc
    );
    let _ = writeln!(o);
    heading(&mut o, "Which form to report");
    o.push_str(&wrap(ICC_TEST_RETEST, WIDTH - 2, "  "));
    o.push_str(&wrap(ICC_RATERS, WIDTH - 2, "  "));
    let _ = writeln!(o);
    o.push_str(&wrap(ICC_INDIVIDUALS_CAUTION, WIDTH - 2, "  "));
    if !o.ends_with('\n') {
        o.push('\n');
    }
    read_with_care(&mut o, &o_.warnings, names);
    o
}
