//! An empty coding sheet and its data dictionary, for `relyard template`.

use super::schema::{CoefType, Role};

/// The header row of an empty coding sheet: the standard columns, then any extra
/// (moderator) columns the user asked for.
pub fn empty_sheet(extra: &[String]) -> String {
    let mut cols: Vec<String> = Role::ALL.iter().map(|r| r.name().to_string()).collect();
    cols.extend(extra.iter().cloned());
    let mut out = cols
        .iter()
        .map(|c| csv_field(c))
        .collect::<Vec<_>>()
        .join(",");
    out.push('\n');
    out
}

/// The data dictionary as CSV: one row per column with its meaning and allowed values.
pub fn dictionary(extra: &[String]) -> String {
    let mut out = String::from("column,holds,kind,when_needed,allowed_values\n");
    for r in Role::ALL {
        let fields = [
            r.name().to_string(),
            r.description().to_string(),
            r.value_kind().to_string(),
            r.when_needed().to_string(),
            r.allowed(),
        ];
        push_row(&mut out, &fields);
    }
    for e in extra {
        let fields = [
            e.clone(),
            "a study characteristic that may explain differences between coefficients \
             (a moderator)"
                .to_string(),
            "text or number".to_string(),
            "optional".to_string(),
            "any; empty, NA or . for unknown".to_string(),
        ];
        push_row(&mut out, &fields);
    }
    out.push_str(&csv_field(&format!(
        "note: coef_type {} and {} are correlation-type coefficients (pooled with fisher-z); \
         all other types are internal-consistency coefficients (pooled with bonett). Missing \
         cells may be left empty or written NA or .",
        CoefType::Retest.name(),
        CoefType::Interrater.name()
    )));
    out.push_str(",,,,\n");
    out
}

fn push_row(out: &mut String, fields: &[String]) {
    let cells: Vec<String> = fields.iter().map(|f| csv_field(f)).collect();
    out.push_str(&cells.join(","));
    out.push('\n');
}

/// Quote a CSV field when needed, and neutralize text a spreadsheet would run as a
/// formula.
pub fn csv_field(s: &str) -> String {
    let guarded = if s.starts_with(['=', '+', '-', '@']) {
        format!("'{s}")
    } else {
        s.to_string()
    };
    if guarded.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", guarded.replace('"', "\"\""))
    } else {
        guarded
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sheet::{SheetOptions, parse_coding_sheet};

    #[test]
    fn template_header_is_readable_by_the_reader() {
        let mut text = empty_sheet(&["field_maturity".into()]);
        text.push_str("A,0.8,100,6,,,,,,,established\n");
        let s = parse_coding_sheet("t.csv", text.as_bytes(), &SheetOptions::default()).unwrap();
        assert_eq!(s.records.len(), 1);
        assert_eq!(s.extra_columns, vec!["field_maturity"]);
    }

    #[test]
    fn dictionary_has_a_row_per_column() {
        let d = dictionary(&[]);
        let mut r = csv::Reader::from_reader(d.as_bytes());
        let n = r.records().filter(|x| x.is_ok()).count();
        assert_eq!(n, Role::ALL.len() + 1);
    }

    #[test]
    fn formula_cells_are_neutralized() {
        assert_eq!(csv_field("=1+1"), "'=1+1");
        assert_eq!(csv_field("a,b"), "\"a,b\"");
    }
}
