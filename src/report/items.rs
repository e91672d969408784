//! Output of `relyard items`, `relyard compare` and `relyard plan`.

use super::format::{fixed, p_value, percent_level, range, thousands, wrap};
use super::json::SCHEMA_VERSION;
use crate::compare::{AlphaSample, FeldtTest, HakstianWhalenTest};
use crate::items::bootstrap::OmegaBootstrap;
use crate::items::{ItemAnalysis, ItemData, Missing, Recommendation};
use crate::numeric::MinimizeStop;
use crate::plan::SampleSize;
use crate::warning::{Warning, WarningRecord};
use serde::Serialize;
use std::fmt::Write;

/// Render the items summary.
pub fn items_summary(d: &ItemData, a: &ItemAnalysis, boot: Option<&OmegaBootstrap>) -> String {
    let level = percent_level(a.level);
    let c3 = |x: f64| fixed(x, 3);
    let mut o = String::new();
    match d.missing {
        Missing::Listwise => {
            let _ = writeln!(
                o,
                "Reliability of {} items from {} respondents",
                a.k,
                thousands(a.n_used)
            );
        }
        Missing::Pairwise => {
            let _ = writeln!(
                o,
                "Reliability of {} items from {} respondents (pairwise; n = {} is the smallest pair count)",
                a.k,
                thousands(d.rows_read),
                thousands(a.n_used)
            );
        }
    }
    let _ = writeln!(o, "{}", "─".repeat(72));
    let _ = writeln!(
        o,
        "  file          {} ({} rows read)",
        d.file,
        thousands(d.rows_read)
    );
    let missing = match d.missing {
        Missing::Listwise => format!(
            "listwise: {} complete respondents used, {} left out for {} missing cell(s)",
            thousands(d.complete_rows),
            thousands(d.rows_read - d.complete_rows),
            thousands(d.missing_cells)
        ),
        Missing::Pairwise => format!(
            "pairwise: each covariance from the respondents who answered both items (fewest {}); {} missing cell(s)",
            thousands(d.moments.n_min()),
            thousands(d.missing_cells)
        ),
    };
    let _ = writeln!(o, "  missing       {missing}");
    let reversed: Vec<&str> = d
        .names
        .iter()
        .zip(&d.reversed)
        .filter(|(_, r)| **r)
        .map(|(n, _)| n.as_str())
        .collect();
    if !reversed.is_empty() {
        let _ = writeln!(o, "  reversed      {}", reversed.join(", "));
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "  {:<30}{:<10}{level} interval", "", "value");
    let _ = writeln!(
        o,
        "  {:<30}{:<10}{} (Feldt)",
        "coefficient alpha",
        c3(a.alpha),
        range(a.alpha_ci_feldt.0, a.alpha_ci_feldt.1, c3)
    );
    let _ = writeln!(
        o,
        "  {:<30}{:<10}{} (Bonett)",
        "",
        "",
        range(a.alpha_ci_bonett.0, a.alpha_ci_bonett.1, c3)
    );
    let _ = writeln!(
        o,
        "  {:<30}{}",
        "standardized alpha",
        c3(a.alpha_standardized)
    );
    let _ = writeln!(o, "  {:<30}{}", "Guttman's λ2", c3(a.lambda2));
    match &a.factor {
        Ok(f) => {
            let ci = boot
                .map(|b| {
                    let mut notes = Vec::new();
                    if b.failed > 0 {
                        notes.push(format!("{} not fitted", b.failed));
                    }
                    if b.heywood > 0 {
                        notes.push(format!("{} with a Heywood case", b.heywood));
                    }
                    if d.missing == Missing::Pairwise {
                        notes.push("from the complete respondents only".into());
                    }
                    let extra = if notes.is_empty() {
                        String::new()
                    } else {
                        format!("; {}", notes.join(", "))
                    };
                    format!(
                        "{} (bootstrap, {} replicates{extra})",
                        range(b.interval.0, b.interval.1, c3),
                        b.replicates
                    )
                })
                .unwrap_or_else(|| "(add --bootstrap N for an interval)".into());
            let _ = writeln!(
                o,
                "  {:<30}{:<10}{}",
                "omega (one factor, ML)",
                c3(f.congeneric.omega()),
                ci
            );
            let _ = writeln!(o);
            let _ = writeln!(o, "  One-factor model");
            let fit = &f.fit;
            match (fit.rmsea, fit.cfi, fit.p) {
                (Some(r), Some(c), Some(p)) => {
                    let _ = writeln!(
                        o,
                        "    fit                χ²({}) = {}, p {}; RMSEA {}; CFI {}",
                        fit.df,
                        fixed(fit.chi2, 2),
                        p_value(p),
                        c3(r),
                        c3(c)
                    );
                }
                _ => {
                    let _ = writeln!(
                        o,
                        "    fit                exact (3 items leave no degrees of freedom to test it)"
                    );
                }
            }
            let t = &f.tau_test;
            let _ = writeln!(
                o,
                "    tau-equivalence    χ²({}) = {}, p {}  (equal loadings against free loadings)",
                t.df,
                fixed(t.chi2, 2),
                p_value(t.p)
            );
            let conv = |s: MinimizeStop, it: usize| {
                if s.converged() {
                    format!("converged in {it} iterations")
                } else {
                    format!("NOT converged ({s:?}) after {it} iterations")
                }
            };
            let _ = writeln!(
                o,
                "    estimation         maximum likelihood; free loadings {}; equal loadings {}",
                conv(f.congeneric.stop, f.congeneric.iterations),
                conv(f.tau_equivalent.stop, f.tau_equivalent.iterations)
            );
        }
        Err(why) => {
            let _ = writeln!(o, "  omega               not available: {why}");
        }
    }
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "  {:<20} {:>7} {:>7} {:>10} {:>10} {:>9} {:>9}",
        "item", "mean", "SD", "item-rest", "α without", "loading", "std. ld."
    );
    let cov = &d.moments.cov;
    for (i, s) in a.item_statistics.iter().enumerate() {
        let name: String = d.names[i].chars().take(20).collect();
        let (ld, sld) = match &a.factor {
            Ok(f) => {
                let flag = if f.congeneric.heywood.contains(&i) {
                    " (Heywood)"
                } else {
                    ""
                };
                (
                    c3(f.congeneric.loadings[i]),
                    format!(
                        "{}{flag}",
                        c3(f.congeneric.loadings[i] / cov[(i, i)].sqrt())
                    ),
                )
            }
            Err(_) => ("–".into(), "–".into()),
        };
        let _ = writeln!(
            o,
            "  {:<20} {:>7} {:>7} {:>10} {:>10} {:>9} {:>9}",
            name,
            fixed(s.mean, 2),
            fixed(s.sd, 2),
            c3(s.corrected_item_total),
            s.alpha_if_deleted.map(c3).unwrap_or_else(|| "–".into()),
            ld,
            sld
        );
    }
    let _ = writeln!(o);
    let which = match a.recommendation {
        Recommendation::Either => "alpha or omega",
        Recommendation::Omega => "omega",
        Recommendation::CheckDimensionality => "neither yet: check the dimensionality",
        Recommendation::AlphaOnly => "alpha (a lower bound)",
        Recommendation::AlphaWithCaution => "alpha, as a lower bound",
        Recommendation::ReverseKeyFirst => {
            "none yet: reverse-key the items that run against the others"
        }
        Recommendation::NoCommonVariance => "none: the items do not form a scale here",
    };
    let _ = writeln!(o, "Which coefficient to report: {which}");
    o.push_str(&wrap(&format!("{}.", a.reading), 86, "  "));
    o
}

/// `relyard items --json`.
#[derive(Debug, Clone, Serialize)]
pub struct ItemsDocument {
    /// Layout version.
    pub schema_version: &'static str,
    /// "items".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// The input.
    pub input: ItemsInput,
    /// Respondents behind the statistics.
    pub n_used: u64,
    /// Number of items.
    pub items: usize,
    /// Item names.
    pub item_names: Vec<String>,
    /// Confidence level.
    pub level: f64,
    /// Coefficient alpha.
    pub alpha: f64,
    /// Standardized alpha.
    pub alpha_standardized: f64,
    /// Feldt's interval.
    pub alpha_ci_feldt: [f64; 2],
    /// Bonett's interval.
    pub alpha_ci_bonett: [f64; 2],
    /// Guttman's λ2.
    pub lambda2: f64,
    /// Omega (null when the one-factor model could not be fitted).
    pub omega: Option<f64>,
    /// Bootstrap interval of omega.
    pub omega_ci: Option<[f64; 2]>,
    /// The bootstrap run.
    pub bootstrap: Option<BootstrapRecord>,
    /// Loadings in the items' raw metric.
    pub loadings: Option<Vec<f64>>,
    /// Uniquenesses in the raw metric.
    pub uniquenesses: Option<Vec<f64>>,
    /// Standardized loadings.
    pub loadings_standardized: Option<Vec<f64>>,
    /// Standardized uniquenesses.
    pub uniquenesses_standardized: Option<Vec<f64>>,
    /// Items with a Heywood case.
    pub heywood_items: Vec<String>,
    /// Test of tau-equivalence.
    pub tau_equivalence: Option<ChiRecord>,
    /// Fit of the one-factor model.
    pub fit: Option<FitRecord>,
    /// Why there is no one-factor model, when there is none.
    pub factor_note: Option<String>,
    /// Per-item statistics.
    pub item_statistics: Vec<ItemRecord>,
    /// Which coefficient to report.
    pub recommendation: Recommendation,
    /// The reading in words.
    pub reading: String,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
}

/// The item file.
#[derive(Debug, Clone, Serialize)]
pub struct ItemsInput {
    /// File.
    pub file: String,
    /// Data rows read.
    pub rows_read: u64,
    /// Respondents who answered every item.
    pub complete_rows: u64,
    /// Missing cells.
    pub missing_cells: u64,
    /// listwise or pairwise.
    pub missing: Missing,
}

/// A χ² test.
#[derive(Debug, Clone, Serialize)]
pub struct ChiRecord {
    /// χ².
    pub chi2: f64,
    /// df.
    pub df: f64,
    /// p.
    pub p: f64,
}

/// Fit indices.
#[derive(Debug, Clone, Serialize)]
pub struct FitRecord {
    /// χ².
    pub chi2: f64,
    /// df.
    pub df: f64,
    /// p (null with 0 df).
    pub p: Option<f64>,
    /// RMSEA (null with 0 df).
    pub rmsea: Option<f64>,
    /// CFI (null with 0 df).
    pub cfi: Option<f64>,
    /// Iterations of the fit.
    pub iterations: usize,
    /// Why the fit stopped.
    pub termination: MinimizeStop,
}

/// The bootstrap run.
#[derive(Debug, Clone, Serialize)]
pub struct BootstrapRecord {
    /// Replicates.
    pub replicates: usize,
    /// Seed.
    pub seed: u64,
    /// Replicates that could not be fitted.
    pub failed: usize,
    /// Replicates with a Heywood case.
    pub heywood: usize,
}

/// One item.
#[derive(Debug, Clone, Serialize)]
pub struct ItemRecord {
    /// Name.
    pub name: String,
    /// Reverse-keyed.
    pub reversed: bool,
    /// Mean.
    pub mean: f64,
    /// SD.
    pub sd: f64,
    /// Corrected item-total correlation.
    pub corrected_item_total: f64,
    /// Alpha without the item.
    pub alpha_if_deleted: Option<f64>,
}

impl ItemsDocument {
    /// Build the document.
    pub fn new(d: &ItemData, a: &ItemAnalysis, boot: Option<&OmegaBootstrap>) -> Self {
        let cov = &d.moments.cov;
        let f = a.factor.as_ref().ok();
        ItemsDocument {
            schema_version: SCHEMA_VERSION,
            command: "items",
            relyard_version: env!("CARGO_PKG_VERSION"),
            input: ItemsInput {
                file: d.file.clone(),
                rows_read: d.rows_read,
                complete_rows: d.complete_rows,
                missing_cells: d.missing_cells,
                missing: d.missing,
            },
            n_used: a.n_used,
            items: a.k,
            item_names: d.names.clone(),
            level: a.level,
            alpha: a.alpha,
            alpha_standardized: a.alpha_standardized,
            alpha_ci_feldt: [a.alpha_ci_feldt.0, a.alpha_ci_feldt.1],
            alpha_ci_bonett: [a.alpha_ci_bonett.0, a.alpha_ci_bonett.1],
            lambda2: a.lambda2,
            omega: a.omega(),
            omega_ci: boot.map(|b| [b.interval.0, b.interval.1]),
            bootstrap: boot.map(|b| BootstrapRecord {
                replicates: b.replicates,
                seed: b.seed,
                failed: b.failed,
                heywood: b.heywood,
            }),
            loadings: f.map(|f| f.congeneric.loadings.clone()),
            uniquenesses: f.map(|f| f.congeneric.uniquenesses.clone()),
            loadings_standardized: f.map(|f| f.congeneric.standardized_loadings(cov)),
            uniquenesses_standardized: f.map(|f| f.congeneric.standardized_uniquenesses(cov)),
            heywood_items: f
                .map(|f| {
                    f.congeneric
                        .heywood
                        .iter()
                        .map(|&i| d.names[i].clone())
                        .collect()
                })
                .unwrap_or_default(),
            tau_equivalence: f.map(|f| ChiRecord {
                chi2: f.tau_test.chi2,
                df: f.tau_test.df,
                p: f.tau_test.p,
            }),
            fit: f.map(|f| FitRecord {
                chi2: f.fit.chi2,
                df: f.fit.df,
                p: f.fit.p,
                rmsea: f.fit.rmsea,
                cfi: f.fit.cfi,
                iterations: f.congeneric.iterations,
                termination: f.congeneric.stop,
            }),
            factor_note: a.factor.as_ref().err().cloned(),
            item_statistics: a
                .item_statistics
                .iter()
                .enumerate()
                .map(|(i, s)| ItemRecord {
                    name: d.names[i].clone(),
                    reversed: d.reversed[i],
                    mean: s.mean,
                    sd: s.sd,
                    corrected_item_total: s.corrected_item_total,
                    alpha_if_deleted: s.alpha_if_deleted,
                })
                .collect(),
            recommendation: a.recommendation,
            reading: a.reading.clone(),
            warnings: a.warnings.iter().map(WarningRecord::from).collect(),
        }
    }
}

// ------------------------------------------------------------------ compare

/// `relyard compare --json`.
#[derive(Debug, Clone, Serialize)]
pub struct CompareDocument {
    /// Layout version.
    pub schema_version: &'static str,
    /// "compare".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// The samples.
    pub samples: Vec<SampleRecord>,
    /// Feldt's test (two samples only).
    pub feldt: Option<FeldtRecord>,
    /// The Hakstian–Whalen test.
    pub hakstian_whalen: HwRecord,
}

/// A sample.
#[derive(Debug, Clone, Serialize)]
pub struct SampleRecord {
    /// Label.
    pub label: String,
    /// Alpha.
    pub alpha: f64,
    /// n.
    pub n: u64,
    /// Items.
    pub items: u32,
    /// (1 − α̂)^(1/3).
    pub t: f64,
    /// Its sampling variance.
    pub v: f64,
}

/// Feldt's test.
#[derive(Debug, Clone, Serialize)]
pub struct FeldtRecord {
    /// W.
    pub w: f64,
    /// df of the first sample.
    pub df1: f64,
    /// df of the second.
    pub df2: f64,
    /// Two-sided p.
    pub p: f64,
}

/// The Hakstian–Whalen test.
#[derive(Debug, Clone, Serialize)]
pub struct HwRecord {
    /// χ².
    pub chi2: f64,
    /// df.
    pub df: f64,
    /// p.
    pub p: f64,
    /// Weighted mean of T.
    pub t_bar: f64,
}

impl CompareDocument {
    /// Build the document.
    pub fn new(
        samples: &[AlphaSample],
        feldt: Option<&FeldtTest>,
        hw: &HakstianWhalenTest,
    ) -> Self {
        CompareDocument {
            schema_version: SCHEMA_VERSION,
            command: "compare",
            relyard_version: env!("CARGO_PKG_VERSION"),
            samples: samples
                .iter()
                .enumerate()
                .map(|(i, s)| SampleRecord {
                    label: s.label.clone(),
                    alpha: s.alpha,
                    n: s.n,
                    items: s.items,
                    t: hw.t[i],
                    v: hw.v[i],
                })
                .collect(),
            feldt: feldt.map(|f| FeldtRecord {
                w: f.w,
                df1: f.df1,
                df2: f.df2,
                p: f.p,
            }),
            hakstian_whalen: HwRecord {
                chi2: hw.chi2,
                df: hw.df,
                p: hw.p,
                t_bar: hw.t_bar,
            },
        }
    }
}

/// Render the compare summary.
pub fn compare_summary(
    samples: &[AlphaSample],
    feldt: Option<&FeldtTest>,
    hw: &HakstianWhalenTest,
) -> String {
    let mut o = String::new();
    let _ = writeln!(
        o,
        "Are these alphas equal? {} independent samples",
        samples.len()
    );
    let _ = writeln!(o, "{}", "─".repeat(72));
    let _ = writeln!(
        o,
        "  {:<24} {:>8} {:>8} {:>6}",
        "sample", "alpha", "n", "items"
    );
    for s in samples {
        let label: String = s.label.chars().take(24).collect();
        let _ = writeln!(
            o,
            "  {:<24} {:>8} {:>8} {:>6}",
            label,
            fixed(s.alpha, 3),
            thousands(s.n),
            s.items
        );
    }
    let _ = writeln!(o);
    if let Some(f) = feldt {
        let _ = writeln!(
            o,
            "  Feldt (1969)              W = {} against F({}, {}), two-sided p {}",
            fixed(f.w, 3),
            f.df1,
            f.df2,
            p_value(f.p)
        );
    }
    let _ = writeln!(
        o,
        "  Hakstian–Whalen (1976)    χ²({}) = {}, p {}",
        hw.df,
        fixed(hw.chi2, 3),
        p_value(hw.p)
    );
    let _ = writeln!(o);
    let lo = samples
        .iter()
        .map(|s| s.alpha)
        .fold(f64::INFINITY, f64::min);
    let hi = samples
        .iter()
        .map(|s| s.alpha)
        .fold(f64::NEG_INFINITY, f64::max);
    let p = feldt.map(|f| f.p).unwrap_or(hw.p);
    let verdict = if p < 0.05 {
        "the alphas differ by more than sampling error explains"
    } else {
        "the data do not show a difference beyond sampling error (which is not proof that the \
         alphas are equal)"
    };
    o.push_str(&wrap(
        &format!(
            "The alphas span {} ({} to {}); at the 5% level {verdict}.",
            fixed(hi - lo, 3),
            fixed(lo, 3),
            fixed(hi, 3)
        ),
        86,
        "  ",
    ));
    if samples.windows(2).any(|w| w[0].items != w[1].items) {
        o.push_str(&wrap(
            "Note: the samples used forms of different lengths; these tests compare one test \
             given to different samples, so a difference may reflect the forms rather than the \
             samples.",
            86,
            "  ",
        ));
    }
    o
}

// ------------------------------------------------------------------ plan

/// `relyard plan --json`.
#[derive(Debug, Clone, Serialize)]
pub struct PlanDocument {
    /// Layout version.
    pub schema_version: &'static str,
    /// "plan".
    pub command: &'static str,
    /// relyard version.
    pub relyard_version: &'static str,
    /// "width" or "test".
    pub goal: &'static str,
    /// Required sample size.
    pub n: u64,
    /// The formula's value before rounding up.
    pub n_exact: f64,
    /// The inputs, by name.
    pub inputs: std::collections::BTreeMap<&'static str, f64>,
}

/// Render a sample-size result.
pub fn plan_summary(goal: &str, inputs: &[(&str, String)], size: &SampleSize) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "Sample size for coefficient alpha: {goal}");
    let _ = writeln!(o, "{}", "─".repeat(72));
    for (k, v) in inputs {
        let _ = writeln!(o, "  {:<22}{v}", k);
    }
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "  required n            {} (formula value {})",
        thousands(size.n),
        fixed(size.exact, 2)
    );
    let _ = writeln!(o);
    o.push_str(&wrap(
        "Bonett (2002): from the large-sample variance of ln(1 − alpha), 2k/((k − 1)(n − 2)). \
         Plan with a conservative (low) planning value; the formula assumes roughly parallel \
         items and approximately normal responses.",
        86,
        "  ",
    ));
    o
}

/// Warnings as records (shared helper).
pub fn warning_records(w: &[Warning]) -> Vec<WarningRecord> {
    w.iter().map(WarningRecord::from).collect()
}
