//! An empty coding sheet and its data dictionary, for `relyard template`.

use super::schema::{CoefType, Role};

/// The columns of an empty coding sheet: the standard columns, then any extra
/// (moderator) columns the user asked for.
fn sheet_columns(extra: &[String]) -> Vec<String> {
    let mut cols: Vec<String> = Role::ALL.iter().map(|r| r.name().to_string()).collect();
    cols.extend(extra.iter().cloned());
    cols
}

/// The header row of an empty coding sheet, as CSV.
pub fn empty_sheet(extra: &[String]) -> String {
    let mut out = sheet_columns(extra)
        .iter()
        .map(|c| csv_field(c))
        .collect::<Vec<_>>()
        .join(",");
    out.push('\n');
    out
}

/// The data dictionary's rows: a header, one row per column with its meaning and
/// allowed values, and a closing note.
fn dictionary_rows(extra: &[String]) -> Vec<Vec<String>> {
    let mut rows: Vec<Vec<String>> = vec![
        ["column", "holds", "kind", "when_needed", "allowed_values"]
            .map(String::from)
            .to_vec(),
    ];
    for r in Role::ALL {
        rows.push(vec![
            r.name().to_string(),
            r.description().to_string(),
            r.value_kind().to_string(),
            r.when_needed().to_string(),
            r.allowed(),
        ]);
    }
    for e in extra {
        rows.push(vec![
            e.clone(),
            "a study characteristic that may explain differences between coefficients \
             (a moderator)"
                .to_string(),
            "text or number".to_string(),
            "optional".to_string(),
            "any; empty, NA or . for unknown".to_string(),
        ]);
    }
    rows.push(vec![format!(
        "note: coef_type {} and {} are correlation-type coefficients (pooled with fisher-z); \
         all other types are internal-consistency coefficients (pooled with bonett). Missing \
         cells may be left empty or written NA or .",
        CoefType::Retest.name(),
        CoefType::Interrater.name()
    )]);
    rows
}

/// The data dictionary as CSV: one row per column with its meaning and allowed values.
pub fn dictionary(extra: &[String]) -> String {
    let mut out = String::new();
    for row in dictionary_rows(extra) {
        let mut cells: Vec<String> = row.iter().map(|f| csv_field(f)).collect();
        cells.resize(5, String::new());
        out.push_str(&cells.join(","));
        out.push('\n');
    }
    out
}

/// The names of the template workbook's two worksheets.
pub const WORKBOOK_SHEETS: [&str; 2] = ["Coding sheet", "Dictionary"];

/// The template as an Office Open XML workbook (ECMA-376 Part 1, §18.2–18.3): the empty
/// coding sheet on its first worksheet, the dictionary on its second. Every cell is an
/// inline text, so nothing in it is ever run as a formula.
pub fn workbook(extra: &[String]) -> std::io::Result<Vec<u8>> {
    use std::io::Write;
    let sheets = [vec![sheet_columns(extra)], dictionary_rows(extra)];
    let mut z = zip::ZipWriter::new(std::io::Cursor::new(Vec::new()));
    let opts = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated);
    let mut part = |name: &str, body: String| -> std::io::Result<()> {
        z.start_file(name, opts).map_err(std::io::Error::other)?;
        z.write_all(body.as_bytes())
    };
    const XML: &str = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>"#;
    const MAIN: &str = "http://schemas.openxmlformats.org/spreadsheetml/2006/main";
    const RELS: &str = "http://schemas.openxmlformats.org/package/2006/relationships";
    const DOC: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships";
    let mut types = format!(
        r#"{XML}<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>"#
    );
    let mut book = format!(r#"{XML}<workbook xmlns="{MAIN}" xmlns:r="{DOC}"><sheets>"#);
    let mut rels = format!(r#"{XML}<Relationships xmlns="{RELS}">"#);
    for (i, name) in WORKBOOK_SHEETS.iter().enumerate() {
        let n = i + 1;
        types.push_str(&format!(
            r#"<Override PartName="/xl/worksheets/sheet{n}.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>"#
        ));
        book.push_str(&format!(
            r#"<sheet name="{name}" sheetId="{n}" r:id="rId{n}"/>"#
        ));
        rels.push_str(&format!(
            r#"<Relationship Id="rId{n}" Type="{DOC}/worksheet" Target="worksheets/sheet{n}.xml"/>"#
        ));
    }
    types.push_str("</Types>");
    book.push_str("</sheets></workbook>");
    rels.push_str("</Relationships>");
    part("[Content_Types].xml", types)?;
    part(
        "_rels/.rels",
        format!(
            r#"{XML}<Relationships xmlns="{RELS}"><Relationship Id="rId1" Type="{DOC}/officeDocument" Target="xl/workbook.xml"/></Relationships>"#
        ),
    )?;
    part("xl/workbook.xml", book)?;
    part("xl/_rels/workbook.xml.rels", rels)?;
    for (i, rows) in sheets.iter().enumerate() {
        let mut data = format!(r#"{XML}<worksheet xmlns="{MAIN}"><sheetData>"#);
        for (r, row) in rows.iter().enumerate() {
            data.push_str(&format!(r#"<row r="{}">"#, r + 1));
            for (c, text) in row.iter().enumerate() {
                data.push_str(&format!(
                    r#"<c r="{}" t="inlineStr"><is><t xml:space="preserve">{}</t></is></c>"#,
                    super::cell_name(r as u32, c as u32),
                    xml_text(text)
                ));
            }
            data.push_str("</row>");
        }
        data.push_str("</sheetData></worksheet>");
        part(&format!("xl/worksheets/sheet{}.xml", i + 1), data)?;
    }
    Ok(z.finish().map_err(std::io::Error::other)?.into_inner())
}

/// Text with XML's special characters escaped (and control characters, which XML 1.0
/// cannot hold, dropped).
fn xml_text(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            c if (c as u32) < 0x20 && !matches!(c, '\t' | '\n' | '\r') => {}
            c => out.push(c),
        }
    }
    out
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
        // study, sample, cluster, coef, n, items, then the six optional columns.
        text.push_str("A,S1,P1,0.8,100,6,,,,,,,established\n");
        let s = parse_coding_sheet("t.csv", text.as_bytes(), &SheetOptions::default()).unwrap();
        assert_eq!(s.records.len(), 1);
        assert_eq!(s.records[0].sample.as_deref(), Some("S1"));
        assert_eq!(s.records[0].cluster.as_deref(), Some("P1"));
        assert_eq!(s.records[0].coef, 0.8);
        assert_eq!(s.extra_columns, vec!["field_maturity"]);
    }

    #[test]
    fn dictionary_has_a_row_per_column() {
        let d = dictionary(&[]);
        let mut r = csv::Reader::from_reader(d.as_bytes());
        let n = r.records().filter(|x| x.is_ok()).count();
        assert_eq!(n, Role::ALL.len() + 1);
    }

    /// The workbook template reads back with the workbook reader: its coding sheet's
    /// header is the standard columns and the extra ones, and its dictionary has the rows
    /// of the CSV dictionary (cell for cell).
    #[test]
    fn the_workbook_template_reads_back() {
        use crate::sheet::{WorkbookLimits, WorkbookRows};
        let extra = vec!["field & maturity <stage>".to_string()];
        let bytes = workbook(&extra).unwrap();
        let sheet =
            WorkbookRows::read("t.xlsx", bytes.clone(), None, WorkbookLimits::default()).unwrap();
        assert_eq!(sheet.worksheet, WORKBOOK_SHEETS[0]);
        let (header, _, rows) = sheet.into_table();
        assert_eq!(header, sheet_columns(&extra));
        assert!(rows.is_empty());
        let dict = WorkbookRows::read(
            "t.xlsx",
            bytes,
            Some(WORKBOOK_SHEETS[1]),
            WorkbookLimits::default(),
        )
        .unwrap();
        let (header, _, rows) = dict.into_table();
        let csv_rows: Vec<Vec<String>> = csv::ReaderBuilder::new()
            .flexible(true)
            .from_reader(dictionary(&extra).as_bytes())
            .records()
            .map(|r| {
                let r = r.unwrap();
                let mut v: Vec<String> = r.iter().map(String::from).collect();
                while v.last().is_some_and(String::is_empty) {
                    v.pop();
                }
                v
            })
            .collect();
        assert_eq!(header[0], "column");
        assert_eq!(rows.len(), csv_rows.len());
        for ((_, got), want) in rows.iter().zip(&csv_rows) {
            let mut got: Vec<String> = got
                .iter()
                .map(|c| String::from_utf8_lossy(c).into_owned())
                .collect();
            while got.last().is_some_and(String::is_empty) {
                got.pop();
            }
            assert_eq!(&got, want);
        }
    }

    #[test]
    fn formula_cells_are_neutralized() {
        assert_eq!(csv_field("=1+1"), "'=1+1");
        assert_eq!(csv_field("a,b"), "\"a,b\"");
    }
}
