//! `relyard check --json`: where a new study falls.

use super::{DocumentHead, InputSummary, ModelUsed, warnings};
use crate::benchmark::Prepared;
use crate::metareg::spread::SpreadReading;
use crate::output::INDIVIDUAL_DECISIONS_CAUTION;
use crate::output::prose::{Paragraph, spread_conclusion};
use crate::placement::{Placement, Verdict};
use crate::setting::SettingNames;
use crate::transform::BackInterval;
use crate::warning::WarningRecord;
use serde::Serialize;

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
    /// Expected at the typical SD minus the observed coefficient.
    pub shortfall_from_typical_sd: f64,
    /// Expected at the study's own SD minus the observed coefficient.
    pub unexplained_shortfall: f64,
    /// True when the study's SD lies outside the benchmark studies' SDs.
    pub sd_outside_benchmark: bool,
    /// The score-spread model's reading.
    pub reading: SpreadReading,
    /// Slope of ln(SD) on the Bonett scale.
    pub slope: f64,
    /// Its CI.
    pub slope_ci: [f64; 2],
    /// How much of the shortfall score spread accounts for, in one sentence.
    pub conclusion: String,
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
    /// How rows that share a sample or a cluster were modelled (only when they do).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dependence: Option<super::DependenceRecord>,
    /// "robust" or "model" (only when the rows share samples or clusters).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub inference: Option<&'static str>,
    /// The known cluster the ranges are for; null for a new sample from a new cluster
    /// (only when the rows share samples or clusters).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub in_cluster: Option<Option<String>>,
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
    pub fn new(
        p: &Prepared,
        pl: &Placement,
        paragraph: &Paragraph,
        names: &dyn SettingNames,
    ) -> Self {
        let pair = |i: BackInterval| [i.lower, i.upper];
        CheckDocument {
            head: DocumentHead::new(
                "check",
                InputSummary::of(p),
                ModelUsed {
                    transform: pl.transform,
                    model: pl.fit.options.model,
                    ci: pl.fit.options.ci,
                    level: pl.fit.options.level,
                },
                "expected, ci, pi, pi_observed and percentile are on the coefficient scale; \
                 transformed holds the analysis scale",
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
                shortfall_from_typical_sd: s.shortfall_from_typical_sd,
                unexplained_shortfall: s.unexplained_shortfall,
                sd_outside_benchmark: s.sd_outside_benchmark,
                reading: s.model.reading,
                slope: s.model.slope.estimate,
                slope_ci: [s.model.slope.ci.lower, s.model.slope.ci.upper],
                conclusion: spread_conclusion(s),
            }),
            warnings: warnings(&pl.warnings, names),
            paragraph: paragraph.text.clone(),
            references: paragraph.citations(),
            caution: INDIVIDUAL_DECISIONS_CAUTION,
            dependence: pl
                .dependent
                .as_ref()
                .map(|d| super::DependenceRecord::from(&d.summary.dependence)),
            inference: pl.dependent.as_ref().map(|d| d.summary.inference.name()),
            in_cluster: pl.dependent.as_ref().map(|_| pl.in_cluster.clone()),
        }
    }
}
