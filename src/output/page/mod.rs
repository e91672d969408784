//! The shareable report: its content as format-neutral blocks, rendered to one
//! self-contained HTML page (inline SVG figures and CSS, no network, prints well) and to
//! Markdown (no HTML in it), and results.json with the same typed documents as each
//! command's `--json`.

pub mod blocks;
pub mod checklist;

use crate::analysis::{Analysis, Correction};
use crate::benchmark::{Benchmark, Prepared};
use crate::correct::correlation::{CorrelationCorrection, CorrelationInput};
use crate::correct::regression::{RegressionCorrection, RegressionInput};
use crate::format::{fixed, p_cell, range, significant, thousands};
use crate::metareg::spread::ScoreSpread;
use crate::metareg::{Explanation, Moderator};
use crate::output::INDIVIDUAL_DECISIONS_CAUTION;
use crate::output::json::{
    CheckDocument, CorrectionDocument, ExplainDocument, PoolDocument, ReportInput, ResultsDocument,
};
use crate::output::prose::{self, Paragraph, Reference};
use crate::plot::Figure;
use crate::pool::dependence::{DependenceMethod, DependenceResult, Inference};
use crate::pool::{Model, Prediction};
use crate::setting::SettingNames;
use blocks::{Block, Inline, Span, html_escape};
use checklist::{ChecklistItem, Coverage, RunScope, checklist};

/// A section of the report.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Section {
    /// The benchmark.
    Benchmark,
    /// The coding sheet: file, columns, rows.
    Sheet,
    /// The moderators.
    Moderators,
    /// The new study.
    Placement,
    /// The correction.
    Correction,
    /// Rows left out, anywhere.
    RowsLeftOut,
    /// Warnings.
    Warnings,
    /// Methods.
    Methods,
    /// References.
    References,
    /// The reporting checklist.
    Checklist,
    /// Software and reproducibility.
    Software,
}

impl Section {
    /// Every section, in page order.
    pub const ALL: [Section; 11] = [
        Section::Benchmark,
        Section::Sheet,
        Section::Moderators,
        Section::Placement,
        Section::Correction,
        Section::RowsLeftOut,
        Section::Warnings,
        Section::Methods,
        Section::References,
        Section::Checklist,
        Section::Software,
    ];

    /// The heading.
    pub fn title(self) -> &'static str {
        match self {
            Section::Benchmark => "Benchmark",
            Section::Sheet => "The coding sheet",
            Section::Moderators => "Moderators",
            Section::Placement => "Where the new study falls",
            Section::Correction => "What-if correction",
            Section::RowsLeftOut => "Rows left out",
            Section::Warnings => "Warnings",
            Section::Methods => "Methods",
            Section::References => "References",
            Section::Checklist => "Reporting checklist (REGEMA)",
            Section::Software => "Software and reproducibility",
        }
    }

    /// The anchor: the title as Markdown renderers make a heading's anchor (lower case,
    /// letters, digits and hyphens), so that links resolve in report.md as in report.html.
    pub fn id(self) -> String {
        blocks::heading_anchor(self.title())
    }
}

/// A figure with its rendered SVG.
#[derive(Debug, Clone)]
pub struct RenderedFigure {
    /// The figure.
    pub figure: Figure,
    /// Its SVG document.
    pub svg: String,
}

/// Everything the report page shows.
pub struct ReportPage<'a> {
    /// The analysis.
    pub analysis: &'a Analysis,
    /// The report's title.
    pub title: String,
    /// The command line as given.
    pub options: Vec<String>,
    /// The command that re-makes the report, quoted so that it can be run as printed.
    pub command: String,
    /// Figures in order.
    pub figures: Vec<RenderedFigure>,
    /// How the face names settings (in warnings and reasons).
    pub names: &'a dyn SettingNames,
}

impl ReportPage<'_> {
    fn sections(&self) -> Vec<Section> {
        let a = self.analysis;
        let mut s = vec![Section::Benchmark, Section::Sheet];
        if a.explanation.is_some() {
            s.push(Section::Moderators);
        }
        if a.placement.is_some() {
            s.push(Section::Placement);
        }
        if a.correction.is_some() {
            s.push(Section::Correction);
        }
        if self
            .rows_left_out()
            .iter()
            .any(|(_, rows)| !rows.is_empty())
        {
            s.push(Section::RowsLeftOut);
        }
        if !a.warnings().is_empty() {
            s.push(Section::Warnings);
        }
        s.extend([
            Section::Methods,
            Section::References,
            Section::Checklist,
            Section::Software,
        ]);
        s
    }

    /// The reporting checklist for this report.
    pub fn checklist(&self) -> Vec<ChecklistItem> {
        checklist(&RunScope {
            sections: self.sections(),
            influence: self
                .analysis
                .explanation
                .as_ref()
                .is_some_and(|e| e.influence.is_some()),
        })
    }

    /// The settings in effect, defaults included (the options list shows only what was
    /// typed).
    pub fn settings(&self) -> String {
        let a = self.analysis;
        let s = &a.settings;
        let transform = a
            .benchmark
            .as_ref()
            .map(|b| b.transform.name())
            .unwrap_or("chosen by coefficient type");
        let mut parts = vec![
            format!("transform {transform}"),
            format!(
                "model {}",
                match s.model.model {
                    Model::Common => "common effect",
                    Model::Random(_) => "random effects",
                }
            ),
            format!("τ² estimator {}", s.model.model.name()),
            format!("interval {}", s.model.interval.name()),
            format!("level {}", fixed(s.level.value(), 3).trim_end_matches('0')),
            format!("centring {}", s.moderators.centring.name()),
        ];
        if let Some(d) = a
            .benchmark
            .as_ref()
            .and_then(|b| b.pool.dependence.as_ref())
        {
            parts.push(format!("dependence {}", d.method.name()));
            parts.push(format!(
                "sampling correlation {}",
                fixed(d.sampling_correlation, 2)
            ));
            if let Some(i) = a.benchmark.as_ref().and_then(|b| b.pool.inference) {
                parts.push(format!("inference {}", i.name()));
            }
        }
        if let Some(crate::analysis::CorrectionSettings::Correlation { draws, .. }) = &s.correction
        {
            parts.push(format!("Monte Carlo draws {draws}, seed {}", s.seed));
        }
        parts.join("; ")
    }

    /// The rows left out anywhere, by what they were left out of.
    fn rows_left_out(&self) -> Vec<(String, Vec<(usize, String)>)> {
        let a = self.analysis;
        let mut out = Vec::new();
        if let Some(p) = &a.prepared {
            out.push((
                "every analysis (an invalid row, skipped)".to_string(),
                p.skipped
                    .iter()
                    .map(|s| {
                        let r: Vec<String> =
                            s.reasons.iter().map(|m| m.render(self.names)).collect();
                        (s.row, r.join("; "))
                    })
                    .collect(),
            ));
        }
        let ex = |rows: &[crate::metareg::ExcludedRow]| -> Vec<(usize, String)> {
            rows.iter().map(|e| (e.row, e.reasons.join("; "))).collect()
        };
        if let Some(e) = &a.explanation {
            out.push(("the moderator model".into(), ex(&e.main.design.excluded)));
            if let Some(s) = &e.spread {
                out.push(("the score-spread model".into(), ex(&s.excluded)));
            }
        }
        if let Some(pl) = &a.placement
            && let Some(d) = &pl.design
        {
            out.push(("the new study's model".into(), ex(&d.excluded)));
        }
        out
    }

    fn figure_blocks(&self, pick: impl Fn(&str) -> bool) -> Vec<Block> {
        self.figures
            .iter()
            .enumerate()
            .filter(|(_, f)| pick(&f.figure.name))
            .map(|(i, _)| Block::Figure(i))
            .collect()
    }

    /// The report as blocks.
    pub fn blocks(&self) -> Vec<Block> {
        let a = self.analysis;
        let mut out = vec![Block::Note(
            Inline::default()
                .strong("For decisions about individuals. ")
                .and(INDIVIDUAL_DECISIONS_CAUTION),
        )];
        out.extend(self.benchmark_blocks());
        out.extend(self.sheet_blocks());
        if a.explanation.is_some() {
            out.extend(self.moderator_blocks());
        }
        if a.placement.is_some() {
            out.extend(self.placement_blocks());
        }
        if a.correction.is_some() {
            out.extend(self.correction_blocks());
        }
        out.extend(self.rows_blocks());
        let warnings = a.warnings();
        if !warnings.is_empty() {
            out.push(Block::section(
                &Section::Warnings.id(),
                Section::Warnings.title(),
            ));
            out.push(Block::List(
                warnings
                    .iter()
                    .map(|w| Inline::text(w.message().render(self.names)))
                    .collect(),
            ));
        }
        let (methods, mut refs) = prose::methods(a);
        out.push(Block::section(
            &Section::Methods.id(),
            Section::Methods.title(),
        ));
        for m in methods {
            out.push(Block::Para(
                Inline::default()
                    .strong(format!("{}. ", m.title))
                    .and(m.text),
            ));
        }
        out.push(Block::section(
            &Section::References.id(),
            Section::References.title(),
        ));
        refs.extend(self.paragraphs().iter().flat_map(|p| p.references.clone()));
        refs.push(Reference::SanchezMeca2021);
        let mut cited: Vec<&str> = refs.iter().map(|r| r.citation()).collect();
        cited.sort_unstable();
        cited.dedup();
        out.push(Block::List(cited.into_iter().map(Inline::text).collect()));
        out.extend(self.checklist_blocks());
        out.extend(self.software_blocks());
        out
    }

    /// The paragraphs of the run (benchmark, placement).
    fn paragraphs(&self) -> Vec<Paragraph> {
        let a = self.analysis;
        let measure = a.settings.measure.as_deref();
        let mut v = Vec::new();
        if let Some(b) = &a.benchmark {
            v.push(prose::benchmark_paragraph(b, measure));
        }
        if let Some(pl) = &a.placement {
            v.push(prose::placement_paragraph(pl, measure));
        }
        v
    }

    fn benchmark_blocks(&self) -> Vec<Block> {
        let Some(b) = &self.analysis.benchmark else {
            return Vec::new();
        };
        let mut out = vec![
            Block::section(&Section::Benchmark.id(), Section::Benchmark.title()),
            Block::Para(Inline::default().strong(expected_range_lead(b))),
            Block::Para(Inline::text(pooling_summary(b))),
            benchmark_table(b),
        ];
        out.extend(differences_blocks(b));
        out.extend(self.figure_blocks(|n| n == "forest" || n == "precision"));
        out.push(Block::subsection("paragraph", "A paragraph for the paper"));
        out.push(Block::Para(Inline::text(
            prose::benchmark_paragraph(b, self.analysis.settings.measure.as_deref()).text,
        )));
        out
    }

    fn sheet_blocks(&self) -> Vec<Block> {
        let a = self.analysis;
        let (Some(b), Some(p)) = (&a.benchmark, &a.prepared) else {
            return Vec::new();
        };
        let s = &b.source;
        let mut rows = vec![
            vec![Inline::text("file"), Inline::default().code(s.file.clone())],
            vec![
                Inline::text("format"),
                Inline::text(match &s.worksheet {
                    Some(w) => format!("{}, worksheet \"{w}\"", s.format.describe()),
                    None => s.format.describe(),
                }),
            ],
            vec![
                Inline::text("rows"),
                Inline::text(format!(
                    "{} read, {} pooled, {} left out",
                    s.rows_read,
                    b.studies.len(),
                    b.skipped.len()
                )),
            ],
        ];
        if !s.subset.is_empty() {
            let rules: Vec<String> = s
                .subset
                .iter()
                .map(|r| format!("{} = {}", r.column, r.value))
                .collect();
            rows.push(vec![
                Inline::text("subset"),
                Inline::text(format!(
                    "{} ({} outside it set aside)",
                    rules.join(" and "),
                    crate::format::count(s.rows_outside_subset as u64, "row", "rows")
                )),
            ]);
        }
        rows.extend(coding_rows(b, p));
        vec![
            Block::section(&Section::Sheet.id(), Section::Sheet.title()),
            Block::table(&["", ""], rows),
        ]
    }

    fn moderator_blocks(&self) -> Vec<Block> {
        let Some(e) = &self.analysis.explanation else {
            return Vec::new();
        };
        let level = self.analysis.settings.level.percent();
        let ex = &e.main;
        let mut out = vec![Block::section(
            &Section::Moderators.id(),
            Section::Moderators.title(),
        )];
        if ex.fit.coefficients.len() > 1 {
            out.extend(meta_regression_blocks(ex, &level));
            let numeric = ex
                .design
                .moderators
                .iter()
                .any(|m| matches!(m, Moderator::Numeric { .. }));
            if numeric {
                out.extend(self.figure_blocks(|n| n.starts_with("moderator-")));
            }
        }
        if let Some(s) = &e.spread {
            out.push(Block::subsection("score-spread", "Score spread"));
            out.push(Block::Para(Inline::text(spread_words(s, &level))));
            out.extend(self.figure_blocks(|n| n == "score-spread"));
        }
        out
    }

    fn placement_blocks(&self) -> Vec<Block> {
        let Some(pl) = &self.analysis.placement else {
            return Vec::new();
        };
        let level = pl.fit.options.level.percent();
        let c3 = |x: f64| fixed(x, 3);
        let mut rows = vec![
            vec![
                Inline::text("the new study's coefficient"),
                Inline::text(c3(pl.study.coef)),
            ],
            vec![
                Inline::text("verdict"),
                Inline::text(format!("{} the expected range", pl.verdict.word())),
            ],
            vec![
                Inline::text("percentile"),
                Inline::text(prose::ordinal(pl.percentile)),
            ],
            vec![
                Inline::text(format!(
                    "{level} range of an observed coefficient (n = {})",
                    thousands(pl.study.n)
                )),
                Inline::text(range(pl.pi_observed.lower, pl.pi_observed.upper, c3)),
            ],
            vec![
                Inline::text("expected coefficient"),
                Inline::text(c3(pl.expected)),
            ],
        ];
        if !pl.at.is_empty() {
            let parts: Vec<String> = pl.at.iter().map(|(k, v)| format!("{k} = {v}")).collect();
            rows.push(vec![
                Inline::text("for a study with"),
                Inline::text(parts.join(", ")),
            ]);
        }
        let mut out = vec![
            Block::section(&Section::Placement.id(), Section::Placement.title()),
            Block::table(&["", ""], rows),
        ];
        if let Some(sp) = &pl.spread {
            out.push(Block::Para(Inline::text(prose::spread_conclusion(sp))));
        }
        out.push(Block::Para(Inline::text(
            prose::placement_paragraph(pl, self.analysis.settings.measure.as_deref()).text,
        )));
        out.extend(self.figure_blocks(|n| n == "placement"));
        out
    }

    fn correction_blocks(&self) -> Vec<Block> {
        let Some(c) = &self.analysis.correction else {
            return Vec::new();
        };
        let level = self.analysis.settings.level.percent();
        let mut out = vec![Block::section(
            &Section::Correction.id(),
            Section::Correction.title(),
        )];
        match c {
            Correction::Correlation {
                input,
                result,
                choices,
                ..
            } => {
                out.push(correlation_table(input, result, &level));
                if !choices.is_empty() {
                    out.extend(choice_blocks(choices, result.corrected_value, &level));
                }
                out.extend(self.figure_blocks(|n| n == "correction"));
            }
            Correction::Regression { input, result, .. } => {
                out.push(regression_table(input, result, &level));
            }
        }
        out
    }

    fn rows_blocks(&self) -> Vec<Block> {
        let groups = self.rows_left_out();
        if groups.iter().all(|(_, r)| r.is_empty()) {
            return Vec::new();
        }
        let mut rows = Vec::new();
        for (what, list) in groups {
            for (row, why) in list {
                rows.push(vec![
                    Inline::text(row.to_string()),
                    Inline::text(what.clone()),
                    Inline::text(why),
                ]);
            }
        }
        vec![
            Block::section(&Section::RowsLeftOut.id(), Section::RowsLeftOut.title()),
            Block::table(&["row", "left out of", "why"], rows),
        ]
    }

    fn checklist_blocks(&self) -> Vec<Block> {
        vec![
            Block::section(&Section::Checklist.id(), Section::Checklist.title()),
            Block::Para(Inline::text(
                "Items of the reporting guideline for reliability generalization meta-analyses \
                 (Sánchez-Meca et al., 2021), with what this report covers. The guideline's 30 \
                 items in eight sections (title 1, abstract 1, introduction 2, methods 14, results \
                 6, discussion 4, funding 1, protocol 1) are as its authors publish them; the \
                 items' wording and order here are our paraphrase, so check them against the \
                 guideline before citing item numbers. The journal, volume and pages in the \
                 reference below were not found in a source we could check: confirm them \
                 before citing.",
            )),
            Block::table(
                &[
                    "item",
                    "section",
                    "asks for",
                    "status",
                    "in this report / to add",
                ],
                self.checklist()
                    .iter()
                    .map(|i| {
                        let mut note = Inline::text(i.note.clone());
                        if let (Some(w), Some(id)) = (i.where_in_report, &i.anchor) {
                            note = note.and(" — ").push(Span::Link {
                                text: w.to_string(),
                                href: format!("#{id}"),
                            });
                        }
                        vec![
                            Inline::text(i.number.to_string()),
                            Inline::text(i.section),
                            Inline::text(i.item),
                            Inline::text(coverage_word(i.coverage)),
                            note,
                        ]
                    })
                    .collect(),
            ),
        ]
    }

    fn software_blocks(&self) -> Vec<Block> {
        let a = self.analysis;
        let file = a
            .prepared
            .as_ref()
            .map(|p| p.file().to_string())
            .unwrap_or_default();
        vec![
            Block::section(&Section::Software.id(), Section::Software.title()),
            Block::table(
                &["", ""],
                vec![
                    vec![
                        Inline::text("software"),
                        Inline::text(format!("relyard {}", env!("CARGO_PKG_VERSION"))),
                    ],
                    vec![Inline::text("coding sheet"), Inline::default().code(file)],
                    vec![
                        Inline::text("SHA-256 of the coding sheet"),
                        Inline::default().code(a.sheet_sha256.clone().unwrap_or_default()),
                    ],
                    vec![
                        Inline::text("command"),
                        Inline::default().code(self.command.clone()),
                    ],
                    vec![
                        Inline::text("settings in effect"),
                        Inline::text(self.settings()),
                    ],
                ],
            ),
        ]
    }

    /// The report as one self-contained HTML page.
    pub fn html(&self) -> String {
        let mut body = String::new();
        for block in self.blocks() {
            match block {
                Block::Heading { level, id, text } => body.push_str(&format!(
                    "<h{level} id=\"{}\">{}</h{level}>\n",
                    html_escape(&id),
                    html_escape(&text)
                )),
                Block::Para(t) => body.push_str(&format!("<p>{}</p>\n", t.html())),
                Block::Note(t) => {
                    body.push_str(&format!("<aside class=\"caution\">{}</aside>\n", t.html()))
                }
                Block::List(items) => {
                    body.push_str("<ul>\n");
                    for i in items {
                        body.push_str(&format!("<li>{}</li>\n", i.html()));
                    }
                    body.push_str("</ul>\n");
                }
                Block::Table { head, rows } => {
                    body.push_str("<table>\n<thead><tr>");
                    for h in head {
                        body.push_str(&format!("<th>{}</th>", h.html()));
                    }
                    body.push_str("</tr></thead>\n<tbody>\n");
                    for r in rows {
                        body.push_str("<tr>");
                        for c in r {
                            body.push_str(&format!("<td>{}</td>", c.html()));
                        }
                        body.push_str("</tr>\n");
                    }
                    body.push_str("</tbody></table>\n");
                }
                Block::Figure(i) => {
                    let f = &self.figures[i];
                    let name = html_escape(&f.figure.name);
                    body.push_str(&format!(
                        "<figure id=\"fig-{name}\">\n{}\n<figcaption><strong>{}.</strong> {} \
                         <a href=\"figures/{name}.svg\">SVG</a> · <a href=\"figures/{name}.png\">PNG</a></figcaption>\n</figure>\n",
                        strip_xml_declaration(&f.svg),
                        html_escape(&f.figure.title),
                        html_escape(&f.figure.description),
                    ));
                }
            }
        }
        let sha = self.analysis.sheet_sha256.clone().unwrap_or_default();
        let file = self
            .analysis
            .prepared
            .as_ref()
            .map(|p| p.file().to_string())
            .unwrap_or_default();
        format!(
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
             <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
             <meta name=\"generator\" content=\"relyard {v}\">\n<title>{t}</title>\n<style>{css}</style>\n</head>\n\
             <body>\n<main>\n<h1>{t}</h1>\n<p class=\"meta\">Made by relyard {v} from {f} (SHA-256 {s}…){sub}.</p>\n{body}</main>\n</body>\n</html>\n",
            v = env!("CARGO_PKG_VERSION"),
            t = html_escape(&self.title),
            css = CSS,
            f = html_escape(&file),
            s = &sha[..sha.len().min(12)],
            sub = html_escape(&self.subset_note()),
        )
    }

    /// "; only the rows with …" when a subset was analysed.
    fn subset_note(&self) -> String {
        self.analysis
            .prepared
            .as_ref()
            .and_then(|p| p.source.subset_words())
            .map(|w| format!("; only the rows with {w}"))
            .unwrap_or_default()
    }

    /// The report as Markdown (figures linked from figures/); every text escaped, no HTML.
    pub fn markdown(&self) -> String {
        let sha = self.analysis.sheet_sha256.clone().unwrap_or_default();
        let file = self
            .analysis
            .prepared
            .as_ref()
            .map(|p| p.file().to_string())
            .unwrap_or_default();
        let mut out = format!(
            "# {}\n\n{}\n\n",
            blocks::markdown_escape(&self.title),
            Inline::text(format!(
                "Made by relyard {} from ",
                env!("CARGO_PKG_VERSION")
            ))
            .code(file)
            .and(" (SHA-256 ")
            .code(sha)
            .and(format!("){}.", self.subset_note()))
            .markdown()
        );
        for block in self.blocks() {
            match block {
                Block::Heading { level, text, .. } => out.push_str(&format!(
                    "{} {}\n\n",
                    "#".repeat(level as usize),
                    blocks::markdown_escape(&text)
                )),
                Block::Para(t) => out.push_str(&format!("{}\n\n", t.markdown())),
                Block::Note(t) => out.push_str(&format!("> {}\n\n", t.markdown())),
                Block::List(items) => {
                    for i in items {
                        out.push_str(&format!("- {}\n", i.markdown()));
                    }
                    out.push('\n');
                }
                Block::Table { head, rows } => {
                    let cells = |r: &[Inline]| {
                        r.iter()
                            .map(Inline::markdown)
                            .collect::<Vec<_>>()
                            .join(" | ")
                    };
                    out.push_str(&format!("| {} |\n", cells(&head)));
                    out.push_str(&format!("|{}\n", " --- |".repeat(head.len())));
                    for r in &rows {
                        out.push_str(&format!("| {} |\n", cells(r)));
                    }
                    out.push('\n');
                }
                Block::Figure(i) => {
                    let f = &self.figures[i].figure;
                    out.push_str(&format!(
                        "![{}](figures/{}.svg)\n\n{}\n\n",
                        blocks::markdown_escape(&f.title),
                        f.name,
                        Inline::default()
                            .strong(format!("{}.", f.title))
                            .and(" ")
                            .and(f.description.clone())
                            .markdown()
                    ));
                }
            }
        }
        out
    }

    /// results.json: each part as its own command's `--json` document.
    pub fn results(&self) -> ResultsDocument {
        let a = self.analysis;
        let names = self.names;
        let measure = a.settings.measure.as_deref();
        let b = a.benchmark.as_ref().expect("a report has a benchmark");
        let p = a.prepared.as_ref().expect("a report has a sheet");
        ResultsDocument {
            schema_version: crate::output::json::SCHEMA_VERSION,
            command: "report",
            relyard_version: crate::output::json::RELYARD_VERSION,
            input: ReportInput {
                file: p.file().to_string(),
                sheet_name: p.source.worksheet.clone(),
                sha256: a.sheet_sha256.clone().unwrap_or_default(),
            },
            options: self.options.clone(),
            settings: self.settings(),
            benchmark: PoolDocument::new(b, &prose::benchmark_paragraph(b, measure), names),
            explain: a
                .explanation
                .as_ref()
                .map(|e| ExplainDocument::new(p, e, names)),
            placement: a.placement.as_ref().map(|pl| {
                CheckDocument::new(p, pl, &prose::placement_paragraph(pl, measure), names)
            }),
            correction: a
                .correction
                .as_ref()
                .map(|c| CorrectionDocument::new(c, a.settings.level, names)),
            figures: self.figures.iter().map(|f| f.figure.name.clone()).collect(),
            checklist: self.checklist(),
        }
    }
}

fn coverage_word(c: Coverage) -> &'static str {
    c.label()
}

fn strip_xml_declaration(svg: &str) -> &str {
    match svg.strip_prefix("<?xml") {
        Some(rest) => rest.find("?>").map_or(svg, |i| rest[i + 2..].trim_start()),
        None => svg,
    }
}

const CSS: &str = "
:root { --ink: #23303c; --muted: #5f6b76; --blue: #1f6f95; --orange: #a94f10; --band: #e1eef4; --rule: #d5dade; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #fff; font: 16px/1.55 system-ui, -apple-system, 'Segoe UI', Roboto, 'DejaVu Sans', sans-serif; }
main { max-width: 60rem; margin: 0 auto; padding: 2rem 1.25rem 4rem; }
h1 { font-size: 1.7rem; margin: 0 0 .3rem; }
h2 { font-size: 1.25rem; margin: 2.2rem 0 .6rem; padding-bottom: .25rem; border-bottom: 2px solid var(--rule); }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
p.meta { color: var(--muted); margin-top: 0; }
table { border-collapse: collapse; margin: .8rem 0 1.2rem; width: 100%; font-variant-numeric: tabular-nums; }
th, td { text-align: left; padding: .35rem .6rem; border-bottom: 1px solid var(--rule); vertical-align: top; }
thead th { border-bottom: 2px solid var(--ink); font-weight: 600; }
figure { margin: 1.4rem 0; }
figure svg { width: 100%; height: auto; display: block; }
figcaption { color: var(--muted); font-size: .92rem; margin-top: .4rem; }
aside.caution { background: var(--band); border-left: 4px solid var(--blue); padding: .7rem 1rem; margin: 1rem 0; }
code { font-size: .88rem; word-break: break-all; }
a { color: var(--blue); }
@media print {
  body { font-size: 11pt; }
  main { max-width: none; padding: 0; }
  h2 { break-after: avoid; }
  figure, table { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
";

/// The benchmark's first sentence: the expected range for a new setting.
fn expected_range_lead(b: &Benchmark) -> String {
    let level = b.pool.options.level.percent();
    let setting = match prose::dependence::dependence(b).map(|d| d.method) {
        Some(DependenceMethod::Multilevel) => "In a new sample from a new cluster",
        _ => "In a new, comparable setting",
    };
    match (b.coefficient.and_then(|c| c.pi), b.pool.prediction) {
        (Some(pi), Prediction::Available { .. }) => format!(
            "{setting} the true coefficient is expected between {} and {} ({level} prediction \
             interval).",
            fixed(pi.lower, 3),
            fixed(pi.upper, 3)
        ),
        (_, Prediction::CommonEffect) => "The common-effect model states no expected range \
            for a new setting."
            .to_string(),
        _ => "No expected range can be stated (see the warnings).".to_string(),
    }
}

/// What was pooled, on which scale, by which model.
fn pooling_summary(b: &Benchmark) -> String {
    let p = &b.pool;
    let model = match p.options.model {
        Model::Common => "a common-effect model (τ² = 0 assumed)".to_string(),
        Model::Random(e) => format!(
            "a random-effects model, τ² by {} ({})",
            e.label(),
            e.abbreviation()
        ),
    };
    if let Some(d) = prose::dependence::dependence(b) {
        let how = match d.method {
            DependenceMethod::Multilevel => format!(
                "a multilevel random-effects model (variance between and within clusters by \
                 {}; sampling errors within a sample correlated at an assumed {}); confidence \
                 intervals {}",
                match p.options.model {
                    Model::Random(e) => e.abbreviation(),
                    Model::Common => "REML",
                },
                fixed(d.sampling_correlation, 2),
                if p.inference == Some(Inference::Model) {
                    "from the model's standard errors"
                } else {
                    "cluster-robust (CR2, Satterthwaite df)"
                }
            ),
            DependenceMethod::Aggregate => format!(
                "one composite per sample (sampling correlation {} assumed), then {model}; \
                 confidence intervals by {}",
                fixed(d.sampling_correlation, 2),
                prose::interval_words(p.options.ci)
            ),
            DependenceMethod::Ignore => format!(
                "{model}, every row taken as independent (intervals too narrow); confidence \
                 intervals by {}",
                prose::interval_words(p.options.ci)
            ),
        };
        return format!(
            "{} ({}) pooled on the {} scale, {}, with {how}.",
            prose::dependence::counted_words(b),
            if b.n_total > 0 {
                format!("N = {}, each sample counted once", thousands(b.n_total))
            } else {
                "sample sizes not given".to_string()
            },
            b.transform.label(),
            b.transform.get().formula(),
        );
    }
    format!(
        "{} studies ({}) pooled on the {} scale, {}, with {model}; confidence intervals by {}.",
        p.k,
        if b.n_total > 0 {
            format!("N = {}", thousands(b.n_total))
        } else {
            "sample sizes not given".to_string()
        },
        b.transform.label(),
        b.transform.get().formula(),
        prose::interval_words(p.options.ci)
    )
}

/// The pooled value and its intervals on the coefficient and the analysis scale.
fn benchmark_table(b: &Benchmark) -> Block {
    let (p, rel) = (&b.pool, b.coefficient);
    let level = p.options.level.percent();
    let c3 = |x: f64| fixed(x, 3);
    let t4 = |x: f64| fixed(x, 4);
    let dash = || "–".to_string();
    let rows = vec![
        vec![
            Inline::text("pooled value"),
            Inline::text(rel.map(|c| c3(c.estimate)).unwrap_or_else(dash)),
            Inline::text(t4(p.estimate)),
        ],
        vec![
            Inline::text(format!("{level} confidence interval")),
            Inline::text(
                rel.map(|c| range(c.ci.lower, c.ci.upper, c3))
                    .unwrap_or_else(dash),
            ),
            Inline::text(range(p.ci.lower, p.ci.upper, t4)),
        ],
        vec![
            Inline::text(format!("{level} prediction interval (expected range)")),
            Inline::text(
                rel.and_then(|c| c.pi)
                    .map(|i| range(i.lower, i.upper, c3))
                    .unwrap_or_else(dash),
            ),
            Inline::text(
                p.prediction
                    .interval()
                    .map(|i| range(i.lower, i.upper, t4))
                    .unwrap_or_else(dash),
            ),
        ],
    ];
    Block::table(&["", "coefficient scale", "analysis scale"], rows)
}

/// How much the studies differ: the sentence of the readable summary, then the share
/// beyond sampling error and the test of equal values.
fn differences_blocks(b: &Benchmark) -> Vec<Block> {
    if let Some(d) = prose::dependence::dependence(b)
        && d.method == DependenceMethod::Multilevel
    {
        return multilevel_blocks(b, d);
    }
    let mut rows = Vec::new();
    if let Some(share) = prose::share_words(b) {
        rows.push(vec![
            Inline::text("between-setting share"),
            Inline::text(share),
        ]);
    }
    rows.push(vec![
        Inline::text("test of equal values"),
        Inline::text(prose::equal_values_words(b)),
    ]);
    vec![
        Block::subsection("differences", "How much the studies differ"),
        Block::Para(Inline::text(prose::differences_sentence(b))),
        Block::table(&["", ""], rows),
    ]
}

/// How much the studies differ under the multilevel model: the variance at each level, the
/// shares, the test of no cluster variance, and the results at other sampling correlations.
fn multilevel_blocks(b: &Benchmark, d: &DependenceResult) -> Vec<Block> {
    let level = b.pool.options.level.percent();
    let part = |t, ci| prose::dependence::component_words(t, ci, &level);
    let mut rows = vec![vec![
        Inline::text("between clusters"),
        Inline::text(part(d.tau2_cluster, d.tau2_cluster_ci)),
    ]];
    rows.push(vec![
        Inline::text("within clusters"),
        Inline::text(if d.within_identified {
            part(d.tau2_within, d.tau2_within_ci)
        } else {
            "not estimable (every cluster holds one row)".into()
        }),
    ]);
    if let (Some(a), Some(w)) = (d.i2_cluster, d.i2_within) {
        rows.push(vec![
            Inline::text("shares of variance"),
            Inline::text(format!(
                "I² = {}% between, {}% within clusters",
                fixed(a, 1),
                fixed(w, 1)
            )),
        ]);
    }
    if let Some(t) = d.lrt {
        rows.push(vec![
            Inline::text("no variance between clusters?"),
            Inline::text(prose::dependence::lrt_words(&t)),
        ]);
    }
    rows.push(vec![
        Inline::text("test of equal values"),
        Inline::text(prose::equal_values_words(b)),
    ]);
    let mut refs = Vec::new();
    vec![
        Block::subsection("differences", "How much the studies differ"),
        Block::Para(Inline::text(
            prose::dependence::levels_sentence(b, d, &mut refs)
                .trim()
                .to_string(),
        )),
        Block::table(&["", ""], rows),
        Block::Para(Inline::text(prose::dependence::sensitivity_sentence(b, d))),
    ]
}

/// What the sheet holds: coefficients by type, respondents, and how its columns were read.
fn coding_rows(b: &Benchmark, p: &Prepared) -> Vec<Vec<Inline>> {
    let mut rows = Vec::new();
    let counts: Vec<String> = b
        .coef_types
        .iter()
        .map(|(t, n)| format!("{t} {n}"))
        .collect();
    rows.push(vec![
        Inline::text("coefficients"),
        Inline::text(counts.join(", ")),
    ]);
    let grouped = prose::dependence::dependence(b).is_some();
    if grouped {
        rows.push(vec![
            Inline::text("rows, samples, clusters"),
            Inline::text(format!(
                "{} rows from {} samples in {} clusters",
                b.k_rows, b.k_samples, b.k_clusters
            )),
        ]);
    }
    rows.push(vec![
        Inline::text("respondents"),
        Inline::text(match (b.n_total > 0, grouped) {
            (true, true) => format!("{} (each sample counted once)", thousands(b.n_total)),
            (true, false) => thousands(b.n_total),
            (false, _) => "not given".into(),
        }),
    ]);
    let standard: Vec<String> = p
        .columns
        .iter()
        .map(|(role, header)| {
            if header == role.name() {
                header.clone()
            } else {
                format!("{header} (as {role})")
            }
        })
        .collect();
    rows.push(vec![
        Inline::text("standard columns"),
        Inline::text(standard.join(", ")),
    ]);
    rows.push(vec![
        Inline::text("other columns (possible moderators)"),
        Inline::text(if p.extra_columns.is_empty() {
            "none".to_string()
        } else {
            p.extra_columns.join(", ")
        }),
    ]);
    rows
}

/// The meta-regression: what the moderators explain, each term's change, what is left.
fn meta_regression_blocks(ex: &Explanation, level: &str) -> Vec<Block> {
    let mut lead = match ex.r2 {
        Some(r2) => format!(
            "Together the moderators explain {}% of the variance between settings (R²).",
            fixed(r2, 1)
        ),
        None => "The share the moderators explain (R²) is not defined: without them τ² is 0."
            .to_string(),
    };
    if let Some(t) = &ex.omnibus {
        lead.push_str(&format!(
            " Test of all moderators together: {}.",
            crate::output::text::omnibus_words(t)
        ));
    }
    let terms = ex
        .fit
        .coefficients
        .iter()
        .enumerate()
        .map(|(j, c)| {
            vec![
                Inline::text(crate::output::term_label(ex, j)),
                Inline::text(fixed(c.estimate, 4)),
                Inline::text(fixed(c.se, 4)),
                Inline::text(range(c.ci.lower, c.ci.upper, |x| fixed(x, 4))),
                Inline::text(p_cell(c.p)),
            ]
        })
        .collect();
    let fit = &ex.fit;
    let left = format!(
        "Unexplained between-setting variance τ² = {}{}; remaining differences: Q = {} on {} \
         df, p {}.",
        significant(fit.tau2.tau2, 3),
        fit.tau2_ci
            .map(|c| format!(
                " ({level} CI {})",
                range(c.lower, c.upper, |x| significant(x, 3))
            ))
            .unwrap_or_default(),
        fixed(fit.heterogeneity.q, 2),
        fit.heterogeneity.df,
        crate::format::p_value(fit.heterogeneity.p)
    );
    vec![
        Block::Para(Inline::text(lead)),
        Block::Para(Inline::text(format!(
            "The intercept is the expected value on the analysis scale for a study with {}.",
            ex.design.intercept_meaning()
        ))),
        Block::table(
            &["term", "change", "SE", &format!("{level} CI"), "p"],
            terms,
        ),
        Block::Para(Inline::text(left)),
    ]
}

/// The score-variance test in one paragraph, naming the other terms in its model.
fn spread_words(s: &ScoreSpread, level: &str) -> String {
    let others = if s.other_moderators().is_empty() {
        String::new()
    } else {
        format!(
            " The model also holds {}, as the moderators' model does{}.",
            crate::format::and_list(&s.other_moderators()),
            if s.log_items_column {
                ", and ln(items), since the forms differ in length"
            } else {
                ""
            }
        )
    };
    format!(
        "{} Slope of ln(1 − coefficient) on ln(score SD): {} ({level} CI {}); test of slope 0: \
         p {}; test of slope −2 (the same error variance everywhere): p {}; share of τ² \
         explained: {}.{others}",
        crate::format::capitalized(s.reading.sentence()) + ".",
        fixed(s.slope.estimate, 2),
        range(s.slope.ci.lower, s.slope.ci.upper, |x| fixed(x, 2)),
        crate::format::p_value(s.p_zero),
        crate::format::p_value(s.p_minus_two),
        s.tau2_share
            .map(|v| format!("{}%", fixed(v, 0)))
            .unwrap_or_else(|| "not defined".into()),
    )
}

/// The correction under each coefficient the item data give, beside the main one.
fn choice_blocks(rows: &[crate::correct::choice::ChoiceRow], main: f64, level: &str) -> Vec<Block> {
    let c3 = |x: f64| fixed(x, 3);
    let table = rows
        .iter()
        .map(|r| {
            vec![
                Inline::text(r.coefficient.words()),
                Inline::text(c3(r.reliability_x)),
                Inline::text(c3(r.reliability_y)),
                Inline::text(if r.corrected.abs() <= 1.0 {
                    c3(r.corrected)
                } else {
                    "beyond ±1".to_string()
                }),
                Inline::text(
                    r.ci.map(|(a, b)| range(a, b, c3))
                        .unwrap_or_else(|| "beyond ±1".to_string()),
                ),
                Inline::text(crate::format::change(r.corrected - main, 3)),
                Inline::text(if r.lower_bound { "yes" } else { "no" }),
            ]
        })
        .collect();
    let note = crate::output::text::choice_note(
        rows.iter()
            .map(|r| (r.coefficient, r.reliability_x, r.reliability_y)),
    );
    vec![
        Block::Para(Inline::text(
            "The choice of coefficient: the correlation corrected with each coefficient the \
             item data give (each row's reliabilities taken as known).",
        )),
        Block::table(
            &[
                "coefficient",
                "r_xx",
                "r_yy",
                "corrected r",
                &format!("{level} interval"),
                "change",
                "lower bound",
            ],
            table,
        ),
        Block::Para(Inline::text(note)),
    ]
}

/// The corrected correlation with its inputs and intervals.
fn correlation_table(
    input: &CorrelationInput,
    result: &CorrelationCorrection,
    level: &str,
) -> Block {
    let c3 = |x: f64| fixed(x, 3);
    let dash = || "–".to_string();
    let row = |label: String, value: String| vec![Inline::text(label), Inline::text(value)];
    Block::table(
        &["", ""],
        vec![
            row("observed correlation".into(), c3(result.observed)),
            row(
                "reliability of the measure (x)".into(),
                input.rel_x.describe(),
            ),
            row(
                "reliability of the other score (y)".into(),
                input.rel_y.describe(),
            ),
            row(
                "corrected correlation".into(),
                if result.admissible {
                    c3(result.corrected_value)
                } else {
                    format!("impossible ({} beyond ±1)", c3(result.corrected_value))
                },
            ),
            row(
                format!("{level} CI (classical)"),
                result.ci.map(|(a, b)| range(a, b, c3)).unwrap_or_else(dash),
            ),
            row(
                format!("{level} CI (Monte Carlo, reliabilities drawn)"),
                result
                    .mc_ci
                    .map(|(a, b)| range(a, b, c3))
                    .unwrap_or_else(dash),
            ),
            row(
                "share of impossible draws".into(),
                format!("{}%", fixed(100.0 * result.inadmissible_share, 1)),
            ),
        ],
    )
}

/// Each predictor's ordinary and corrected slope with the corrected slope's interval.
fn regression_table(input: &RegressionInput, result: &RegressionCorrection, level: &str) -> Block {
    let c3 = |x: f64| fixed(x, 3);
    let corr = result.estimate.corrected.as_ref().ok();
    Block::table(
        &[
            "predictor",
            "OLS slope",
            "corrected slope",
            &format!("{level} CI"),
        ],
        input
            .predictors
            .iter()
            .enumerate()
            .map(|(j, n)| {
                vec![
                    Inline::text(n.clone()),
                    Inline::text(c3(result.estimate.ols[j])),
                    Inline::text(
                        corr.map(|k| c3(k.slopes[j]))
                            .unwrap_or_else(|| "impossible".into()),
                    ),
                    Inline::text(
                        result.corrected_spread[j]
                            .map(|s| range(s.ci.0, s.ci.1, c3))
                            .unwrap_or_else(|| "–".to_string()),
                    ),
                ]
            })
            .collect(),
    )
}
