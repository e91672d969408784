//! What the page may ask for: each request is one command of the command line (`pool`,
//! `check`, `explain`, `items`, `correct` or `report`) with the page's settings turned into
//! that command's options — only options on this file's lists, none that names a file — and
//! the upload in place of the file. The answer is that command's `--json` document with its
//! figures as SVG text, or for `report` the report's files in one zip.

use super::super::args::{Cli, Command};
use super::super::output::Failure;
use super::super::report::{report_files, shell_quote};
use super::wording::PageNames;
use clap::Parser;
use relyard::analysis::{Correction, Progress, run};
use relyard::output::json::{
    CheckDocument, CorrectionDocument, ExplainDocument, IccDocument, ItemsDocument, PoolDocument,
};
use relyard::output::prose::{benchmark_paragraph, placement_paragraph};
use std::io::Write;
use std::sync::Arc;

/// The invented demo sheet and item data, in the binary.
pub(super) const DEMO_SHEET: &[u8] = include_bytes!("../../../datasets-demo/candor-benchmark.csv");
pub(super) const DEMO_NAME: &str = "candor-benchmark.csv";
pub(super) const DEMO_ITEMS: &[u8] = include_bytes!("../../../datasets-demo/candor-items.csv");
pub(super) const DEMO_ITEMS_NAME: &str = "candor-items.csv";
pub(super) const DEMO_STUDY: &[u8] = include_bytes!("../../../datasets-demo/candor-study.csv");
pub(super) const DEMO_STUDY_NAME: &str = "candor-study.csv";
const DEMO_MEASURE: &str = "the Brindlewood Team Candor Inventory";

/// The folder the reproducing `relyard report` command writes to.
pub(super) const REPORT_FOLDER: &str = "relyard-report";

/// Which command a request runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Kind {
    Pool,
    Check,
    Explain,
    Items,
    Correct,
    /// A correlation corrected with the benchmark of the uploaded sheet as the measure's
    /// reliability (as `relyard report` corrects one).
    CorrectWithBenchmark,
    /// A regression's slopes corrected, from uploaded raw data (`source=data`) or a summary
    /// matrix (`source=summary`).
    CorrectRegression,
    /// Intraclass correlations of an uploaded table of scores (occasions or raters).
    Icc,
    Report,
}

/// The page's name of a setting, the option it becomes, and the setting as the page labels
/// it (for messages).
type Names = &'static [(&'static str, &'static str, &'static str)];

/// How the sheet is read and the model fitted: for every request about a coding sheet.
const SHEET_SETTINGS: Names = &[
    ("transform", "--transform", "“Analysis scale” (Benchmark)"),
    ("tau2", "--tau2", "“Between-study variance” (Benchmark)"),
    ("ci", "--ci", "“Confidence interval” (Benchmark)"),
    ("level", "--level", "“Level” (Benchmark)"),
    (
        "dependence",
        "--dependence",
        "“Rows from one sample or cluster” (Benchmark)",
    ),
    (
        "sampling_correlation",
        "--sampling-correlation",
        "the assumed correlation of sampling errors",
    ),
    ("inference", "--inference", "the kind of inference"),
    ("worksheet", "--worksheet", "“Worksheet” (Benchmark)"),
    ("delimiter", "--delimiter", "the delimiter"),
    ("column", "--column", "the column mapping (Benchmark)"),
    ("where", "--where", "the rows chosen"),
];
/// The measure's name, for the commands whose prose names it.
const MEASURE_SETTINGS: Names = &[("measure", "--measure", "the measure's name")];
const SHEET_FLAGS: Names = &[
    (
        "skip_invalid",
        "--skip-invalid",
        "“Leave invalid rows out” (Benchmark)",
    ),
    (
        "allow_mixed_types",
        "--allow-mixed-types",
        "mixing kinds of coefficient",
    ),
];
const MODERATOR_SETTINGS: Names = &[
    ("moderator", "--moderator", "the moderators (Explain)"),
    ("categorical", "--categorical", "“as categories” (Explain)"),
    ("reference", "--reference", "the reference level (Explain)"),
    ("spread_metric", "--spread-metric", "the score SDs' metric"),
];
const MODERATOR_FLAGS: Names = &[("uncentred", "--uncentred", "uncentred moderators")];
const STUDY_SETTINGS: Names = &[
    ("coef", "--coef", "“Your coefficient” (Your study)"),
    ("n", "--n", "“Respondents (n)” (Your study)"),
    ("items", "--items", "“Items” (Your study)"),
    (
        "coef_type",
        "--coef-type",
        "“Kind of coefficient” (Your study)",
    ),
    ("sd", "--sd", "“Score SD” (Your study)"),
    ("sd_metric", "--sd-metric", "“SD of” (Your study)"),
    (
        "scale_min",
        "--scale-min",
        "“Lowest item response” (Your study)",
    ),
    (
        "scale_max",
        "--scale-max",
        "“Highest item response” (Your study)",
    ),
    ("at", "--at", "your study's moderator values (Your study)"),
    (
        "in_cluster",
        "--in-cluster",
        "“Cluster of the sheet it belongs to” (Your study)",
    ),
];
const EXPLAIN_SETTINGS: Names = &[
    ("by", "--by", "“Subgroups by” (Explain)"),
    ("permutations", "--permutations", "“Permutations” (Explain)"),
    ("seed", "--seed", "the random seed"),
];
const EXPLAIN_FLAGS: Names = &[
    ("score_spread", "--score-spread", "“Score spread” (Explain)"),
    (
        "influence",
        "--influence",
        "“Influence of each study” (Explain)",
    ),
];
const ITEM_SETTINGS: Names = &[
    ("items", "--items", "“Items” (Your items)"),
    ("reverse", "--reverse", "“Reverse-keyed items” (Your items)"),
    ("scale_min", "--scale-min", "“Lowest response” (Your items)"),
    (
        "scale_max",
        "--scale-max",
        "“Highest response” (Your items)",
    ),
    ("missing_code", "--missing-code", "the missing-value codes"),
    ("worksheet", "--worksheet", "the worksheet"),
    ("delimiter", "--delimiter", "the delimiter"),
    ("bootstrap", "--bootstrap", "the bootstrap"),
    ("seed", "--seed", "the random seed"),
    ("level", "--level", "the level"),
];
const ICC_SETTINGS: Names = &[
    ("columns", "--columns", "“Columns” (Retest and raters)"),
    ("missing_code", "--missing-code", "the missing-value codes"),
    ("worksheet", "--worksheet", "the worksheet"),
    ("delimiter", "--delimiter", "the delimiter"),
    ("level", "--level", "the level"),
];
const ITEM_FLAGS: Names = &[
    ("pairwise", "--pairwise", "pairwise deletion"),
    ("ordinal", "--ordinal", "“Ordinal items” (Your items)"),
];
const CORRECT_SETTINGS: Names = &[
    ("r", "--r", "“Observed correlation” (Correction)"),
    ("n", "--n", "“Respondents (n)” (Correction)"),
    (
        "rel_x",
        "--rel-x",
        "the reliability of the measure, x (Correction)",
    ),
    (
        "rel_y",
        "--rel-y",
        "the reliability of the other score, y (Correction)",
    ),
    ("draws", "--draws", "the number of draws"),
    ("seed", "--seed", "the random seed"),
    ("level", "--level", "the level"),
    ("grid", "--grid", "the sensitivity grid"),
];
const REPORT_SETTINGS: Names = &[
    ("r", "--r", "“Observed correlation” (Correction)"),
    (
        "rel_y",
        "--rel-y",
        "the reliability of the other score, y (Correction)",
    ),
    ("draws", "--draws", "the number of draws"),
    ("seed", "--seed", "the random seed"),
];
const BENCHMARK_CORRECTION_SETTINGS: Names = &[
    ("r", "--r", "“Observed correlation” (Correction)"),
    ("n", "--n", "“Respondents (n)” (Correction)"),
    (
        "rel_y",
        "--rel-y",
        "the reliability of the other score, y (Correction)",
    ),
    ("draws", "--draws", "the number of draws"),
    ("seed", "--seed", "the random seed"),
    ("at", "--at", "your study's moderator values (Your study)"),
];
const REGRESSION_SETTINGS: Names = &[
    ("outcome", "--outcome", "“Outcome” (Correction)"),
    ("predictor", "--predictor", "“Predictors” (Correction)"),
    ("rel", "--rel", "“Reliabilities” (Correction)"),
    ("n", "--n", "“n” of the summary matrix (Correction)"),
    ("draws", "--draws", "the number of draws"),
    ("seed", "--seed", "the random seed"),
    ("level", "--level", "the level"),
    ("grid", "--grid", "the sensitivity grid"),
    ("delimiter", "--delimiter", "the delimiter"),
    ("worksheet", "--worksheet", "the worksheet"),
    ("missing_code", "--missing-code", "the missing-value codes"),
];
const REPORT_FLAGS: Names = &[("score_spread", "--score-spread", "“Score spread” (Explain)")];

impl Kind {
    fn command(self) -> &'static str {
        match self {
            Kind::Pool => "pool",
            Kind::Check => "check",
            Kind::Explain => "explain",
            Kind::Items => "items",
            Kind::Icc => "icc",
            Kind::Correct | Kind::CorrectRegression => "correct",
            Kind::CorrectWithBenchmark | Kind::Report => "report",
        }
    }

    /// The settings with a value, and the flags, this kind of request takes.
    pub(super) fn settings(self) -> (Vec<Names>, Vec<Names>) {
        match self {
            Kind::Pool => (vec![SHEET_SETTINGS, MEASURE_SETTINGS], vec![SHEET_FLAGS]),
            Kind::Check => (
                vec![
                    SHEET_SETTINGS,
                    MEASURE_SETTINGS,
                    MODERATOR_SETTINGS,
                    STUDY_SETTINGS,
                ],
                vec![SHEET_FLAGS, MODERATOR_FLAGS],
            ),
            Kind::Explain => (
                vec![SHEET_SETTINGS, MODERATOR_SETTINGS, EXPLAIN_SETTINGS],
                vec![SHEET_FLAGS, MODERATOR_FLAGS, EXPLAIN_FLAGS],
            ),
            Kind::Items => (vec![ITEM_SETTINGS], vec![ITEM_FLAGS]),
            Kind::Icc => (vec![ICC_SETTINGS], vec![]),
            Kind::Correct => (vec![CORRECT_SETTINGS], vec![]),
            Kind::CorrectRegression => (vec![REGRESSION_SETTINGS], vec![]),
            Kind::CorrectWithBenchmark => (
                vec![
                    SHEET_SETTINGS,
                    MEASURE_SETTINGS,
                    MODERATOR_SETTINGS,
                    BENCHMARK_CORRECTION_SETTINGS,
                ],
                vec![SHEET_FLAGS, MODERATOR_FLAGS],
            ),
            Kind::Report => (
                vec![
                    SHEET_SETTINGS,
                    MEASURE_SETTINGS,
                    MODERATOR_SETTINGS,
                    STUDY_SETTINGS,
                    REPORT_SETTINGS,
                ],
                vec![SHEET_FLAGS, MODERATOR_FLAGS, REPORT_FLAGS],
            ),
        }
    }

    /// The page's words for this request's options (its fields' labels).
    pub(super) fn page_names(self) -> PageNames {
        let (values, flags) = self.settings();
        PageNames::new(
            values
                .iter()
                .chain(&flags)
                .flat_map(|l| l.iter())
                .map(|(_, option, label)| (*option, *label))
                .collect(),
        )
    }

    /// What the request's upload is: a coding sheet, item data, or nothing.
    pub(super) fn upload(self) -> Upload {
        match self {
            Kind::Items | Kind::Icc => Upload::ItemData,
            Kind::CorrectRegression => Upload::StudyData,
            Kind::Correct => Upload::None,
            _ => Upload::Sheet,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Upload {
    /// A coding sheet.
    Sheet,
    /// Item responses.
    ItemData,
    /// A study's scale scores, or their summary matrix.
    StudyData,
    None,
}

impl Upload {
    /// The demo's file of this kind: its name and bytes.
    pub(super) fn demo(self) -> (&'static str, &'static [u8]) {
        match self {
            Upload::Sheet => (DEMO_NAME, DEMO_SHEET),
            Upload::ItemData => (DEMO_ITEMS_NAME, DEMO_ITEMS),
            Upload::StudyData => (DEMO_STUDY_NAME, DEMO_STUDY),
            Upload::None => ("", b""),
        }
    }
}

/// A file name for messages: the last part of what the page sent, never a path.
pub(super) fn display_name(given: &str) -> String {
    let last = given.rsplit(['/', '\\']).next().unwrap_or("").trim();
    let clean: String = last.chars().filter(|c| !c.is_control()).take(200).collect();
    if clean.is_empty() {
        "upload.csv".into()
    } else {
        clean
    }
}

/// A reliability the page gives for a correction: a value, optionally with its sample
/// (`n=`, `items=`, `kind=`) — never a benchmark read from a file (`sheet=`).
fn opens_no_file(spec: &str) -> bool {
    if spec.trim() == "1" {
        return true;
    }
    let mut parts = spec.split(',');
    let first_is_number = parts
        .next()
        .is_some_and(|v| v.trim().parse::<f64>().is_ok());
    first_is_number
        && parts.all(|p| {
            p.split_once('=')
                .is_some_and(|(k, _)| matches!(k.trim(), "n" | "items" | "k" | "kind"))
        })
}

/// The command line for a request: the command, the page's settings as its options, and
/// the upload's name as the file (after `--`, so that a name is never read as an option).
pub(super) fn arguments(
    kind: Kind,
    q: &[(String, String)],
    name: &str,
    demo: bool,
) -> Result<Vec<String>, String> {
    let mut args = vec!["relyard".to_string(), kind.command().to_string()];
    let (values, flags) = kind.settings();
    let mut measure = false;
    for (key, value) in q {
        if matches!(key.as_str(), "name" | "demo" | "job" | "source") {
            continue;
        }
        let value_option = values
            .iter()
            .flat_map(|l| l.iter())
            .find(|(k, _, _)| k == key);
        if let Some((_, option, _)) = value_option {
            let spec = match key.as_str() {
                "rel_x" | "rel_y" => Some(value.as_str()),
                "rel" => Some(value.split_once('=').map_or("", |(_, s)| s)),
                _ => None,
            };
            if spec.is_some_and(|s| !opens_no_file(s)) {
                return Err(format!(
                    "a reliability here is a value such as 0.8, optionally with n=, items= \
                     and kind= (as in 0.8,n=200,items=10); \"{}\" is not one",
                    display_name(value)
                ));
            }
            measure |= key == "measure";
            args.push(format!("{option}={value}"));
        } else if let Some((_, option, _)) = flags
            .iter()
            .flat_map(|l| l.iter())
            .find(|(k, _, _)| k == key)
        {
            if value == "1" || value == "true" {
                args.push((*option).to_string());
            }
        } else {
            return Err(format!("unknown setting \"{}\"", display_name(key)));
        }
    }
    let names_measure = values.contains(&MEASURE_SETTINGS);
    if demo && !measure && names_measure {
        args.push(format!("--measure={DEMO_MEASURE}"));
    }
    match kind {
        Kind::Report | Kind::CorrectWithBenchmark => args.push(format!("--out={REPORT_FOLDER}")),
        _ => args.push("--json".into()),
    }
    if kind == Kind::CorrectRegression {
        // The upload's name as the file option's value; the bytes are the upload's.
        let summary = q.iter().any(|(k, v)| k == "source" && v == "summary");
        let option = if summary { "--summary" } else { "--data" };
        args.push(format!("{option}={name}"));
    } else if kind.upload() != Upload::None {
        args.push("--".into());
        args.push(name.to_string());
    }
    Ok(args)
}

/// The `relyard report` command that writes, on the user's own machine, the report the page
/// downloads for these settings (the sheet named as the page uploaded it).
pub(super) fn report_command(args: &[String]) -> String {
    args.iter()
        .map(|a| shell_quote(a))
        .collect::<Vec<_>>()
        .join(" ")
}

/// What an analysis answers: a JSON document, or a zip of files.
pub(super) enum Answer {
    Document(serde_json::Value),
    Zip(Vec<u8>),
}

/// Run the analysis of `args` on the uploaded bytes: the document with its figures (or the
/// report's zip), or the message the command line would print.
pub(super) fn analysed(
    kind: Kind,
    args: Vec<String>,
    bytes: Vec<u8>,
    progress: &dyn Progress,
) -> Result<Answer, String> {
    let names = kind.page_names();
    let message = |f: Failure| match f {
        Failure::Usage(u) => names.reword(&u.0),
        Failure::Lib(e) => names.reword(&e.render(&names)),
        Failure::ClosedPipe => "the connection closed".into(),
    };
    let command = Cli::try_parse_from(&args).map_err(|e| names.reword(&e.to_string()))?;
    let mut settings = match command.command {
        Command::Pool(a) => super::super::config::pool(a),
        Command::Check(a) => super::super::config::check(a),
        Command::Explain(a) => super::super::config::explain(a),
        Command::Items(a) => super::super::config::items(a),
        Command::Icc(a) => super::super::config::icc(a),
        Command::Correct(a) => super::super::config::correct(a),
        Command::Report(a) => super::super::config::report(a),
        _ => return Err("not an analysis request".into()),
    }
    .map_err(message)?;
    let bytes = Arc::new(bytes);
    if let Some(sheet) = settings.sheet.as_mut() {
        sheet.bytes = Some(bytes.clone());
    }
    for table in [settings.items.as_mut(), settings.icc.as_mut()]
        .into_iter()
        .flatten()
    {
        table.bytes = Some(bytes.clone());
    }
    if let Some(relyard::analysis::CorrectionSettings::Regression { data, .. }) =
        settings.correction.as_mut()
    {
        match data {
            relyard::analysis::RegressionData::Raw { bytes: b, .. }
            | relyard::analysis::RegressionData::Summary { bytes: b, .. } => {
                *b = Some(bytes.clone())
            }
        }
    }
    // The page shows the moderators' figures, which the explanation draws on request.
    settings.figures = true;
    let analysis = run(&settings, progress).map_err(|e| message(Failure::Lib(e)))?;
    let measure = settings.measure.as_deref();
    // The figures as SVG text: the page shows them as images (an SVG in an image runs no
    // script, whatever its labels hold).
    let svg = |f: relyard::plot::Figure| f.svg().map_err(|e| message(Failure::Lib(e)));
    let described = |f: relyard::plot::Figure| -> Result<serde_json::Value, String> {
        let (title, description) = (f.title.clone(), f.description.clone());
        Ok(serde_json::json!({ "title": title, "description": description, "svg": svg(f)? }))
    };
    let missing = || "the analysis gave no result".to_string();
    let doc = match kind {
        Kind::Pool => {
            let b = analysis.benchmark.as_ref().ok_or_else(missing)?;
            let paragraph = benchmark_paragraph(b, measure);
            let mut doc = document(&PoolDocument::new(b, &paragraph, &names))?;
            doc["figures"] = serde_json::json!({
                "forest": svg(relyard::output::figures::forest(b))?,
                "precision": svg(relyard::output::figures::funnel(b))?,
            });
            if let Some(p) = &analysis.prepared {
                doc["columns"] = sheet_columns(p);
                // A workbook's worksheets, for the page's choice of another.
                doc["worksheets"] = serde_json::json!(p.source.worksheets);
            }
            doc
        }
        Kind::Check => {
            let p = analysis.prepared.as_ref().ok_or_else(missing)?;
            let pl = analysis.placement.as_ref().ok_or_else(missing)?;
            let paragraph = placement_paragraph(pl, measure);
            let mut doc = document(&CheckDocument::new(p, pl, &paragraph, &names))?;
            doc["figures"] = serde_json::json!({
                "placement": svg(relyard::output::figures::placement(pl))?,
            });
            doc
        }
        Kind::Explain => {
            let p = analysis.prepared.as_ref().ok_or_else(missing)?;
            let e = analysis.explanation.as_ref().ok_or_else(missing)?;
            let mut doc = document(&ExplainDocument::new(p, e, &names))?;
            let mut figures = Vec::new();
            for m in &e.marginal {
                if let Some(f) = relyard::output::figures::moderator(p, m) {
                    figures.push(described(f)?);
                }
            }
            if let Some(s) = &e.spread {
                figures.push(described(relyard::output::figures::score_spread(p, s))?);
            }
            doc["figures"] = serde_json::Value::Array(figures);
            doc
        }
        Kind::Icc => {
            let o = analysis.icc.as_ref().ok_or_else(missing)?;
            document(&IccDocument::new(o, &names))?
        }
        Kind::Items => {
            let o = analysis.items.as_ref().ok_or_else(missing)?;
            document(&ItemsDocument::new(o, &names))?
        }
        Kind::Correct | Kind::CorrectWithBenchmark | Kind::CorrectRegression => {
            let c = analysis.correction.as_ref().ok_or_else(missing)?;
            let mut doc = document(&CorrectionDocument::new(c, settings.level, &names))?;
            if let Correction::Correlation { input, result, .. } = c {
                doc["figures"] = serde_json::json!({
                    "sensitivity": svg(relyard::output::figures::sensitivity(
                        result,
                        input.rel_x.point(),
                        input.rel_y.point(),
                    ))?,
                });
            }
            doc
        }
        Kind::Report => {
            let command = report_command(&args);
            let options = args[1..].to_vec();
            let files =
                report_files(&analysis, options, command).map_err(|e| message(Failure::Lib(e)))?;
            return zipped(&files).map(Answer::Zip);
        }
    };
    let mut doc = doc;
    // Warnings written out with an option's name get the page's words too.
    if let Some(list) = doc.get_mut("warnings").and_then(|w| w.as_array_mut()) {
        for w in list {
            if let Some(m) = w.get("message").and_then(|m| m.as_str()) {
                w["message"] = names.reword(m).into();
            }
        }
    }
    Ok(Answer::Document(doc))
}

/// Levels of a column listed for the page's choices (moderator reference levels, a new
/// study's moderator values); a column with more is offered as typed text.
const MAX_LEVELS_LISTED: usize = 50;

/// The sheet's columns for the page: each standard role with the column it was read from,
/// and every other column (a possible moderator) with whether its values are all numbers
/// and, when it has few, its levels in sorted order.
fn sheet_columns(p: &relyard::benchmark::Prepared) -> serde_json::Value {
    let roles: serde_json::Map<String, serde_json::Value> = p
        .columns
        .iter()
        .map(|(role, header)| (role.name().to_string(), header.clone().into()))
        .collect();
    let others: Vec<serde_json::Value> = p
        .extra_columns
        .iter()
        .enumerate()
        .map(|(j, name)| {
            let values: std::collections::BTreeSet<&str> = p
                .records
                .iter()
                .filter_map(|r| r.extra.get(j).and_then(|v| v.as_deref()))
                .collect();
            let numeric = !values.is_empty() && values.iter().all(|v| v.parse::<f64>().is_ok());
            let levels: Vec<&str> = if values.len() <= MAX_LEVELS_LISTED {
                values.into_iter().collect()
            } else {
                Vec::new()
            };
            serde_json::json!({ "name": name, "numeric": numeric, "levels": levels })
        })
        .collect();
    serde_json::json!({ "roles": roles, "others": others })
}

/// The report's files in one zip, under the report's folder.
fn zipped(files: &[(String, Vec<u8>)]) -> Result<Vec<u8>, String> {
    let mut zip = zip::ZipWriter::new(std::io::Cursor::new(Vec::new()));
    let options = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated);
    let failed = |e: &dyn std::fmt::Display| format!("the report could not be packed: {e}");
    for (name, bytes) in files {
        zip.start_file(format!("{REPORT_FOLDER}/{name}"), options)
            .map_err(|e| failed(&e))?;
        zip.write_all(bytes).map_err(|e| failed(&e))?;
    }
    Ok(zip.finish().map_err(|e| failed(&e))?.into_inner())
}

/// A document as a JSON value (to add the figures to).
fn document<T: serde::Serialize>(d: &T) -> Result<serde_json::Value, String> {
    serde_json::to_value(d).map_err(|e| e.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;
    use relyard::setting::{Setting, SettingNames};

    fn q(pairs: &[(&str, &str)]) -> Vec<(String, String)> {
        pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect()
    }

    #[test]
    fn the_page_settings_become_options_of_the_command_and_nothing_else() {
        let args = arguments(
            Kind::Pool,
            &q(&[("tau2", "dl"), ("skip_invalid", "1")]),
            "s.csv",
            false,
        )
        .unwrap();
        assert_eq!(
            args,
            [
                "relyard",
                "pool",
                "--tau2=dl",
                "--skip-invalid",
                "--json",
                "--",
                "s.csv"
            ]
        );
        assert!(arguments(Kind::Pool, &q(&[("output", "/etc/passwd")]), "s.csv", false).is_err());
        // The new study's settings belong to check (and report) only.
        assert!(arguments(Kind::Pool, &q(&[("coef", "0.7")]), "s.csv", false).is_err());
        let args = arguments(
            Kind::Check,
            &q(&[("coef", "0.7"), ("n", "90")]),
            "s.csv",
            true,
        );
        assert!(args.unwrap().starts_with(&[
            "relyard".into(),
            "check".into(),
            "--coef=0.7".into()
        ]));
        // A value that looks like an option stays a value.
        let args = arguments(Kind::Pool, &q(&[("measure", "--json")]), "s.csv", false).unwrap();
        assert!(args.contains(&"--measure=--json".to_string()));
        // Repeated settings stay repeated.
        let args = arguments(
            Kind::Explain,
            &q(&[("moderator", "year"), ("moderator", "sd")]),
            "s.csv",
            false,
        )
        .unwrap();
        assert!(args.contains(&"--moderator=year".to_string()));
        assert!(args.contains(&"--moderator=sd".to_string()));
        // A correction takes no file; a report writes to its folder, not --json.
        let args = arguments(Kind::Correct, &q(&[("r", "0.3")]), "x", false).unwrap();
        assert_eq!(args, ["relyard", "correct", "--r=0.3", "--json"]);
        let args = arguments(Kind::Report, &q(&[]), "s.csv", false).unwrap();
        assert!(args.contains(&format!("--out={REPORT_FOLDER}")));
        assert!(!args.contains(&"--json".to_string()));
    }

    #[test]
    fn a_reliability_from_the_page_never_names_a_file() {
        assert!(opens_no_file("0.8"));
        assert!(opens_no_file("0.8,n=200,items=10,kind=alpha"));
        assert!(!opens_no_file("sheet=/etc/passwd"));
        assert!(!opens_no_file("0.8,sheet=/etc/passwd"));
        assert!(!opens_no_file("0.8,at=x=1"));
        let sent = q(&[("r", "0.3"), ("rel_x", "sheet=/home/a/b.csv")]);
        assert!(arguments(Kind::Correct, &sent, "x", false).is_err());
    }

    #[test]
    fn a_sent_name_is_never_a_path() {
        assert_eq!(display_name("/etc/passwd"), "passwd");
        assert_eq!(display_name("C:\\data\\sheet.xlsx"), "sheet.xlsx");
        assert_eq!(display_name("../"), "upload.csv");
        assert_eq!(display_name("a\u{7}b.csv"), "ab.csv");
    }

    #[test]
    fn the_reproducing_command_is_quoted_for_a_shell() {
        let args = arguments(
            Kind::Report,
            &q(&[("measure", "the O'Neill scale"), ("tau2", "dl")]),
            "my sheet.csv",
            false,
        )
        .unwrap();
        let command = report_command(&args);
        assert!(command.starts_with("relyard report "), "{command}");
        assert!(
            command.contains("'--measure=the O'\\''Neill scale'"),
            "{command}"
        );
        assert!(command.ends_with("-- 'my sheet.csv'"), "{command}");
    }

    #[test]
    fn options_are_named_as_the_page_labels_them() {
        let names = Kind::Check.page_names();
        assert_eq!(
            names.name(Setting::StudyN),
            "“Respondents (n)” (Your study)"
        );
        let parser = "error: the following required arguments were not provided:\n  --n <N>\n\n\
                      Usage: relyard check --n <N> --coef <X> -- <SHEET>\n\nFor more \
                      information, try '--help'.\n";
        assert_eq!(
            names.reword(parser),
            "the following required arguments were not provided:\n  “Respondents (n)” (Your study)"
        );
        assert_eq!(
            Kind::Explain
                .page_names()
                .reword("give --moderator NAME, --by COLUMN or X"),
            "give the moderators (Explain), “Subgroups by” (Explain) or X"
        );
        assert_eq!(
            names.reword(
                "invalid value 'a' for '--coef <X>': no\n\nFor more information, try '--help'.\n"
            ),
            "invalid value 'a' for '“Your coefficient” (Your study)': no"
        );
        // A name the user gave stays, in capitals or not.
        assert_eq!(
            Kind::CorrectRegression
                .page_names()
                .reword("--predictor SES is given twice"),
            "“Predictors” (Correction) SES is given twice"
        );
        // The same option is another field in another step.
        assert_eq!(
            Kind::Correct.page_names().reword("--r needs --n"),
            "“Observed correlation” (Correction) needs “Respondents (n)” (Correction)"
        );
        // An option the page has no field for stays as it is, and so does a near name.
        let items = Kind::Items.page_names();
        assert_eq!(
            items.reword("use --force or --items-x"),
            "use --force or --items-x"
        );
        assert_eq!(
            items.reword("--reverse needs --scale-min and --scale-max."),
            "“Reverse-keyed items” (Your items) needs “Lowest response” (Your items) and \
             “Highest response” (Your items)."
        );
    }
}
