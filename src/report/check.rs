//! Output of `relyard check`: the readable summary, the paragraph and the JSON document.

use super::INDIVIDUAL_DECISIONS_CAUTION;
use super::format::{fixed, percent_level, range, significant, thousands, wrap};
use super::json::{DocumentHead, InputSummary};
use super::paragraph::Paragraph;
use crate::benchmark::Prepared;
use crate::metareg::spread::SpreadReading;
use crate::placement::{Placement, Verdict};
use crate::pool::{CiMethod, Model};
use crate::transform::BackInterval;
use crate::warning::{Warning, WarningRecord};
use serde::Serialize;
use std::fmt::Write;

/// A percentile as an ordinal, with the extremes written as "below the 1st" and "above
/// the 99th" rather than "0th" and "100th".
fn ordinal(x: f64) -> String {
    if x < 0.5 {
        return "below the 1st".into();
    }
    if x > 99.5 {
        return "above the 99th".into();
    }
    let n = x.round() as i64;
    let suffix = match (n % 10, n % 100) {
        (_, 11..=13) => "th",
        (1, _) => "st",
        (2, _) => "nd",
        (3, _) => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}

/// The sentence on score spread for the paragraph; its claim follows the benchmark's
/// reading and the direction of the difference.
fn spread_sentence(sp: &crate::placement::SpreadShortfall) -> String {
    let c2 = |x: f64| fixed(x, 2);
    let sd = format!(
        "Our sample's score SD ({} on the {} metric) compares with a median of {} in the \
         benchmark studies",
        significant(sp.sd, 3),
        sp.metric,
        significant(sp.typical_sd, 3)
    );
    let slope = format!(
        "slope of ln(1 − coefficient) on ln(SD): {}, {} CI {}",
        fixed(sp.model.slope.estimate, 2),
        percent_level(sp.model.fit.options.level),
        range(sp.model.slope.ci.lower, sp.model.slope.ci.upper, |x| fixed(
            x, 2
        ))
    );
    if !sp.model.reading.spread_matters() {
        let why = match sp.model.reading {
            SpreadReading::OppositeDirection => {
                "show coefficients rising, not falling, where scores spread less"
            }
            SpreadReading::NothingToExplain => "do not differ beyond sampling error",
            SpreadReading::DoesNotAccount => {
                "show no clear link between score spread and the coefficient"
            }
            _ => "leave open whether score spread affects the coefficient",
        };
        return format!(
            "{sd}; but the benchmark studies {why} ({slope}), so no part of the difference is \
             attributed to score spread."
        );
    }
    let (lo, hi) = sp.explained_shortfall_ci;
    let direction = if sp.explained_shortfall >= 0.0 {
        format!(
            "lowers the expected coefficient by {}",
            c2(sp.explained_shortfall)
        )
    } else {
        format!(
            "raises the expected coefficient by {}",
            c2(-sp.explained_shortfall)
        )
    };
    let observed = if sp.observed_shortfall > 0.0 {
        format!(
            "; our coefficient lies {} below its expected value",
            c2(sp.observed_shortfall)
        )
    } else {
        String::new()
    };
    format!(
        "{sd}. In the benchmark studies coefficients are lower where scores spread less ({slope}); \
         at our SD this {direction} (CI {} to {}){observed}.",
        c2(lo),
        c2(hi)
    )
}

/// The kind of coefficient in words.
fn coefficient_words(t: crate::sheet::CoefType) -> &'static str {
    use crate::sheet::CoefType::*;
    match t {
        Alpha => "coefficient alpha",
        AlphaStd => "standardized alpha",
        Kr20 => "KR-20 coefficient",
        Omega => "omega coefficient",
        Retest => "test–retest correlation",
        Interrater => "inter-rater correlation",
        SplitHalf => "split-half coefficient",
    }
}

fn conditions(pl: &Placement) -> String {
    if pl.at.is_empty() {
        String::new()
    } else {
        let parts: Vec<String> = pl.at.iter().map(|(k, v)| format!("{k} = {v}")).collect();
        format!(" for a study with {}", parts.join(", "))
    }
}

/// The paragraph a researcher can adapt.
pub fn check_paragraph(p: &Prepared, pl: &Placement, measure: Option<&str>) -> Paragraph {
    let measure = measure.unwrap_or("the measure");
    let level = percent_level(pl.fit.options.level);
    let c2 = |x: f64| fixed(x, 2);
    let r = |i: BackInterval| range(i.lower, i.upper, c2);
    let between = |i: BackInterval| format!("{} and {}", c2(i.lower), c2(i.upper));
    let mut refs = vec![
        "Higgins, J. P. T., Thompson, S. G., & Spiegelhalter, D. J. (2009). A re-evaluation of \
         random-effects meta-analysis. Journal of the Royal Statistical Society, Series A, \
         172(1), 137–159."
            .to_string(),
    ];
    let mut s = format!(
        "We compared the {} of {} observed in our sample (n = {}) with a benchmark from k = {} \
         prior administrations{}. ",
        coefficient_words(pl.study.coef_type),
        measure,
        thousands(pl.study.n),
        pl.fit.k,
        if pl.at.is_empty() {
            String::new()
        } else {
            format!(
                " (a meta-regression on {}, evaluated{})",
                pl.at.keys().cloned().collect::<Vec<_>>().join(", "),
                conditions(pl)
            )
        }
    );
    s.push_str(&format!(
        "Pooled on the {} scale with a {} model, the expected coefficient was {} ({level} CI {}); \
         the true coefficient in a new, comparable setting is expected between {}, and a \
         coefficient observed in a sample of n = {} between {} (Higgins, Thompson, & \
         Spiegelhalter, 2009). ",
        pl.transform.label(),
        match pl.fit.options.model {
            Model::Common => "common-effect",
            Model::Random(_) => "random-effects",
        },
        c2(pl.expected),
        r(pl.ci),
        between(pl.pi),
        thousands(pl.study.n),
        between(pl.pi_observed)
    ));
    s.push_str(&format!(
        "Our coefficient of {} lies {} this range, at the {} percentile of the coefficients \
         expected from such a study.",
        c2(pl.study.coef),
        pl.verdict.word(),
        ordinal(pl.percentile)
    ));
    if let Some(sp) = &pl.spread {
        s.push(' ');
        s.push_str(&spread_sentence(sp));
    }
    if pl.fit.options.ci != CiMethod::Wald {
        refs.push(
            "Knapp, G., & Hartung, J. (2003). Improved tests for a random effects meta-regression \
             with a single covariate. Statistics in Medicine, 22(17), 2693–2710."
                .into(),
        );
    }
    if pl.transform == crate::transform::TransformKind::Bonett || pl.spread.is_some() {
        refs.push(
            "Bonett, D. G. (2002). Sample size requirements for testing and estimating \
             coefficient alpha. Journal of Educational and Behavioral Statistics, 27(4), 335–340."
                .into(),
        );
    }
    let _ = p;
    refs.sort();
    Paragraph {
        text: s,
        references: refs,
    }
}

/// Render the check summary.
pub fn check_summary(p: &Prepared, pl: &Placement, paragraph: &Paragraph) -> String {
    let level = percent_level(pl.fit.options.level);
    let c3 = |x: f64| fixed(x, 3);
    let r = |i: BackInterval| range(i.lower, i.upper, c3);
    let mut o = String::new();
    let _ = writeln!(o, "Placing a new study against {} coded studies", pl.fit.k);
    let _ = writeln!(o, "{}", "─".repeat(72));
    let _ = writeln!(
        o,
        "  sheet         {} ({}; {} rows read, {} usable)",
        p.file,
        crate::report::format::sheet_kind(p.delimiter),
        p.rows_read,
        p.records.len()
    );
    let _ = writeln!(
        o,
        "  scale         {}: {}",
        pl.transform.label(),
        pl.transform.get().formula()
    );
    let _ = writeln!(
        o,
        "  new study     {} = {}, n = {}{}",
        pl.study.coef_type.name(),
        c3(pl.study.coef),
        thousands(pl.study.n),
        pl.study
            .items
            .map(|k| format!(", {k} items"))
            .unwrap_or_default()
    );
    if !pl.at.is_empty() {
        let parts: Vec<String> = pl.at.iter().map(|(k, v)| format!("{k} = {v}")).collect();
        let _ = writeln!(o, "  conditional   on {}", parts.join(", "));
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "  {:<50}{}", "expected coefficient", c3(pl.expected));
    let _ = writeln!(
        o,
        "  {:<50}{}",
        format!("{level} confidence interval"),
        r(pl.ci)
    );
    let _ = writeln!(
        o,
        "  {:<50}{}   (t with {} df)",
        format!("{level} range for the true coefficient"),
        r(pl.pi),
        pl.pi_df
    );
    let _ = writeln!(
        o,
        "  {:<50}{}",
        format!(
            "{level} range for an observed coefficient (n = {})",
            thousands(pl.study.n)
        ),
        r(pl.pi_observed)
    );
    let _ = writeln!(
        o,
        "  {:<50}{}",
        "percentile of the new study",
        ordinal(pl.percentile)
    );
    let verdict = match pl.verdict {
        Verdict::Below => "BELOW the expected range",
        Verdict::Within => "within the expected range",
        Verdict::Above => "ABOVE the expected range",
    };
    let _ = writeln!(o, "  {:<50}{}", "verdict", verdict);
    if let Some(sp) = &pl.spread {
        let _ = writeln!(o);
        let _ = writeln!(
            o,
            "  Score spread (Bonett scale; SD on the {} metric)",
            sp.metric
        );
        let _ = writeln!(
            o,
            "    new study's SD {}; benchmark studies' median SD {}",
            significant(sp.sd, 3),
            significant(sp.typical_sd, 3)
        );
        let _ = writeln!(
            o,
            "    score-spread model's expected coefficient at the study's SD {}, at the median SD {}{}",
            c3(sp.expected_at_own_sd),
            c3(sp.expected_at_typical_sd),
            if sp.model.log_items_column {
                pl.study
                    .items
                    .map(|k| format!(" (for {k} items)"))
                    .unwrap_or_default()
            } else {
                String::new()
            }
        );
        let (lo, hi) = sp.explained_shortfall_ci;
        let _ = writeln!(
            o,
            "    difference due to score spread {} ({level} CI {})",
            c3(sp.explained_shortfall),
            range(lo, hi, c3)
        );
        let _ = writeln!(
            o,
            "    the study's coefficient below its expected value by {}",
            c3(sp.observed_shortfall)
        );
        o.push_str(&wrap(
            &format!("Reading: {}.", sp.model.reading.sentence()),
            84,
            "    ",
        ));
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "For your paper (adapt as needed)");
    o.push_str(&wrap(&paragraph.text, 86, "  "));
    let _ = writeln!(o);
    let _ = writeln!(o, "References");
    for rf in &paragraph.references {
        o.push_str("  ");
        o.push_str(wrap(rf, 84, "    ").trim_start());
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "Caution");
    o.push_str(&wrap(INDIVIDUAL_DECISIONS_CAUTION, 86, "  "));
    o
}

/// The score-spread part of `relyard check --json`.
#[derive(Debug, Clone, Serialize)]
pub struct CheckSpreadRecord {
    /// SD metric.
    pub metric: &'static str,
    /// The new study's SD on it.
    pub sd: f64,
    /// The benchmark's typical SD.
    pub typical_sd: f64,
    /// Expected coefficient at the study's SD.
    pub expected_at_own_sd: f64,
    /// Expected coefficient at the typical SD.
    pub expected_at_typical_sd: f64,
    /// The shortfall score spread accounts for.
    pub explained_shortfall: f64,
    /// Its interval from the slope's confidence interval.
    pub explained_shortfall_ci: [f64; 2],
    /// The placement's expected coefficient minus the observed one.
    pub observed_shortfall: f64,
    /// True when the study's SD lies outside the benchmark studies' SDs.
    pub sd_outside_benchmark: bool,
    /// The score-spread model's reading.
    pub reading: SpreadReading,
    /// Slope of ln(SD) on the Bonett scale.
    pub slope: f64,
    /// Its CI.
    pub slope_ci: [f64; 2],
}

/// `relyard check --json`.
#[derive(Debug, Clone, Serialize)]
pub struct CheckDocument {
    /// The header shared by every document.
    #[serde(flatten)]
    pub head: DocumentHead,
    /// Studies in the benchmark model.
    pub k: usize,
    /// Moderator values the expectation is conditional on.
    pub at: std::collections::BTreeMap<String, String>,
    /// The new study's coefficient.
    pub coef: f64,
    /// Expected coefficient.
    pub expected: f64,
    /// Its CI.
    pub ci: [f64; 2],
    /// Range for the true coefficient.
    pub pi: [f64; 2],
    /// Range for an observed coefficient from a study of this size.
    pub pi_observed: [f64; 2],
    /// Percentile of the new study (0–100; higher coefficient, higher percentile).
    pub percentile: f64,
    /// below, within or above.
    pub verdict: Verdict,
    /// The same on the transformed scale: {expected, se, ci, pi, pi_observed, new_effect, new_variance, df}.
    pub transformed: TransformedRecord,
    /// Residual τ² of the benchmark model.
    pub tau2: f64,
    /// Score spread (when --sd was given).
    pub score_spread: Option<CheckSpreadRecord>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
    /// Paragraph.
    pub paragraph: String,
    /// References.
    pub references: Vec<String>,
    /// Caution.
    pub caution: &'static str,
}

/// Transformed-scale values of a placement.
#[derive(Debug, Clone, Serialize)]
pub struct TransformedRecord {
    /// Expected value.
    pub expected: f64,
    /// Its SE.
    pub se: f64,
    /// CI.
    pub ci: [f64; 2],
    /// PI (true).
    pub pi: [f64; 2],
    /// PI (observed).
    pub pi_observed: [f64; 2],
    /// The new study's value.
    pub new_effect: f64,
    /// Its sampling variance.
    pub new_variance: f64,
    /// df of the PIs' t quantile.
    pub pi_df: f64,
}

impl CheckDocument {
    /// Build the document.
    pub fn new(p: &Prepared, pl: &Placement, paragraph: &Paragraph, warnings: &[Warning]) -> Self {
        let pair = |i: BackInterval| [i.lower, i.upper];
        CheckDocument {
            head: DocumentHead::new(
                "check",
                InputSummary::of(p),
                pl.transform,
                "expected, ci, pi, pi_observed and percentile are on the coefficient scale; \
                 transformed holds the analysis scale",
                pl.fit.options.model,
                pl.fit.options.ci,
                pl.fit.options.level,
            ),
            k: pl.fit.k,
            at: pl.at.clone(),
            coef: pl.study.coef,
            expected: pl.expected,
            ci: pair(pl.ci),
            pi: pair(pl.pi),
            pi_observed: pair(pl.pi_observed),
            percentile: pl.percentile,
            verdict: pl.verdict,
            transformed: TransformedRecord {
                expected: pl.expected_t,
                se: pl.se_t,
                ci: [pl.ci_t.lower, pl.ci_t.upper],
                pi: [pl.pi_t.lower, pl.pi_t.upper],
                pi_observed: [pl.pi_observed_t.lower, pl.pi_observed_t.upper],
                new_effect: pl.new_effect,
                new_variance: pl.new_variance,
                pi_df: pl.pi_df,
            },
            tau2: pl.fit.tau2.tau2,
            score_spread: pl.spread.as_ref().map(|s| CheckSpreadRecord {
                metric: s.metric.name(),
                sd: s.sd,
                typical_sd: s.typical_sd,
                expected_at_own_sd: s.expected_at_own_sd,
                expected_at_typical_sd: s.expected_at_typical_sd,
                explained_shortfall: s.explained_shortfall,
                explained_shortfall_ci: [s.explained_shortfall_ci.0, s.explained_shortfall_ci.1],
                observed_shortfall: s.observed_shortfall,
                sd_outside_benchmark: s.sd_outside_benchmark,
                reading: s.model.reading,
                slope: s.model.slope.estimate,
                slope_ci: [s.model.slope.ci.lower, s.model.slope.ci.upper],
            }),
            warnings: warnings.iter().map(WarningRecord::from).collect(),
            paragraph: paragraph.text.clone(),
            references: paragraph.references.clone(),
            caution: INDIVIDUAL_DECISIONS_CAUTION,
        }
    }
}
