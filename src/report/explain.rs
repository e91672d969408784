//! Output of `relyard explain`: the readable summary and the JSON document.

use super::format::{fixed, p_value, percent_level, range, significant};
use super::json::{DocumentHead, InputSummary, SkippedRecord, Tau2FitRecord, TestRecord};
use crate::benchmark::Prepared;
use crate::metareg::influence::StudyInfluence;
use crate::metareg::permutation::PermutationResult;
use crate::metareg::spread::ScoreSpread;
use crate::metareg::subgroups::Subgroups;
use crate::metareg::{Explanation, Moderator};
use crate::pool::{CiMethod, Model, ModelFit};
use crate::transform::TransformKind;
use crate::warning::{Warning, WarningRecord};
use serde::Serialize;
use std::fmt::Write;

/// Everything an explain run produced.
#[derive(Debug, Clone, Copy)]
pub struct ExplainParts<'a> {
    /// The prepared studies.
    pub prepared: &'a Prepared,
    /// The main model (moderators, or intercept only).
    pub main: &'a Explanation,
    /// The permutation test, when run.
    pub permutation: Option<&'a PermutationResult>,
    /// The score-spread test, when run.
    pub spread: Option<&'a ScoreSpread>,
    /// Subgroup benchmarks, when asked for.
    pub subgroups: Option<&'a Subgroups>,
    /// Influence diagnostics of the main model, when asked for.
    pub influence: Option<&'a [StudyInfluence]>,
    /// All warnings of the run.
    pub warnings: &'a [Warning],
}

fn scale_note(t: TransformKind) -> String {
    match t {
        TransformKind::Bonett | TransformKind::HakstianWhalen => format!(
            "coefficients are on the {} scale, {}: a value that lowers it means a HIGHER \
             reliability",
            t.label(),
            t.get().formula()
        ),
        TransformKind::FisherZ => "coefficients are on the Fisher z scale: a value that raises \
                                   it means a higher reliability"
            .into(),
        TransformKind::Raw => "coefficients are on the coefficient's own scale".into(),
        TransformKind::None => "coefficients are on the scale of the sheet's effects".into(),
    }
}

fn model_line(fit: &ModelFit) -> String {
    let o = fit.options;
    let model = match o.model {
        Model::Common => "common effect (τ² = 0 assumed)".to_string(),
        Model::Random(e) => format!(
            "mixed effects; residual τ² by {} ({})",
            e.label(),
            e.abbreviation()
        ),
    };
    let tests = match o.ci {
        CiMethod::Wald => "Wald tests (z; omnibus χ²)".to_string(),
        CiMethod::KnappHartung | CiMethod::KnappHartungFloor => format!(
            "Knapp–Hartung tests (t with {} df; omnibus F){}",
            fit.k - fit.p,
            if o.ci == CiMethod::KnappHartungFloor {
                ", factor at least 1"
            } else {
                ""
            }
        ),
    };
    format!("{model}; {tests}; level {}", percent_level(o.level))
}

/// The coefficient table of a fit.
fn coefficient_table(
    o: &mut String,
    names: &[String],
    fit: &ModelFit,
    perm: Option<&[Option<f64>]>,
) {
    let level = percent_level(fit.options.level);
    let _ = write!(
        o,
        "  {:<34} {:>9} {:>8} {:>22} {:>9}",
        "",
        "estimate",
        "SE",
        format!("{level} CI"),
        "p"
    );
    if perm.is_some() {
        let _ = write!(o, " {:>9}", "perm. p");
    }
    let _ = writeln!(o);
    for (j, (name, c)) in names.iter().zip(&fit.coefficients).enumerate() {
        let short: String = name.chars().take(34).collect();
        let _ = write!(
            o,
            "  {:<34} {:>9} {:>8} {:>22} {:>9}",
            short,
            fixed(c.estimate, 4),
            fixed(c.se, 4),
            range(c.ci.lower, c.ci.upper, |x| fixed(x, 4)),
            p_value(c.p).replace("= ", "")
        );
        if let Some(pp) = perm {
            let _ = write!(
                o,
                " {:>9}",
                pp[j].map(|p| fixed(p, 4)).unwrap_or_else(|| "–".into())
            );
        }
        let _ = writeln!(o);
    }
}

/// Render the explain summary.
pub fn explain_summary(parts: &ExplainParts) -> String {
    let p = parts.prepared;
    let ex = parts.main;
    let fit = &ex.fit;
    let level = percent_level(fit.options.level);
    let mut o = String::new();
    let rule = "─".repeat(72);
    let _ = writeln!(
        o,
        "Explaining differences between {} coded studies",
        p.records.len()
    );
    let _ = writeln!(o, "{rule}");
    let _ = writeln!(
        o,
        "  sheet         {} ({}; {} rows read, {} usable, {} left out)",
        p.file,
        crate::report::format::sheet_kind(p.delimiter),
        p.rows_read,
        p.records.len(),
        p.skipped.len()
    );
    let _ = writeln!(
        o,
        "  scale         {}: {}",
        p.transform.label(),
        p.transform.get().formula()
    );
    let _ = writeln!(o, "  model         {}", model_line(fit));

    if !ex.design.moderators.is_empty() {
        let _ = writeln!(o);
        let _ = writeln!(o, "Moderators ({} studies in the model)", fit.k);
        for m in &ex.design.moderators {
            match m {
                Moderator::Numeric { name, .. } => {
                    let _ = writeln!(o, "  {name}: numeric");
                }
                Moderator::Categorical {
                    name,
                    reference,
                    counts,
                    ..
                } => {
                    let levels: Vec<String> =
                        counts.iter().map(|(l, k)| format!("{l} ({k})")).collect();
                    let _ = writeln!(
                        o,
                        "  {name}: categorical, reference level \"{reference}\"; levels (studies): {}",
                        levels.join(", ")
                    );
                }
            }
        }
        let _ = writeln!(o);
        let _ = writeln!(o, "  ({})", scale_note(p.transform));
        coefficient_table(
            &mut o,
            &ex.design.names,
            fit,
            parts.permutation.map(|r| r.coefficient_p.as_slice()),
        );
        let _ = writeln!(o);
        if let Some(om) = ex.omnibus {
            let (name, df) = match om.df2 {
                Some(d2) => ("F", format!("({}, {})", om.df, d2)),
                None => ("χ²", format!("({})", om.df)),
            };
            let perm = parts
                .permutation
                .and_then(|r| r.omnibus_p)
                .map(|pp| format!("; permutation p = {}", fixed(pp, 4)))
                .unwrap_or_default();
            let _ = writeln!(
                o,
                "  all moderators together     {name}{df} = {}, p {}{perm}",
                fixed(om.statistic, 3),
                p_value(om.p)
            );
        }
        match ex.r2 {
            Some(r2) => {
                let _ = writeln!(
                    o,
                    "  R² (share of τ² explained)  {}%  (τ² without moderators {})",
                    fixed(r2, 1),
                    significant(ex.tau2_intercept_only, 3)
                );
            }
            None => {
                let _ = writeln!(
                    o,
                    "  R²                          not defined: τ² without moderators is 0"
                );
            }
        }
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "  Residual heterogeneity");
    let tau_ci = fit
        .tau2_ci
        .map(|c| {
            format!(
                "   {level} CI {} (Q-profile)",
                range(c.lower, c.upper, |x| significant(x, 3))
            )
        })
        .unwrap_or_default();
    let _ = writeln!(o, "    τ²   {}{tau_ci}", significant(fit.tau2.tau2, 3));
    let _ = writeln!(o, "    I²   {}%", fixed(fit.i2, 1));
    let _ = writeln!(
        o,
        "    Q_E  {} on {} df, p {}",
        fixed(fit.heterogeneity.q, 2),
        fit.heterogeneity.df,
        p_value(fit.heterogeneity.p)
    );
    if let Some(r) = parts.permutation {
        let failed = if r.failed > 0 {
            format!("; {} could not be fitted and were left out", r.failed)
        } else {
            String::new()
        };
        let _ = writeln!(
            o,
            "  Permutation test: {} permutations, seed {}{failed}",
            r.permutations, r.seed
        );
    }
    list_excluded(
        &mut o,
        "Rows left out of the model (missing moderator value)",
        &ex.design.excluded,
    );

    if let Some(s) = parts.spread {
        spread_section(&mut o, s, &level);
    }
    if let Some(g) = parts.subgroups {
        subgroup_section(&mut o, g, &level);
    }
    if let Some(inf) = parts.influence {
        influence_section(&mut o, p, ex, inf);
    }
    if !p.skipped.is_empty() {
        let _ = writeln!(o);
        let _ = writeln!(o, "Rows left out (--skip-invalid)");
        for s in &p.skipped {
            let _ = writeln!(o, "  row {}: {}", s.row, s.reasons.join("; "));
        }
    }
    o
}

fn list_excluded(o: &mut String, title: &str, rows: &[crate::metareg::ExcludedRow]) {
    if rows.is_empty() {
        return;
    }
    let _ = writeln!(o, "  {title}:");
    for e in rows {
        let _ = writeln!(o, "    row {}: {}", e.row, e.reasons.join("; "));
    }
}

fn spread_section(o: &mut String, s: &ScoreSpread, level: &str) {
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "Score spread (always on the Bonett scale, ln(1 − coefficient), whatever --transform says)"
    );
    let _ = writeln!(
        o,
        "  model: ln(1 − coefficient) on ln(SD), SD on the {} metric; {} studies{}",
        s.metric,
        s.rows.len(),
        if s.names.len() > 2 {
            format!("; also {}", s.names[2..].join(", "))
        } else {
            String::new()
        }
    );
    let _ = writeln!(
        o,
        "  slope of ln(SD)     {}  (SE {}; {level} CI {})",
        fixed(s.slope.estimate, 3),
        fixed(s.slope.se, 3),
        range(s.slope.ci.lower, s.slope.ci.upper, |x| fixed(x, 3))
    );
    let _ = writeln!(o, "  test slope = 0      p {}", p_value(s.p_zero));
    let _ = writeln!(
        o,
        "  test slope = −2     p {}   (−2: constant error variance)",
        p_value(s.p_minus_two)
    );
    match s.tau2_share {
        Some(sh) => {
            let _ = writeln!(
                o,
                "  share of τ² explained by score spread   {}%  (τ² {} without ln(SD), {} with it)",
                fixed(sh, 1),
                significant(s.tau2_without, 3),
                significant(s.fit.tau2.tau2, 3)
            );
        }
        None => {
            let _ = writeln!(
                o,
                "  share of τ² explained: not defined (τ² without ln(SD) is 0)"
            );
        }
    }
    let _ = writeln!(
        o,
        "  typical (median) SD {} on the {} metric",
        significant(s.typical_sd, 3),
        s.metric
    );
    if s.log_items_column {
        let _ = writeln!(
            o,
            "  ln(items) is in the model: the forms differ in length, and a mean score's error \
             variance shrinks with the number of items"
        );
    }
    if let Some(rel) = s.sd_reliability {
        let _ = writeln!(
            o,
            "  reliability of ln(SD) across studies {}: sampling error in the reported SDs \
             flattens the slope by about {}%",
            fixed(rel, 3),
            fixed(100.0 * (1.0 - rel), 1)
        );
    }
    let _ = writeln!(o);
    o.push_str(&super::format::wrap(
        &format!("Reading: {}.", s.reading.sentence()),
        86,
        "  ",
    ));
    list_excluded(o, "Rows left out of the score-spread model", &s.excluded);
}

fn subgroup_section(o: &mut String, g: &Subgroups, level: &str) {
    let _ = writeln!(o);
    let _ = writeln!(o, "Benchmarks by {}", g.column);
    let _ = writeln!(
        o,
        "  {:<24} {:>4}  {:>8}  {:>16}  {:>16}  {:>8}  {:>6}",
        "group",
        "k",
        "pooled",
        format!("{level} CI"),
        format!("{level} PI"),
        "τ²",
        "I²"
    );
    for grp in &g.groups {
        let name: String = grp.level.chars().take(24).collect();
        match &grp.result {
            Ok(b) => {
                let c = b.coefficient;
                let pooled = c
                    .map(|c| fixed(c.estimate, 3))
                    .unwrap_or_else(|| significant(b.pool.estimate, 3));
                let ci = c
                    .map(|c| range(c.ci.lower, c.ci.upper, |x| fixed(x, 3)))
                    .unwrap_or_else(|| {
                        range(b.pool.ci.lower, b.pool.ci.upper, |x| significant(x, 3))
                    });
                let pi = c
                    .and_then(|c| c.pi)
                    .map(|i| range(i.lower, i.upper, |x| fixed(x, 3)))
                    .unwrap_or_else(|| "none (k = 2)".into());
                let _ = writeln!(
                    o,
                    "  {:<24} {:>4}  {:>8}  {:>16}  {:>16}  {:>8}  {:>5}%",
                    name,
                    b.pool.k,
                    pooled,
                    ci,
                    pi,
                    significant(b.pool.tau2.tau2, 3),
                    fixed(b.pool.i2, 0)
                );
            }
            Err(why) => {
                let _ = writeln!(o, "  {:<24} {:>4}  {why}", name, grp.rows.len());
            }
        }
    }
    if let Some(b) = g.between {
        let _ = writeln!(
            o,
            "  difference between groups (separate τ² per group): Q_between = {} on {} df, p {}",
            fixed(b.q, 2),
            b.df,
            p_value(b.p)
        );
    }
    match (g.moderator_test, &g.moderator_test_note) {
        (Some(t), _) => {
            let name = if t.df2.is_some() { "F" } else { "χ²" };
            let _ = writeln!(
                o,
                "  difference between groups (one τ² for all, as a moderator): {name} = {}, p {}",
                fixed(t.statistic, 3),
                p_value(t.p)
            );
        }
        (None, Some(note)) => {
            let _ = writeln!(o, "  moderator test not available: {note}");
        }
        _ => {}
    }
    list_excluded(o, "Rows without a value", &g.excluded);
}

fn influence_section(o: &mut String, p: &Prepared, ex: &Explanation, inf: &[StudyInfluence]) {
    let _ = writeln!(o);
    let _ = writeln!(o, "Influence (each study left out in turn)");
    let _ = writeln!(
        o,
        "  {:>5}  {:<26} {:>10} {:>9} {:>12} {:>10}  flags",
        "row", "study", "rstudent", "Cook's D", "without: b0", "τ²"
    );
    for s in inf {
        let rec = &p.records[ex.design.used[s.index]];
        let label: String = rec.label.chars().take(26).collect();
        let mut flags = Vec::new();
        if s.outlier {
            flags.push("possible outlier");
        }
        if s.influential {
            flags.push("influential");
        }
        let _ = writeln!(
            o,
            "  {:>5}  {:<26} {:>10} {:>9} {:>12} {:>10}  {}",
            rec.row,
            label,
            s.rstudent
                .map(|r| fixed(r, 2))
                .unwrap_or_else(|| "–".into()),
            s.cooks_distance
                .map(|d| fixed(d, 3))
                .unwrap_or_else(|| "–".into()),
            s.without
                .as_ref()
                .map(|w| fixed(w.beta[0], 4))
                .unwrap_or_else(|| "–".into()),
            s.without
                .as_ref()
                .map(|w| significant(w.tau2, 3))
                .unwrap_or_else(|| "–".into()),
            flags.join(", ")
        );
    }
    let _ = writeln!(
        o,
        "  possible outlier: |rstudent| above 1.96 (common practice, no source; about 1 study in \
         20 exceeds it by chance); influential: Cook's D above the median of F(p, k − p) (Cook \
         1977); b0: the intercept without the study (transformed scale); –: the model could not \
         be refitted without the study"
    );
}

// ---------------------------------------------------------------------------- JSON

/// A coefficient of a model in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct CoefficientRecord {
    /// Column name (`intercept`, a moderator, or `moderator=level`).
    pub name: String,
    /// Estimate (transformed scale).
    pub estimate: f64,
    /// Standard error.
    pub se: f64,
    /// Confidence interval.
    pub ci: [f64; 2],
    /// Two-sided p value.
    pub p: f64,
    /// z or t statistic.
    pub statistic: f64,
    /// Permutation p value (null for the intercept or without permutations).
    pub permutation_p: Option<f64>,
}

/// The omnibus test in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct OmnibusRecord {
    /// F or χ² statistic.
    pub statistic: f64,
    /// Numerator df (number of moderator coefficients).
    pub df: f64,
    /// Denominator df for F; null for χ².
    pub df2: Option<f64>,
    /// p value.
    pub p: f64,
    /// "F" or "chi2".
    pub distribution: &'static str,
    /// Permutation p value.
    pub permutation_p: Option<f64>,
}

/// A moderator in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct ModeratorRecord {
    /// Column name.
    pub name: String,
    /// "numeric" or "categorical".
    pub kind: &'static str,
    /// Reference level of a categorical moderator.
    pub reference: Option<String>,
    /// Levels with their study counts.
    pub levels: Vec<LevelRecord>,
}

/// A level of a categorical moderator.
#[derive(Debug, Clone, Serialize)]
pub struct LevelRecord {
    /// Level.
    pub level: String,
    /// Studies.
    pub k: usize,
}

/// A row left out of a model.
#[derive(Debug, Clone, Serialize)]
pub struct ExcludedRecord {
    /// Spreadsheet row.
    pub row: usize,
    /// Why.
    pub reasons: Vec<String>,
}

fn excluded(rows: &[crate::metareg::ExcludedRow]) -> Vec<ExcludedRecord> {
    rows.iter()
        .map(|e| ExcludedRecord {
            row: e.row,
            reasons: e.reasons.clone(),
        })
        .collect()
}

/// The score-spread test in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct SpreadRecord {
    /// Always "bonett".
    pub scale: &'static str,
    /// SD metric.
    pub metric: &'static str,
    /// Studies in the model.
    pub k: usize,
    /// Slope of ln(SD).
    pub slope: f64,
    /// Its SE.
    pub se: f64,
    /// Its CI.
    pub ci: [f64; 2],
    /// p of slope = 0.
    pub p_zero: f64,
    /// p of slope = −2.
    pub p_minus_two: f64,
    /// Percent of τ² explained by ln(SD) (null when τ² without it is 0).
    pub tau2_share: Option<f64>,
    /// Residual τ² with ln(SD).
    pub tau2: f64,
    /// τ² without ln(SD).
    pub tau2_without: f64,
    /// Machine-readable reading.
    pub reading: crate::metareg::spread::SpreadReading,
    /// The reading in words.
    pub reading_text: &'static str,
    /// Median SD on the metric.
    pub typical_sd: f64,
    /// Reliability of ln(SD) across studies (the slope's attenuation factor).
    pub sd_reliability: Option<f64>,
    /// All coefficients of the model.
    pub coefficients: Vec<CoefficientRecord>,
    /// Rows left out.
    pub excluded_rows: Vec<ExcludedRecord>,
}

/// A subgroup in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct GroupRecord {
    /// Level.
    pub level: String,
    /// Studies.
    pub k: usize,
    /// Spreadsheet rows.
    pub rows: Vec<usize>,
    /// Pooled value (transformed scale).
    pub estimate: Option<f64>,
    /// CI (transformed).
    pub ci: Option<[f64; 2]>,
    /// PI (transformed).
    pub pi: Option<[f64; 2]>,
    /// τ².
    pub tau2: Option<f64>,
    /// I².
    pub i2: Option<f64>,
    /// Coefficient-scale results.
    pub reliability: Option<super::json::ReliabilityRecord>,
    /// Why the group was not pooled.
    pub note: Option<String>,
}

/// Subgroups in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct SubgroupsRecord {
    /// The column.
    pub column: String,
    /// Groups.
    pub groups: Vec<GroupRecord>,
    /// Q_between (separate τ²): {statistic, df, p}.
    pub q_between: Option<TestRecord>,
    /// Moderator test with one τ² for all.
    pub moderator_test: Option<OmnibusRecord>,
    /// Rows without a value.
    pub excluded_rows: Vec<ExcludedRecord>,
}

/// Influence of one study in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct InfluenceRecord {
    /// Spreadsheet row.
    pub row: usize,
    /// Label.
    pub study: String,
    /// Residual.
    pub residual: f64,
    /// Externally studentized residual.
    pub rstudent: Option<f64>,
    /// Cook's distance.
    pub cooks_distance: Option<f64>,
    /// Coefficients without the study.
    pub without_coefficients: Option<Vec<f64>>,
    /// τ² without the study.
    pub without_tau2: Option<f64>,
    /// I² without the study.
    pub without_i2: Option<f64>,
    /// Flagged as outlying.
    pub outlier: bool,
    /// Flagged as influential.
    pub influential: bool,
}

/// `relyard explain --json`.
#[derive(Debug, Clone, Serialize)]
pub struct ExplainDocument {
    /// The header shared by every document.
    #[serde(flatten)]
    pub head: DocumentHead,
    /// Studies in the main model.
    pub k: usize,
    /// Moderators.
    pub moderators: Vec<ModeratorRecord>,
    /// Coefficients of the main model.
    pub coefficients: Vec<CoefficientRecord>,
    /// Residual τ².
    pub tau2: f64,
    /// Its Q-profile CI.
    pub tau2_ci: Option<[f64; 2]>,
    /// How τ² was reached.
    pub tau2_fit: Tau2FitRecord,
    /// τ² of the intercept-only model on the same studies.
    pub tau2_intercept_only: f64,
    /// R² in percent (null when undefined).
    pub r2: Option<f64>,
    /// Residual I².
    pub i2: f64,
    /// Residual H².
    pub h2: f64,
    /// Omnibus test of the moderators (null without moderators).
    pub omnibus: Option<OmnibusRecord>,
    /// Residual heterogeneity Q_E.
    pub qe: f64,
    /// Its df, k − p.
    pub qe_df: f64,
    /// Its p.
    pub qe_p: f64,
    /// Permutations run: {count, seed, failed}.
    pub permutations: Option<PermutationRecord>,
    /// Rows left out of the main model.
    pub excluded_rows: Vec<ExcludedRecord>,
    /// Rows left out with --skip-invalid.
    pub skipped_rows: Vec<SkippedRecord>,
    /// The score-spread test.
    pub score_spread: Option<SpreadRecord>,
    /// Subgroup benchmarks.
    pub subgroups: Option<SubgroupsRecord>,
    /// Influence diagnostics.
    pub influence: Option<Vec<InfluenceRecord>>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
}

/// The permutation run in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct PermutationRecord {
    /// Permutations.
    pub count: usize,
    /// Seed.
    pub seed: u64,
    /// Refits that failed.
    pub failed: usize,
}

fn coefficients(
    names: &[String],
    fit: &ModelFit,
    perm: Option<&[Option<f64>]>,
) -> Vec<CoefficientRecord> {
    names
        .iter()
        .zip(&fit.coefficients)
        .enumerate()
        .map(|(j, (n, c))| CoefficientRecord {
            name: n.clone(),
            estimate: c.estimate,
            se: c.se,
            ci: [c.ci.lower, c.ci.upper],
            p: c.p,
            statistic: c.statistic,
            permutation_p: perm.and_then(|p| p[j]),
        })
        .collect()
}

fn omnibus_record(t: crate::metareg::OmnibusTest, perm: Option<f64>) -> OmnibusRecord {
    OmnibusRecord {
        statistic: t.statistic,
        df: t.df,
        df2: t.df2,
        p: t.p,
        distribution: if t.df2.is_some() { "F" } else { "chi2" },
        permutation_p: perm,
    }
}

impl ExplainDocument {
    /// Build the document.
    pub fn new(parts: &ExplainParts) -> Self {
        let p = parts.prepared;
        let ex = parts.main;
        let fit = &ex.fit;
        let perm = parts.permutation.map(|r| r.coefficient_p.as_slice());
        ExplainDocument {
            head: DocumentHead::new(
                "explain",
                InputSummary::of(p),
                p.transform,
                "coefficients, tau2 and qe are on the transformed scale named by transform; \
                 score_spread is always on the Bonett scale",
                fit.options.model,
                fit.options.ci,
                fit.options.level,
            ),
            k: fit.k,
            moderators: ex
                .design
                .moderators
                .iter()
                .map(|m| match m {
                    Moderator::Numeric { name, .. } => ModeratorRecord {
                        name: name.clone(),
                        kind: "numeric",
                        reference: None,
                        levels: Vec::new(),
                    },
                    Moderator::Categorical {
                        name,
                        reference,
                        counts,
                        ..
                    } => ModeratorRecord {
                        name: name.clone(),
                        kind: "categorical",
                        reference: Some(reference.clone()),
                        levels: counts
                            .iter()
                            .map(|(l, k)| LevelRecord {
                                level: l.clone(),
                                k: *k,
                            })
                            .collect(),
                    },
                })
                .collect(),
            coefficients: coefficients(&ex.design.names, fit, perm),
            tau2: fit.tau2.tau2,
            tau2_ci: fit.tau2_ci.map(|c| [c.lower, c.upper]),
            tau2_fit: Tau2FitRecord {
                iterations: fit.tau2.iterations,
                termination: fit.tau2.termination,
                at_zero: fit.tau2.at_zero,
            },
            tau2_intercept_only: ex.tau2_intercept_only,
            r2: ex.r2,
            i2: fit.i2,
            h2: fit.h2,
            omnibus: ex
                .omnibus
                .map(|t| omnibus_record(t, parts.permutation.and_then(|r| r.omnibus_p))),
            qe: fit.heterogeneity.q,
            qe_df: fit.heterogeneity.df,
            qe_p: fit.heterogeneity.p,
            permutations: parts.permutation.map(|r| PermutationRecord {
                count: r.permutations,
                seed: r.seed,
                failed: r.failed,
            }),
            excluded_rows: excluded(&ex.design.excluded),
            skipped_rows: p
                .skipped
                .iter()
                .map(|s| SkippedRecord {
                    row: s.row,
                    reasons: s.reasons.clone(),
                })
                .collect(),
            score_spread: parts.spread.map(|s| SpreadRecord {
                scale: "bonett",
                metric: s.metric.name(),
                k: s.rows.len(),
                slope: s.slope.estimate,
                se: s.slope.se,
                ci: [s.slope.ci.lower, s.slope.ci.upper],
                p_zero: s.p_zero,
                p_minus_two: s.p_minus_two,
                tau2_share: s.tau2_share,
                tau2: s.fit.tau2.tau2,
                tau2_without: s.tau2_without,
                reading: s.reading,
                reading_text: s.reading.sentence(),
                typical_sd: s.typical_sd,
                sd_reliability: s.sd_reliability,
                coefficients: coefficients(&s.names, &s.fit, None),
                excluded_rows: excluded(&s.excluded),
            }),
            subgroups: parts.subgroups.map(|g| SubgroupsRecord {
                column: g.column.clone(),
                groups: g
                    .groups
                    .iter()
                    .map(|grp| match &grp.result {
                        Ok(b) => GroupRecord {
                            level: grp.level.clone(),
                            k: b.pool.k,
                            rows: grp.rows.clone(),
                            estimate: Some(b.pool.estimate),
                            ci: Some([b.pool.ci.lower, b.pool.ci.upper]),
                            pi: b.pool.prediction.interval().map(|i| [i.lower, i.upper]),
                            tau2: Some(b.pool.tau2.tau2),
                            i2: Some(b.pool.i2),
                            reliability: b.coefficient.map(|c| super::json::ReliabilityRecord {
                                estimate: c.estimate,
                                ci: [c.ci.lower, c.ci.upper],
                                pi: c.pi.map(|i| [i.lower, i.upper]),
                                pi_at_tau2_upper: c.pi_at_tau2_upper.map(|i| [i.lower, i.upper]),
                            }),
                            note: None,
                        },
                        Err(why) => GroupRecord {
                            level: grp.level.clone(),
                            k: grp.rows.len(),
                            rows: grp.rows.clone(),
                            estimate: None,
                            ci: None,
                            pi: None,
                            tau2: None,
                            i2: None,
                            reliability: None,
                            note: Some(why.clone()),
                        },
                    })
                    .collect(),
                q_between: g.between.map(|b| TestRecord {
                    statistic: b.q,
                    df: Some(b.df),
                    p: b.p,
                }),
                moderator_test: g.moderator_test.map(|t| omnibus_record(t, None)),
                excluded_rows: excluded(&g.excluded),
            }),
            influence: parts.influence.map(|inf| {
                inf.iter()
                    .map(|s| {
                        let rec = &p.records[ex.design.used[s.index]];
                        InfluenceRecord {
                            row: rec.row,
                            study: rec.label.clone(),
                            residual: s.residual,
                            rstudent: s.rstudent,
                            cooks_distance: s.cooks_distance,
                            without_coefficients: s.without.as_ref().map(|w| w.beta.clone()),
                            without_tau2: s.without.as_ref().map(|w| w.tau2),
                            without_i2: s.without.as_ref().map(|w| w.i2),
                            outlier: s.outlier,
                            influential: s.influential,
                        }
                    })
                    .collect()
            }),
            warnings: parts.warnings.iter().map(WarningRecord::from).collect(),
        }
    }
}
