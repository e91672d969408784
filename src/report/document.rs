//! The shareable report: one self-contained HTML page (inline SVG figures and CSS, no
//! network, prints well), the same content as Markdown, and the results as JSON.
//!
//! Every number in the report is read from the JSON documents the individual commands
//! print (`pool`, `explain`, `check`, `correct` with `--json`), so the report and the
//! commands cannot disagree.

use super::regema::{ChecklistItem, Coverage};
use crate::plot::{Figure, xml_escape};
use serde::Serialize;
use serde_json::Value;

/// A figure with its rendered SVG.
#[derive(Debug, Clone)]
pub struct RenderedFigure {
    /// The figure.
    pub figure: Figure,
    /// Its SVG document.
    pub svg: String,
}

/// Everything the report shows.
#[derive(Debug, Clone)]
pub struct ReportContent {
    /// The report's title.
    pub title: String,
    /// The coding sheet as named.
    pub input_file: String,
    /// SHA-256 of the coding sheet's bytes (hex).
    pub input_sha256: String,
    /// The command line's options, as given.
    pub options: Vec<String>,
    /// `relyard pool --json`.
    pub benchmark: Value,
    /// `relyard explain --json`, when moderators or the score-spread test were asked for.
    pub explain: Option<Value>,
    /// `relyard check --json`, when a new study was given.
    pub placement: Option<Value>,
    /// `relyard correct --json`, when a correlation was given.
    pub correction: Option<Value>,
    /// Figures in order.
    pub figures: Vec<RenderedFigure>,
    /// The reporting-guideline checklist.
    pub checklist: Vec<ChecklistItem>,
}

/// results.json: the documents of the commands behind the report, with the run's
/// provenance.
#[derive(Debug, Clone, Serialize)]
pub struct ResultsDocument<'a> {
    /// Layout version.
    pub schema_version: &'static str,
    /// "report".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// The coding sheet and its SHA-256.
    pub input: InputRecord<'a>,
    /// Options as given.
    pub options: &'a [String],
    /// As `relyard pool --json`.
    pub benchmark: &'a Value,
    /// As `relyard explain --json` (null when not run).
    pub explain: Option<&'a Value>,
    /// As `relyard check --json` (null when not run).
    pub placement: Option<&'a Value>,
    /// As `relyard correct --json` (null when not run).
    pub correction: Option<&'a Value>,
    /// Figure files written (stems; each as .svg and .png).
    pub figures: Vec<&'a str>,
    /// The reporting checklist.
    pub checklist: &'a [ChecklistItem],
}

/// The input file record of results.json.
#[derive(Debug, Clone, Serialize)]
pub struct InputRecord<'a> {
    /// File as named.
    pub file: &'a str,
    /// SHA-256 (hex).
    pub sha256: &'a str,
}

impl ReportContent {
    /// The settings in effect, defaults included (the options list shows only what was
    /// typed).
    pub fn settings(&self) -> String {
        let b = &self.benchmark;
        let mut parts = vec![
            format!("transform {}", text(&b["transform"])),
            format!("model {}", text(&b["model"])),
            format!("τ² estimator {}", text(&b["tau2_method"])),
            format!("interval {}", text(&b["ci_method"])),
            format!("level {}", num(&b["level"], 2)),
        ];
        if let Some(k) = &self.correction {
            parts.push(format!(
                "Monte Carlo draws {}, seed {}",
                num(&k["draws"], 0),
                num(&k["seed"], 0)
            ));
        }
        parts.join("; ")
    }

    /// The results document.
    pub fn results(&self) -> ResultsDocument<'_> {
        ResultsDocument {
            schema_version: super::json::SCHEMA_VERSION,
            command: "report",
            relyard_version: env!("CARGO_PKG_VERSION"),
            input: InputRecord {
                file: &self.input_file,
                sha256: &self.input_sha256,
            },
            options: &self.options,
            benchmark: &self.benchmark,
            explain: self.explain.as_ref(),
            placement: self.placement.as_ref(),
            correction: self.correction.as_ref(),
            figures: self
                .figures
                .iter()
                .map(|f| f.figure.name.as_str())
                .collect(),
            checklist: &self.checklist,
        }
    }
}

/// A number with `d` decimals (true minus sign), or a dash.
fn num(v: &Value, d: usize) -> String {
    match v.as_f64() {
        Some(x) if x.is_finite() => super::format::fixed(x, d),
        _ => "–".into(),
    }
}

/// An interval [lo, hi] as "lo to hi".
fn interval(v: &Value, d: usize) -> String {
    match v.as_array() {
        Some(a) if a.len() == 2 => format!("{} to {}", num(&a[0], d), num(&a[1], d)),
        _ => "–".into(),
    }
}

/// A p value.
fn p_value(v: &Value) -> String {
    match v.as_f64() {
        Some(p) if p < 0.001 => "< .001".into(),
        Some(p) => super::format::fixed(p, 3),
        None => "–".into(),
    }
}

fn text(v: &Value) -> String {
    v.as_str().unwrap_or("").to_string()
}

/// A section of the report, written once and rendered as HTML and Markdown.
enum Block {
    Heading(u8, String),
    Para(String),
    Note(String),
    Table(Vec<String>, Vec<Vec<String>>),
    Figure(usize),
    List(Vec<String>),
}

fn esc(s: &str) -> String {
    xml_escape(s)
}

impl ReportContent {
    fn blocks(&self) -> Vec<Block> {
        use Block::*;
        let b = &self.benchmark;
        let rel = &b["reliability"];
        let level = b["level"].as_f64().unwrap_or(0.95) * 100.0;
        let mut out = vec![
            Note(text(&b["caution"])),
            Heading(2, "Benchmark".into()),
            Para(format!(
                "{} studies (total N = {}; coefficients: {}) from {}, pooled on the {} scale \
                 ({}) with a {}; confidence interval by {}.",
                num(&b["k"], 0),
                b["n_total"]
                    .as_u64()
                    .map_or("–".into(), super::format::thousands),
                esc(&type_counts(b)),
                esc(&self.input_file),
                text(&b["transform"]),
                esc(&text(&b["transform_formula"])),
                model_words(b),
                ci_method_words(&text(&b["ci_method"])),
            )),
            Table(
                vec![
                    "".into(),
                    "coefficient scale".into(),
                    "transformed scale".into(),
                ],
                vec![
                    vec![
                        "pooled value".into(),
                        num(&rel["estimate"], 3),
                        num(&b["estimate"], 4),
                    ],
                    vec![
                        format!("{level:.0}% confidence interval"),
                        interval(&rel["ci"], 3),
                        interval(&b["ci"], 4),
                    ],
                    vec![
                        format!("{level:.0}% prediction interval (expected range)"),
                        interval(&rel["pi"], 3),
                        interval(&b["pi"], 4),
                    ],
                ],
            ),
            Table(
                vec!["heterogeneity".into(), "value".into()],
                vec![
                    vec![
                        "τ²".into(),
                        format!(
                            "{} ({level:.0}% CI {})",
                            num(&b["tau2"], 4),
                            interval(&b["tau2_ci"], 4)
                        ),
                    ],
                    vec!["τ".into(), num(&b["tau"], 4)],
                    vec!["I²".into(), format!("{}%", num(&b["i2"], 1))],
                    vec!["H²".into(), num(&b["h2"], 2)],
                    vec![
                        "Q".into(),
                        format!(
                            "{} (df {}, p {})",
                            num(&b["q"], 2),
                            num(&b["q_df"], 0),
                            p_value(&b["q_p"])
                        ),
                    ],
                ],
            ),
        ];
        for (i, f) in self.figures.iter().enumerate() {
            if matches!(f.figure.name.as_str(), "forest" | "precision") {
                out.push(Figure(i));
            }
        }
        out.push(Heading(2, "A paragraph for the paper".into()));
        out.push(Para(esc(&text(&b["paragraph"]))));
        if let Some(e) = &self.explain {
            out.push(Heading(2, "Moderators".into()));
            let coefs = e["coefficients"].as_array().cloned().unwrap_or_default();
            if coefs.len() > 1 {
                out.push(Table(
                    vec![
                        "term".into(),
                        "estimate".into(),
                        "SE".into(),
                        format!("{level:.0}% CI"),
                        "p".into(),
                    ],
                    coefs
                        .iter()
                        .map(|c| {
                            vec![
                                esc(&text(&c["name"])),
                                num(&c["estimate"], 4),
                                num(&c["se"], 4),
                                interval(&c["ci"], 4),
                                p_value(&c["p"]),
                            ]
                        })
                        .collect(),
                ));
                out.push(Para(format!(
                    "Residual τ² {} ({level:.0}% CI {}); R² {}; test of the moderators {} = {} \
                     (df {}), p {}; residual heterogeneity Q<sub>E</sub> = {} (df {}), p {}.",
                    num(&e["tau2"], 4),
                    interval(&e["tau2_ci"], 4),
                    e["r2"].as_f64().map_or("–".into(), |r| format!("{r:.1}%")),
                    if e["omnibus"]["df2"].is_null() {
                        "χ²"
                    } else {
                        "F"
                    },
                    num(&e["omnibus"]["statistic"], 2),
                    num(&e["omnibus"]["df"], 0),
                    p_value(&e["omnibus"]["p"]),
                    num(&e["qe"], 2),
                    num(&e["qe_df"], 0),
                    p_value(&e["qe_p"]),
                )));
            }
            let s = &e["score_spread"];
            if !s.is_null() {
                out.push(Heading(3, "Score spread".into()));
                out.push(Para(format!(
                    "Slope of ln(1 − coefficient) on ln(score SD): {} ({level:.0}% CI {}); \
                     test of slope 0: p {}; test of slope −2 (differences wholly from score \
                     spread): p {}; share of τ² explained: {}. {}",
                    num(&s["slope"], 2),
                    interval(&s["ci"], 2),
                    p_value(&s["p_zero"]),
                    p_value(&s["p_minus_two"]),
                    s["tau2_share"]
                        .as_f64()
                        .map_or("–".into(), |v| format!("{v:.0}%")),
                    esc(&capitalized(&text(&s["reading_text"]))),
                )));
            }
            for (i, f) in self.figures.iter().enumerate() {
                if f.figure.name.starts_with("moderator-") || f.figure.name == "score-spread" {
                    out.push(Figure(i));
                }
            }
        }
        if let Some(c) = &self.placement {
            out.push(Heading(2, "Where the new study falls".into()));
            out.push(Table(
                vec!["".into(), "value".into()],
                vec![
                    vec!["the new study's coefficient".into(), num(&c["coef"], 3)],
                    vec!["expected coefficient".into(), num(&c["expected"], 3)],
                    vec![
                        format!("expected range of an observed coefficient ({level:.0}%)"),
                        interval(&c["pi_observed"], 3),
                    ],
                    vec!["percentile".into(), num(&c["percentile"], 0)],
                    vec![
                        "verdict".into(),
                        esc(&text(&c["verdict"]).replace('_', " ")),
                    ],
                ],
            ));
            out.push(Para(esc(&text(&c["paragraph"]))));
            for (i, f) in self.figures.iter().enumerate() {
                if f.figure.name == "placement" {
                    out.push(Figure(i));
                }
            }
        }
        if let Some(k) = &self.correction {
            out.push(Heading(2, "What-if correction".into()));
            out.push(Table(
                vec!["".into(), "value".into()],
                vec![
                    vec!["observed correlation".into(), num(&k["observed"], 3)],
                    vec![
                        "reliability of the measure (x)".into(),
                        esc(&text(&k["reliabilities"][0]["description"])),
                    ],
                    vec![
                        "reliability of the other score (y)".into(),
                        esc(&text(&k["reliabilities"][1]["description"])),
                    ],
                    vec![
                        "corrected correlation".into(),
                        if k["corrected"].is_null() {
                            format!("impossible ({} beyond ±1)", num(&k["corrected_value"], 3))
                        } else {
                            num(&k["corrected"], 3)
                        },
                    ],
                    vec![format!("{level:.0}% CI (classical)"), interval(&k["ci"], 3)],
                    vec![
                        format!("{level:.0}% CI (Monte Carlo, reliabilities drawn)"),
                        interval(&k["mc_ci"], 3),
                    ],
                    vec![
                        "share of impossible draws".into(),
                        format!(
                            "{}%",
                            num(
                                &Value::from(
                                    100.0 * k["inadmissible_share"].as_f64().unwrap_or(0.0)
                                ),
                                1
                            )
                        ),
                    ],
                ],
            ));
            for (i, f) in self.figures.iter().enumerate() {
                if f.figure.name == "correction" {
                    out.push(Figure(i));
                }
            }
        }
        let warnings: Vec<String> = [
            Some(b),
            self.explain.as_ref(),
            self.placement.as_ref(),
            self.correction.as_ref(),
        ]
        .into_iter()
        .flatten()
        .flat_map(|d| d["warnings"].as_array().cloned().unwrap_or_default())
        .map(|w| esc(&text(&w["message"])))
        .collect();
        if !warnings.is_empty() {
            out.push(Heading(2, "Warnings".into()));
            out.push(List(warnings));
        }
        out.push(Heading(2, "Methods".into()));
        out.extend(methods(self).into_iter().map(Para));
        out.push(Heading(2, "References".into()));
        let mut refs: Vec<String> = [Some(b), self.placement.as_ref()]
            .into_iter()
            .flatten()
            .flat_map(|d| d["references"].as_array().cloned().unwrap_or_default())
            .map(|r| text(&r))
            .chain(EXTRA_REFERENCES.iter().map(|r| r.to_string()))
            .chain(
                self.correction
                    .is_some()
                    .then_some([REF_SPEARMAN, REF_HUNTER_SCHMIDT])
                    .into_iter()
                    .flatten()
                    .map(str::to_string),
            )
            .collect();
        refs.sort();
        refs.dedup();
        out.push(List(refs.iter().map(|r| esc(r)).collect()));
        out.push(Heading(2, "Reporting checklist (REGEMA)".into()));
        out.push(Para(
            "Items of the reporting guideline for reliability generalization meta-analyses \
             (Sánchez-Meca et al., 2021), with what this report covers. The guideline's 30 \
             items and their sections are as published; the items' order and wording here are \
             our paraphrase and were not checked against the paper's table, so check them \
             before citing item numbers."
                .into(),
        ));
        out.push(Table(
            vec![
                "item".into(),
                "section".into(),
                "asks for".into(),
                "status".into(),
                "where / what to add".into(),
            ],
            self.checklist
                .iter()
                .map(|i| {
                    vec![
                        i.number.to_string(),
                        i.section.to_string(),
                        esc(i.item),
                        coverage_mark(i.coverage),
                        esc(&i.note),
                    ]
                })
                .collect(),
        ));
        out.push(Heading(2, "Software and reproducibility".into()));
        out.push(Table(
            vec!["".into(), "".into()],
            vec![
                vec![
                    "software".into(),
                    format!("relyard {}", env!("CARGO_PKG_VERSION")),
                ],
                vec!["coding sheet".into(), esc(&self.input_file)],
                vec![
                    "SHA-256 of the coding sheet".into(),
                    format!("<code>{}</code>", self.input_sha256),
                ],
                vec![
                    "options".into(),
                    format!("<code>{}</code>", esc(&self.options.join(" "))),
                ],
                vec!["settings in effect".into(), esc(&self.settings())],
            ],
        ));
        out
    }

    /// The report as one self-contained HTML page.
    pub fn html(&self) -> String {
        let mut body = String::new();
        for block in self.blocks() {
            match block {
                Block::Heading(level, t) => body.push_str(&format!("<h{level}>{t}</h{level}>\n")),
                Block::Para(t) => body.push_str(&format!("<p>{t}</p>\n")),
                Block::Note(t) => body.push_str(&format!("<aside class=\"caution\"><strong>For decisions about individuals.</strong> {}</aside>\n", esc(&t))),
                Block::List(items) => {
                    body.push_str("<ul>\n");
                    for i in items {
                        body.push_str(&format!("<li>{i}</li>\n"));
                    }
                    body.push_str("</ul>\n");
                }
                Block::Table(head, rows) => {
                    body.push_str("<table>\n<thead><tr>");
                    for h in head {
                        body.push_str(&format!("<th>{h}</th>"));
                    }
                    body.push_str("</tr></thead>\n<tbody>\n");
                    for r in rows {
                        body.push_str("<tr>");
                        for c in r {
                            body.push_str(&format!("<td>{c}</td>"));
                        }
                        body.push_str("</tr>\n");
                    }
                    body.push_str("</tbody></table>\n");
                }
                Block::Figure(i) => {
                    let f = &self.figures[i];
                    body.push_str(&format!(
                        "<figure id=\"fig-{}\">\n{}\n<figcaption><strong>{}.</strong> {} \
                         <a href=\"figures/{}.svg\">SVG</a> · <a href=\"figures/{}.png\">PNG</a></figcaption>\n</figure>\n",
                        f.figure.name,
                        strip_xml_declaration(&f.svg),
                        esc(&f.figure.title),
                        esc(&f.figure.description),
                        f.figure.name,
                        f.figure.name
                    ));
                }
            }
        }
        format!(
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
             <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
             <meta name=\"generator\" content=\"relyard {}\">\n<title>{}</title>\n<style>{}</style>\n</head>\n\
             <body>\n<main>\n<h1>{}</h1>\n<p class=\"meta\">Made by relyard {} from {} (SHA-256 {}…).</p>\n{}</main>\n</body>\n</html>\n",
            env!("CARGO_PKG_VERSION"),
            esc(&self.title),
            CSS,
            esc(&self.title),
            env!("CARGO_PKG_VERSION"),
            esc(&self.input_file),
            &self.input_sha256[..self.input_sha256.len().min(12)],
            body
        )
    }

    /// The report as Markdown (figures linked from figures/).
    pub fn markdown(&self) -> String {
        let mut out = format!("# {}\n\n", self.title);
        out.push_str(&format!(
            "Made by relyard {} from {} (SHA-256 `{}`).\n\n",
            env!("CARGO_PKG_VERSION"),
            self.input_file,
            self.input_sha256
        ));
        for block in self.blocks() {
            match block {
                Block::Heading(level, t) => {
                    out.push_str(&format!("{} {}\n\n", "#".repeat(level as usize), plain(&t)))
                }
                Block::Para(t) => out.push_str(&format!("{}\n\n", plain(&t))),
                Block::Note(t) => out.push_str(&format!(
                    "> **For decisions about individuals.** {}\n\n",
                    plain(&t)
                )),
                Block::List(items) => {
                    for i in items {
                        out.push_str(&format!("- {}\n", plain(&i)));
                    }
                    out.push('\n');
                }
                Block::Table(head, rows) => {
                    let cell = |s: &str| plain(s).replace('|', "\\|");
                    out.push_str(&format!(
                        "| {} |\n",
                        head.iter().map(|h| cell(h)).collect::<Vec<_>>().join(" | ")
                    ));
                    out.push_str(&format!("|{}\n", " --- |".repeat(head.len())));
                    for r in rows {
                        out.push_str(&format!(
                            "| {} |\n",
                            r.iter().map(|c| cell(c)).collect::<Vec<_>>().join(" | ")
                        ));
                    }
                    out.push('\n');
                }
                Block::Figure(i) => {
                    let f = &self.figures[i].figure;
                    out.push_str(&format!(
                        "![{}](figures/{}.svg)\n\n*{}.* {}\n\n",
                        f.title, f.name, f.title, f.description
                    ));
                }
            }
        }
        out
    }
}

/// HTML fragments back to plain text for Markdown.
fn plain(s: &str) -> String {
    s.replace("<strong>", "**")
        .replace("</strong>", "**")
        .replace("<sub>", "")
        .replace("</sub>", "")
        .replace("<code>", "`")
        .replace("</code>", "`")
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&amp;", "&")
}

fn strip_xml_declaration(svg: &str) -> &str {
    match svg.strip_prefix("<?xml") {
        Some(rest) => rest.find("?>").map_or(svg, |i| rest[i + 2..].trim_start()),
        None => svg,
    }
}

fn coverage_mark(c: Coverage) -> String {
    let class = match c {
        Coverage::Covered => "covered",
        Coverage::Partly => "partly",
        Coverage::Author => "author",
        Coverage::NotRun => "notrun",
    };
    format!("<span class=\"{class}\">{}</span>", c.label())
}

/// The first letter in upper case.
fn capitalized(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

/// The model and its τ² estimator in words.
fn model_words(b: &Value) -> String {
    if text(&b["model"]) == "common" {
        "common-effect model (τ² = 0 assumed)".into()
    } else {
        format!(
            "random-effects model, τ² by {}",
            text(&b["tau2_method"]).to_uppercase()
        )
    }
}

/// Coefficient types and their counts, from the studies' list.
fn type_counts(b: &Value) -> String {
    let mut counts: std::collections::BTreeMap<String, usize> = Default::default();
    for s in b["studies"].as_array().into_iter().flatten() {
        *counts.entry(text(&s["coef_type"])).or_default() += 1;
    }
    counts
        .iter()
        .map(|(t, n)| format!("{t} {n}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The interval method in words.
fn ci_method_words(m: &str) -> String {
    match m {
        "knapp-hartung" => "the Knapp–Hartung method".into(),
        "knapp-hartung-floor" => "the Knapp–Hartung method (scale factor at least 1)".into(),
        "wald" => "the Wald (normal) method".into(),
        other => other.into(),
    }
}

const REF_SPEARMAN: &str = "Spearman, C. (1904). The proof and measurement of association between two things. American Journal of Psychology, 15(1), 72–101.";
const REF_HUNTER_SCHMIDT: &str = "Hunter, J. E., & Schmidt, F. L. (2004). Methods of meta-analysis: Correcting error and bias in research findings (2nd ed.). Thousand Oaks, CA: Sage.";

/// References the methods section cites beyond the commands' own lists.
const EXTRA_REFERENCES: [&str; 2] = [
    "Sánchez-Meca, J., Marín-Martínez, F., López-López, J. A., Núñez-Núñez, R. M., Rubio-Aparicio, M., López-García, J. J., López-Pina, J. A., Blázquez-Rincón, D. M., López-Ibáñez, C., & López-Nicolás, R. (2021). Improving the reporting quality of reliability generalization meta-analyses: The REGEMA checklist. Psicothema, 33(2), 306–315.",
    "Sterne, J. A. C., & Egger, M. (2001). Funnel plots for detecting bias in meta-analysis: Guidelines on choice of axis. Journal of Clinical Epidemiology, 54(10), 1046–1055.",
];

/// The methods, with formulas, for the run's choices.
fn methods(c: &ReportContent) -> Vec<String> {
    let b = &c.benchmark;
    let level = b["level"].as_f64().unwrap_or(0.95) * 100.0;
    let mut m = vec![format!(
        "<strong>Transformation.</strong> Each coefficient was analysed on the {} scale, \
         T = {}, with its sampling variance vᵢ; results were transformed back to the \
         coefficient's own scale for reporting.",
        text(&b["transform"]),
        esc(&text(&b["transform_formula"]))
    )];
    let common = text(&b["model"]) == "common";
    let ci = text(&b["ci_method"]);
    let ci_detail = if ci.starts_with("knapp-hartung") {
        " (t with k − 1 df, the variance scaled by the weighted residual mean square)"
    } else {
        " (normal quantiles)"
    };
    m.push(if common {
        format!(
            "<strong>Model.</strong> A common-effect model: Tᵢ = μ + eᵢ with eᵢ ~ N(0, vᵢ) \
             (one true value, τ² = 0 assumed); the pooled value μ̂ = ΣwᵢTᵢ/Σwᵢ with weights \
             wᵢ = 1/vᵢ; its {level:.0}% confidence interval by {}{ci_detail}.",
            ci_method_words(&ci)
        )
    } else {
        format!(
            "<strong>Model.</strong> A random-effects model: Tᵢ = μ + uᵢ + eᵢ with eᵢ ~ N(0, \
             vᵢ) and between-setting variation uᵢ ~ N(0, τ²); τ² estimated by {}; the pooled \
             value μ̂ = ΣwᵢTᵢ/Σwᵢ with weights wᵢ = 1/(vᵢ + τ̂²); its {level:.0}% confidence \
             interval by {}{ci_detail}.",
            text(&b["tau2_method"]).to_uppercase(),
            ci_method_words(&ci)
        )
    });
    m.push(
        "<strong>Heterogeneity.</strong> Q = Σwᵢ(Tᵢ − μ̂)² with weights 1/vᵢ; I² = 100·τ̂²/(τ̂² + s²) \
         and H² = (τ̂² + s²)/s² with the typical within-study variance s² = (k − 1)/tr(P); a \
         Q-profile confidence interval for τ² (Viechtbauer, 2007)."
            .into(),
    );
    if !b["pi"].is_null() {
        m.push(format!(
            "<strong>Expected range.</strong> The {level:.0}% prediction interval for the true \
             coefficient in a new setting, μ̂ ± t<sub>k−2</sub>·√(τ̂² + SE²) (Higgins, \
             Thompson & Spiegelhalter, 2009), transformed back."
        ));
    } else {
        m.push(
            "<strong>Expected range.</strong> None is stated: the model or the number of \
             studies leaves no room for a prediction interval (see the warnings)."
                .into(),
        );
    }
    m.push(
        "<strong>Small-study patterns.</strong> The precision plot shows each study's \
         transformed value against its standard error with lines at ±1.96 SE around the \
         pooled value (Sterne & Egger, 2001); it is a visual check, not a test."
            .into(),
    );
    if c.explain.is_some() {
        m.push(
            "<strong>Moderators.</strong> Mixed-effects meta-regression Tᵢ = xᵢᵀβ + uᵢ + eᵢ \
             with the same τ² estimator; R² = max(0, (τ̂²₀ − τ̂²)/τ̂²₀) against the model \
             without moderators. The score-variance test regresses ln(1 − coefficient) on \
             ln(SD): since 1 − ρ = σ²<sub>E</sub>/σ²<sub>X</sub>, a slope of −2 means the \
             differences come wholly from the spread of scores, 0 that the error variance \
             grows with it. Each moderator figure shows that moderator alone."
                .into(),
        );
    }
    if c.placement.is_some() {
        m.push(
            "<strong>Placing the new study.</strong> The expected range for an observed \
             coefficient adds the new study's own sampling variance to the prediction \
             interval: μ̂(x₀) ± t·√(τ̂² + SE² + v<sub>new</sub>)."
                .into(),
        );
    }
    if c.correction.is_some() {
        m.push(
            "<strong>Correction.</strong> Spearman's correction r<sub>c</sub> = r/√(r<sub>xx</sub> \
             r<sub>yy</sub>); the classical interval corrects the Fisher-z interval of r; the \
             Monte Carlo interval also draws each reliability from its own distribution."
                .into(),
        );
    }
    m
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
.covered { color: var(--blue); font-weight: 600; }
.partly { color: var(--blue); }
.author { color: var(--orange); }
.notrun { color: var(--muted); }
@media print {
  body { font-size: 11pt; }
  main { max-width: none; padding: 0; }
  h2 { break-after: avoid; }
  figure, table { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
";
