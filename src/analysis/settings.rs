//! Settings: everything an analysis is told, resolved once by a face (the command line, a
//! browser form) and passed down typed. Nothing downstream re-reads a raw option.

use crate::benchmark::BenchmarkOptions;
use crate::compare::AlphaSample;
use crate::correct::ReliabilitySpec;
use crate::error::{Error, Result};
use crate::format::thousands;
use crate::items::ItemReadOptions;
use crate::level::Level;
use crate::metareg::spread::SpreadMetric;
use crate::metareg::{Centring, ModeratorSpec};
use crate::placement::NewStudy;
use crate::pool::dependence::DependenceOptions;
use crate::pool::{CiMethod, Model, PoolOptions, Tau2Estimator};
use crate::setting::{Setting, given, msg};
use crate::sheet::SheetOptions;
pub use crate::sheet::SubsetRule;
use crate::transform::TransformKind;
use std::collections::BTreeMap;
use std::path::PathBuf;
use std::sync::Arc;

/// Everything one run of the analysis is told.
#[derive(Debug, Clone, Default)]
pub struct Settings {
    /// The coding sheet of prior studies (for the benchmark, its explanation, a placement
    /// or a benchmark used as a reliability; optional for comparing alphas).
    pub sheet: Option<SheetSettings>,
    /// The benchmark model.
    pub model: ModelSettings,
    /// Moderators, for the explanation and the placement.
    pub moderators: ModeratorSettings,
    /// Pool the sheet into a benchmark.
    pub benchmark: bool,
    /// Explain the differences between studies.
    pub explain: Option<ExplainSettings>,
    /// Place a new study against the benchmark.
    pub new_study: Option<NewStudySettings>,
    /// Correct a correlation or a regression for unreliability.
    pub correction: Option<CorrectionSettings>,
    /// Reliability from raw item data.
    pub items: Option<ItemSettings>,
    /// Intraclass correlations from a persons × occasions (or raters) table.
    pub icc: Option<ItemSettings>,
    /// Tests of equality for independent alphas.
    pub comparison: Option<ComparisonSettings>,
    /// A sample size for estimating or testing alpha.
    pub plan: Option<PlanSettings>,
    /// The confidence level of every interval.
    pub level: Level,
    /// The seed of everything random (permutations, bootstrap, Monte Carlo draws).
    pub seed: u64,
    /// The measure's name, for the paragraphs (e.g. "the Team Candor Scale").
    pub measure: Option<String>,
    /// Work out what the figures need (one fit per numeric moderator).
    pub figures: bool,
}

/// Where the coding sheet is and how to read it.
#[derive(Debug, Clone, Default)]
pub struct SheetSettings {
    /// The sheet's path (also its name in messages).
    pub path: PathBuf,
    /// The sheet's bytes when they are already in memory (an upload); read from `path`
    /// when `None`.
    pub bytes: Option<Arc<Vec<u8>>>,
    /// Delimiter, column mapping and worksheet.
    pub read: SheetOptions,
    /// Leave invalid rows out (each listed) instead of stopping.
    pub skip_invalid: bool,
    /// Analyse only the rows with these values (all must hold).
    pub subset: Vec<SubsetRule>,
}

/// The benchmark model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModelSettings {
    /// The analysis scale; chosen from the coefficient types when `None`.
    pub transform: Option<TransformKind>,
    /// Common-effect or random-effects with its τ² estimator.
    pub model: Model,
    /// How confidence intervals are formed.
    pub interval: CiMethod,
    /// Pool internal-consistency and correlation-type coefficients together.
    pub mixed_types: bool,
    /// How rows that share a sample or a cluster are pooled.
    pub dependence: DependenceOptions,
}

impl Default for ModelSettings {
    fn default() -> Self {
        ModelSettings {
            transform: None,
            model: Model::Random(Tau2Estimator::Reml),
            interval: CiMethod::KnappHartung,
            mixed_types: false,
            dependence: DependenceOptions::default(),
        }
    }
}

/// Moderators of a meta-regression.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ModeratorSettings {
    /// The moderators, in the order given.
    pub specs: Vec<ModeratorSpec>,
    /// The metric score SDs are put on (chosen from the sheet when `None`).
    pub spread_metric: Option<SpreadMetric>,
    /// Whether numeric moderators are centred at their means.
    pub centring: Centring,
}

/// What the explanation holds besides the moderators' model.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ExplainSettings {
    /// The score-variance test.
    pub score_spread: bool,
    /// A benchmark per level of this column.
    pub by: Option<String>,
    /// Leave-one-out diagnostics.
    pub influence: bool,
    /// A permutation test with this many permutations.
    pub permutations: Option<usize>,
}

/// The new study to place.
#[derive(Debug, Clone, PartialEq)]
pub struct NewStudySettings {
    /// The study.
    pub study: NewStudy,
    /// Its moderator values, by moderator name.
    pub at: BTreeMap<String, String>,
    /// The known cluster of the sheet it belongs to (its ranges are then for a new sample
    /// of that cluster).
    pub in_cluster: Option<String>,
}

/// A correction for unreliability.
#[derive(Debug, Clone, PartialEq)]
pub enum CorrectionSettings {
    /// Spearman's correction of one correlation.
    Correlation {
        /// The observed correlation.
        r: f64,
        /// Its sample size.
        n: u64,
        /// The reliability of x (taken from `items_x` when not given).
        rel_x: Option<ReliabilitySpec>,
        /// The reliability of y (taken from `items_y` when not given).
        rel_y: Option<ReliabilitySpec>,
        /// Item data of x: its coefficients, side by side.
        items_x: Option<Box<ItemSettings>>,
        /// Item data of y.
        items_y: Option<Box<ItemSettings>>,
        /// Monte Carlo draws.
        draws: usize,
        /// Points per reliability in the sensitivity table.
        grid: usize,
    },
    /// The errors-in-variables correction of a regression's slopes.
    Regression {
        /// Where the study's data come from.
        data: RegressionData,
        /// The outcome.
        outcome: String,
        /// The predictors, each with its reliability.
        predictors: Vec<(String, ReliabilitySpec)>,
        /// The outcome's reliability, when given.
        outcome_reliability: Option<ReliabilitySpec>,
        /// Item data of the one predictor: its coefficients, side by side.
        items_x: Option<Box<ItemSettings>>,
        /// Item data of the outcome.
        items_y: Option<Box<ItemSettings>>,
        /// Monte Carlo draws or bootstrap samples.
        draws: usize,
        /// Points per reliability in the sensitivity table.
        grid: usize,
    },
}

/// The data of a regression to correct.
#[derive(Debug, Clone, PartialEq)]
pub enum RegressionData {
    /// Raw data: one row per respondent, scores in columns.
    Raw {
        /// The file (also its name in messages).
        path: PathBuf,
        /// The file's bytes when they are already in memory (an upload).
        bytes: Option<Arc<Vec<u8>>>,
        /// How to read it (delimiter, missing-value codes).
        read: ItemReadOptions,
    },
    /// A covariance or correlation matrix with the study's sample size.
    Summary {
        /// The file (also its name in messages).
        path: PathBuf,
        /// The file's bytes when they are already in memory (an upload).
        bytes: Option<Arc<Vec<u8>>>,
        /// The sample size.
        n: u64,
    },
}

/// Reliability from raw item data.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ItemSettings {
    /// The item file (also its name in messages).
    pub path: PathBuf,
    /// The file's bytes when they are already in memory (an upload); read from `path` when
    /// `None`.
    pub bytes: Option<Arc<Vec<u8>>>,
    /// Which columns, reverse keying, scale, missing values.
    pub read: ItemReadOptions,
    /// Bootstrap replicates for omega's interval.
    pub bootstrap: Option<usize>,
    /// Treat the items as ordinal: polychoric correlations and ordinal alpha too.
    pub ordinal: bool,
    /// Groups of items (subscales) for the bifactor and correlated-factors models; none
    /// when empty.
    pub factors: Vec<FactorSpec>,
}

/// A group of items (a subscale) named by the user, for the multidimensional models.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FactorSpec {
    /// The group's name.
    pub name: String,
    /// Its items' names.
    pub items: Vec<String>,
}

/// Tests of equality for independent alphas: the sheet's rows (when a sheet is given) and
/// these samples.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ComparisonSettings {
    /// Samples given one by one.
    pub samples: Vec<AlphaSample>,
}

/// An error unless `value` is at most `max`.
fn at_most(setting: Setting, value: usize, max: usize, what: &str) -> Result<()> {
    if value <= max {
        return Ok(());
    }
    Err(Error::setting(
        setting,
        msg![
            given(setting, thousands(value as u64)),
            format!(
                ": at most {} {what} are allowed (a bound that keeps a run within memory and \
                 time; see docs/limits.md)",
                thousands(max as u64)
            )
        ],
    ))
}

/// A sample size for coefficient alpha.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PlanSettings {
    /// An interval of a given width (at the run's level).
    Width {
        /// Items.
        items: u32,
        /// The planning value of alpha.
        planning: f64,
        /// The width (upper minus lower end).
        width: f64,
    },
    /// A test of alpha = `null` with a given power at the planning value.
    Test {
        /// Items.
        items: u32,
        /// The planning value of alpha.
        planning: f64,
        /// The alpha tested against.
        null: f64,
        /// The power.
        power: f64,
        /// The significance level.
        significance: f64,
        /// One-sided rather than two-sided.
        one_sided: bool,
    },
}

impl Settings {
    /// Check every count the settings ask for against its bound (see [`crate::limits`]),
    /// before any work or allocation it would size.
    pub fn check_bounds(&self) -> Result<()> {
        use crate::limits::*;
        if let Some(e) = &self.explain
            && let Some(p) = e.permutations
        {
            at_most(Setting::Permutations, p, MAX_PERMUTATIONS, "permutations")?;
        }
        if let Some(b) = self.items.as_ref().and_then(|i| i.bootstrap) {
            at_most(Setting::Bootstrap, b, MAX_BOOTSTRAP, "bootstrap replicates")?;
        }
        match &self.correction {
            Some(CorrectionSettings::Correlation { draws, grid, .. }) => {
                at_most(Setting::Draws, *draws, MAX_DRAWS, "draws")?;
                at_most(Setting::Grid, *grid, MAX_GRID, "grid points")?;
            }
            Some(CorrectionSettings::Regression {
                draws,
                grid,
                predictors,
                ..
            }) => {
                at_most(Setting::Draws, *draws, MAX_DRAWS, "draws")?;
                at_most(Setting::Grid, *grid, MAX_GRID, "grid points")?;
                let per_draw = 8 * (predictors.len() + 1);
                let fits = MAX_DRAW_BYTES / per_draw;
                if *draws > fits {
                    return Err(Error::setting(
                        Setting::Draws,
                        msg![
                            given(Setting::Draws, thousands(*draws as u64)),
                            format!(
                                ": with {} predictors the draws would hold {} MB (at most {} \
                                 MB); use at most {} draws",
                                predictors.len(),
                                (*draws as u128 * per_draw as u128) >> 20,
                                MAX_DRAW_BYTES >> 20,
                                thousands(fits as u64)
                            )
                        ],
                    ));
                }
            }
            None => {}
        }
        Ok(())
    }

    /// The library options of the benchmark model.
    pub fn benchmark_options(&self) -> BenchmarkOptions {
        BenchmarkOptions {
            transform: self.model.transform,
            allow_mixed_types: self.model.mixed_types,
            skip_invalid: self.sheet.as_ref().is_some_and(|s| s.skip_invalid),
            pool: self.pool_options(),
            dependence: self.model.dependence,
        }
    }

    /// The pooling options of the benchmark model.
    pub fn pool_options(&self) -> PoolOptions {
        PoolOptions {
            model: self.model.model,
            ci: self.model.interval,
            level: self.level,
        }
    }
}
