//! `relyard items --json`, `relyard compare --json` and `relyard plan --json`.

use super::{RELYARD_VERSION, SCHEMA_VERSION};
use crate::analysis::{Comparison, ItemsOutcome, PlanOutcome, PlanSettings};
use crate::items::{Missing, Recommendation};
use crate::level::Level;
use crate::numeric::MinimizeStop;
use crate::setting::SettingNames;
use crate::warning::WarningRecord;
use serde::Serialize;

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
    pub level: Level,
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
    /// The greatest lower bound.
    pub glb: GlbRecord,
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
    /// The scale score's mean and SD, as a sum and as a mean of the items.
    pub score: ScoreRecord,
    /// Text columns left out as respondent identifiers.
    pub identifiers_left_out: Vec<String>,
    /// Which coefficient to report.
    pub recommendation: Recommendation,
    /// The reading in words.
    pub reading: String,
    /// The items taken as ordinal (with `--ordinal`).
    pub ordinal: Option<OrdinalRecord>,
    /// The bifactor and correlated-factors models (with `--factor`).
    pub multidimensional: Option<MultidimensionalRecord>,
    /// A methods-section paragraph for the coefficient reported.
    pub paragraph: String,
    /// Full references for the paragraph.
    pub references: Vec<String>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
}

/// The item file.
#[derive(Debug, Clone, Serialize)]
pub struct ItemsInput {
    /// File.
    pub file: String,
    /// Delimiter name ("none (workbook)" for a workbook).
    pub delimiter: &'static str,
    /// The worksheet read (null for a text file).
    pub sheet_name: Option<String>,
    /// Data rows read.
    pub rows_read: u64,
    /// Respondents who answered every item.
    pub complete_rows: u64,
    /// Missing cells.
    pub missing_cells: u64,
    /// listwise or pairwise.
    pub missing: Missing,
    /// Responses read as missing besides empty cells and NA.
    pub missing_codes: Vec<f64>,
    /// For an SPSS file, cells holding a declared user-missing code, read as missing (null
    /// for other files).
    pub user_missing_cells: Option<u64>,
    /// An SPSS file's value labels, by variable (empty for other files).
    pub value_labels: Vec<ValueLabelsRecord>,
}

/// One variable's value labels.
#[derive(Debug, Clone, Serialize)]
pub struct ValueLabelsRecord {
    /// The variable.
    pub variable: String,
    /// Its labelled values, in order.
    pub labels: Vec<ValueLabel>,
}

/// One labelled value.
#[derive(Debug, Clone, Serialize)]
pub struct ValueLabel {
    /// The value.
    pub value: f64,
    /// Its label.
    pub label: String,
}

impl ItemsInput {
    /// What was read of a file of item responses (or of any table of scores).
    pub fn of(d: &crate::items::ItemData) -> ItemsInput {
        ItemsInput {
            file: d.file.clone(),
            delimiter: if d.user_missing_cells.is_some() {
                "none (SPSS file)"
            } else {
                d.format.delimiter_name()
            },
            sheet_name: d.worksheet.clone(),
            rows_read: d.rows_read,
            complete_rows: d.complete_rows,
            missing_cells: d.missing_cells,
            missing: d.missing,
            missing_codes: d.missing_codes.clone(),
            user_missing_cells: d.user_missing_cells,
            value_labels: d
                .value_labels
                .iter()
                .map(|(v, l)| ValueLabelsRecord {
                    variable: v.clone(),
                    labels: l
                        .iter()
                        .map(|(value, label)| ValueLabel {
                            value: *value,
                            label: label.clone(),
                        })
                        .collect(),
                })
                .collect(),
        }
    }
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

impl FitRecord {
    /// A fit's indices with its iterations and why it stopped.
    fn of(
        ix: &crate::items::factor::ModelFitIndices,
        iterations: usize,
        stop: MinimizeStop,
    ) -> Self {
        FitRecord {
            chi2: ix.chi2,
            df: ix.df,
            p: ix.p,
            rmsea: ix.rmsea,
            cfi: ix.cfi,
            iterations,
            termination: stop,
        }
    }
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
    pub fn new(o: &ItemsOutcome, names: &dyn SettingNames) -> Self {
        let (d, a, boot) = (&o.data, &o.analysis, o.bootstrap.as_ref());
        let cov = &d.moments.cov;
        let f = a.factor.as_ref().ok();
        let paragraph = crate::output::prose::items_paragraph(o);
        ItemsDocument {
            schema_version: SCHEMA_VERSION,
            command: "items",
            relyard_version: RELYARD_VERSION,
            input: ItemsInput::of(d),
            n_used: a.n_used,
            items: a.k,
            item_names: d.names.clone(),
            level: a.level,
            alpha: a.alpha,
            alpha_standardized: a.alpha_standardized,
            alpha_ci_feldt: [a.alpha_ci_feldt.0, a.alpha_ci_feldt.1],
            alpha_ci_bonett: [a.alpha_ci_bonett.0, a.alpha_ci_bonett.1],
            lambda2: a.lambda2,
            glb: GlbRecord::new(&a.glb, a.n_used),
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
            fit: f.map(|f| FitRecord::of(&f.fit, f.congeneric.iterations, f.congeneric.stop)),
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
            score: ScoreRecord {
                sum_mean: a.score.sum_mean,
                sum_sd: a.score.sum_sd,
                mean_mean: a.score.mean_mean,
                mean_sd: a.score.mean_sd,
            },
            identifiers_left_out: d.identifiers.clone(),
            recommendation: a.recommendation,
            reading: a.reading.render(names),
            ordinal: o.ordinal.as_ref().map(OrdinalRecord::from),
            multidimensional: o
                .multidimensional
                .as_ref()
                .map(|m| MultidimensionalRecord::new(m, cov, &d.names)),
            paragraph: paragraph.text.clone(),
            references: paragraph.citations(),
            warnings: super::warnings(&o.warnings, names),
        }
    }
}

/// What ordinal alpha describes, and which coefficient belongs in a benchmark.
pub const ORDINAL_CAUTION: &str = "Ordinal alpha is the alpha of the polychoric correlations: \
it describes the sum of the continuous responses assumed to underlie the categories, not the \
sum of the observed categories that a study scores, and is usually higher (Chalmers 2018). A \
benchmark of reported coefficients and a correction of observed correlations need a \
coefficient of the observed score: alpha or omega above, or categorical omega, which is the \
share of the observed sum's variance due to the common factor and allows for the items' few \
categories (Green & Yang 2009).";

/// The items taken as ordinal.
#[derive(Debug, Clone, Serialize)]
pub struct OrdinalRecord {
    /// Ordinal alpha (null when the polychoric correlations could not be computed).
    pub alpha: Option<f64>,
    /// The polychoric correlation matrix, by rows in the items' order (null as `alpha`).
    pub polychoric: Option<Vec<Vec<f64>>>,
    /// Categorical omega (null when it could not be computed).
    pub omega: Option<f64>,
    /// Why categorical omega could not be computed.
    pub omega_note: Option<String>,
    /// Why they could not be computed (items with too many categories, …).
    pub note: Option<String>,
    /// What ordinal alpha describes.
    pub caution: &'static str,
}

impl From<&std::result::Result<crate::analysis::OrdinalPart, String>> for OrdinalRecord {
    fn from(o: &std::result::Result<crate::analysis::OrdinalPart, String>) -> Self {
        match o {
            Ok(p) => OrdinalRecord {
                alpha: Some(p.alpha),
                polychoric: Some(
                    (0..p.polychoric.nrows())
                        .map(|i| p.polychoric.row(i).iter().copied().collect())
                        .collect(),
                ),
                omega: p.omega.as_ref().ok().copied(),
                omega_note: p.omega.as_ref().err().cloned(),
                note: None,
                caution: ORDINAL_CAUTION,
            },
            Err(why) => OrdinalRecord {
                alpha: None,
                polychoric: None,
                omega: None,
                omega_note: None,
                note: Some(why.clone()),
                caution: ORDINAL_CAUTION,
            },
        }
    }
}

/// The scale score.
#[derive(Debug, Clone, Serialize)]
pub struct ScoreRecord {
    /// Mean of the sum score.
    pub sum_mean: f64,
    /// SD of the sum score.
    pub sum_sd: f64,
    /// Mean of the mean score.
    pub mean_mean: f64,
    /// SD of the mean score.
    pub mean_sd: f64,
}

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
    /// The coding sheet the samples came from (null without one).
    pub input: Option<super::InputSummary>,
    /// Rows of the sheet left out (invalid rows skipped at the user's request).
    pub skipped_rows: Vec<super::SkippedRecord>,
    /// Warnings.
    pub warnings: Vec<WarningRecord>,
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
    pub fn new(c: &Comparison, names: &dyn SettingNames) -> Self {
        let (samples, feldt, hw) = (&c.samples, c.feldt.as_ref(), &c.hakstian_whalen);
        CompareDocument {
            schema_version: SCHEMA_VERSION,
            command: "compare",
            relyard_version: RELYARD_VERSION,
            input: c
                .source
                .as_ref()
                .map(|s| super::InputSummary::new(s, c.from_sheet, c.skipped.len())),
            skipped_rows: super::skipped(&c.skipped, names),
            warnings: super::warnings(&c.warnings, names),
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
    /// Required sample size (null when it exceeds 2^53, about 9 × 10^15).
    pub n: Option<u64>,
    /// The formula's value before rounding up.
    pub n_exact: f64,
    /// The inputs, by name.
    pub inputs: std::collections::BTreeMap<&'static str, PlanInput>,
}

impl std::fmt::Display for PlanInput {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            PlanInput::Count(n) => write!(f, "{n}"),
            PlanInput::Number(x) => f.write_str(&crate::format::trimmed(*x, 9)),
        }
    }
}

/// A plan's input: a count (items, sides) or a number.
#[derive(Debug, Clone, Copy, Serialize)]
#[serde(untagged)]
pub enum PlanInput {
    /// A whole number.
    Count(u32),
    /// Any other number.
    Number(f64),
}

impl PlanDocument {
    /// Build the document.
    pub fn new(o: &PlanOutcome, level: Level) -> Self {
        use PlanInput::{Count, Number};
        let (goal, inputs): (&'static str, Vec<(&'static str, PlanInput)>) = match o.plan {
            PlanSettings::Width {
                items,
                planning,
                width,
            } => (
                "width",
                vec![
                    ("items", Count(items)),
                    ("planning", Number(planning)),
                    ("width", Number(width)),
                    ("level", Number(level.value())),
                ],
            ),
            PlanSettings::Test {
                items,
                planning,
                null,
                power,
                significance,
                one_sided,
            } => (
                "test",
                vec![
                    ("items", Count(items)),
                    ("planning", Number(planning)),
                    ("null", Number(null)),
                    ("power", Number(power)),
                    ("significance", Number(significance)),
                    ("sides", Count(if one_sided { 1 } else { 2 })),
                ],
            ),
        };
        PlanDocument {
            schema_version: SCHEMA_VERSION,
            command: "plan",
            relyard_version: RELYARD_VERSION,
            goal,
            n: o.size.n,
            n_exact: o.size.exact,
            inputs: inputs.into_iter().collect(),
        }
    }
}

/// The bifactor and correlated-factors models of `--factor`.
#[derive(Debug, Clone, Serialize)]
pub struct MultidimensionalRecord {
    /// The groups as given: each name and its items.
    pub groups: Vec<GroupRecord>,
    /// Omega total of the bifactor model (null without one).
    pub omega_total: Option<f64>,
    /// Omega hierarchical (null without a bifactor model).
    pub omega_hierarchical: Option<f64>,
    /// Explained common variance of the general factor (null without a bifactor model).
    pub ecv: Option<f64>,
    /// "strong" or "not_strong" (null without a bifactor model).
    pub general_factor: Option<crate::items::multidimensional::GeneralFactor>,
    /// Each subscale's omega and omega-hierarchical-subscale (empty without a bifactor
    /// model).
    pub subscales: Vec<SubscaleRecord>,
    /// The bifactor model's fit (null when it was not fitted).
    pub fit_bifactor: Option<FitRecord>,
    /// The correlated-factors model's fit (null when it was not fitted).
    pub fit_correlated: Option<FitRecord>,
    /// The bifactor model's standardized loadings and uniquenesses, one entry per item.
    pub bifactor_loadings: Vec<LoadingRecord>,
    /// The correlated-factors model's standardized loadings (general: null).
    pub correlated_loadings: Vec<LoadingRecord>,
    /// The correlated-factors model's factor correlations, by rows in the groups' order.
    pub factor_correlations: Option<Vec<Vec<f64>>>,
    /// Items with a Heywood case in the bifactor model.
    pub heywood_items: Vec<String>,
    /// Why the bifactor model was not fitted, when it was not.
    pub bifactor_note: Option<String>,
    /// Why the correlated-factors model was not fitted, when it was not.
    pub correlated_note: Option<String>,
    /// Which score to interpret and which coefficient to carry forward, in words.
    pub reading: String,
}

/// A group of items.
#[derive(Debug, Clone, Serialize)]
pub struct GroupRecord {
    /// Name.
    pub name: String,
    /// Its items.
    pub items: Vec<String>,
}

/// One subscale's coefficients.
#[derive(Debug, Clone, Serialize)]
pub struct SubscaleRecord {
    /// Name.
    pub name: String,
    /// Omega of the subscale's sum (general and group factor).
    pub omega: f64,
    /// Omega-hierarchical-subscale (its group factor alone).
    pub omega_hierarchical_subscale: f64,
}

/// One item's standardized loadings.
#[derive(Debug, Clone, Serialize)]
pub struct LoadingRecord {
    /// Item.
    pub item: String,
    /// Its group.
    pub group: String,
    /// Loading on the general factor (null in the correlated-factors model).
    pub general: Option<f64>,
    /// Loading on its group factor.
    pub group_loading: f64,
    /// Uniqueness (standardized).
    pub uniqueness: f64,
}

impl MultidimensionalRecord {
    fn new(
        m: &std::result::Result<crate::items::multidimensional::MultidimensionalAnalysis, String>,
        cov: &nalgebra::DMatrix<f64>,
        names: &[String],
    ) -> Self {
        use crate::items::multidimensional::StructuredFit;
        let m = match m {
            Ok(m) => m,
            Err(why) => {
                return MultidimensionalRecord {
                    groups: Vec::new(),
                    omega_total: None,
                    omega_hierarchical: None,
                    ecv: None,
                    general_factor: None,
                    subscales: Vec::new(),
                    fit_bifactor: None,
                    fit_correlated: None,
                    bifactor_loadings: Vec::new(),
                    correlated_loadings: Vec::new(),
                    factor_correlations: None,
                    heywood_items: Vec::new(),
                    bifactor_note: Some(why.clone()),
                    correlated_note: Some(why.clone()),
                    reading: format!("no multidimensional model: {why}"),
                };
            }
        };
        let g = &m.groups;
        let loadings = |f: &StructuredFit| -> Vec<LoadingRecord> {
            let (general, own) = f.standardized(cov);
            (0..names.len())
                .map(|i| LoadingRecord {
                    item: names[i].clone(),
                    group: g.names[g.of_item[i]].clone(),
                    general: general.get(i).copied(),
                    group_loading: own[i],
                    uniqueness: f.uniquenesses[i] / cov[(i, i)],
                })
                .collect()
        };
        let fit = |f: &std::result::Result<StructuredFit, String>,
                   ix: &Option<crate::items::factor::ModelFitIndices>| {
            match (f, ix) {
                (Ok(f), Some(ix)) => Some(FitRecord::of(ix, f.iterations, f.stop)),
                _ => None,
            }
        };
        let o = m.omegas.as_ref();
        MultidimensionalRecord {
            groups: (0..g.count())
                .map(|h| GroupRecord {
                    name: g.names[h].clone(),
                    items: g.members(h).iter().map(|&i| names[i].clone()).collect(),
                })
                .collect(),
            omega_total: o.map(|o| o.omega_total),
            omega_hierarchical: o.map(|o| o.omega_hierarchical),
            ecv: o.map(|o| o.ecv),
            general_factor: m.general_factor,
            subscales: o
                .map(|o| {
                    o.subscales
                        .iter()
                        .map(|s| SubscaleRecord {
                            name: s.name.clone(),
                            omega: s.omega,
                            omega_hierarchical_subscale: s.omega_hierarchical_subscale,
                        })
                        .collect()
                })
                .unwrap_or_default(),
            fit_bifactor: fit(&m.bifactor, &m.fit_bifactor),
            fit_correlated: fit(&m.correlated, &m.fit_correlated),
            bifactor_loadings: m.bifactor.as_ref().map(loadings).unwrap_or_default(),
            correlated_loadings: m.correlated.as_ref().map(loadings).unwrap_or_default(),
            factor_correlations: m.correlated.as_ref().ok().map(|f| {
                (0..f.correlations.nrows())
                    .map(|r| f.correlations.row(r).iter().copied().collect())
                    .collect()
            }),
            heywood_items: m
                .bifactor
                .as_ref()
                .map(|f| f.heywood.iter().map(|&i| names[i].clone()).collect())
                .unwrap_or_default(),
            bifactor_note: m.bifactor.as_ref().err().cloned(),
            correlated_note: m.correlated.as_ref().err().cloned(),
            reading: m.reading.clone(),
        }
    }
}

/// What the greatest lower bound is and is not.
pub const GLB_CAUTION: &str = "The greatest lower bound is the smallest reliability the items' \
covariances allow: like alpha it is a lower bound, so carried into a correction for \
measurement error it over-corrects (less than alpha does). Estimated from a sample it is \
biased upward, noticeably below about 1,000 respondents (Shapiro & Ten Berge 2000), so it can \
exceed the reliability it bounds.";

/// The greatest lower bound.
#[derive(Debug, Clone, Serialize)]
pub struct GlbRecord {
    /// The glb (null when it was not computed).
    pub value: Option<f64>,
    /// Whether the search reached its tolerance (null when not computed).
    pub converged: Option<bool>,
    /// Newton steps of the search (null when not computed).
    pub newton_steps: Option<usize>,
    /// Fewer than 1,000 respondents: the upward bias is noticeable.
    pub small_sample: bool,
    /// Why it was not computed.
    pub note: Option<String>,
    /// What it is and is not.
    pub caution: &'static str,
}

impl GlbRecord {
    fn new(g: &std::result::Result<crate::items::glb::GreatestLowerBound, String>, n: u64) -> Self {
        GlbRecord {
            value: g.as_ref().ok().map(|g| g.value),
            converged: g.as_ref().ok().map(|g| g.converged),
            newton_steps: g.as_ref().ok().map(|g| g.newton_steps),
            small_sample: n < crate::items::glb::LARGE_SAMPLE,
            note: g.as_ref().err().cloned(),
            caution: GLB_CAUTION,
        }
    }
}
