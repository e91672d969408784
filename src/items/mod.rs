//! Reliability from raw item data: alpha and its relatives, omega from the one-factor
//! model, the test of tau-equivalence, intervals, and a plain reading of which coefficient
//! to report.

pub mod alpha;
pub mod bootstrap;
mod cells;
pub mod factor;
mod fast;
pub mod glb;
pub mod moments;
pub mod multidimensional;
pub mod polychoric;
pub mod read;
#[cfg(feature = "spss")]
pub mod sav;

pub use read::{ItemData, ItemReadOptions, Missing, read_items, read_items_from_bytes};

use crate::error::Result;
use crate::level::Level;
use crate::warning::Warning;
use alpha::{
    ItemStatistic, alpha, alpha_standardized, bonett_interval, feldt_interval, item_statistics,
    lambda2,
};
use factor::{
    FactorFit, FactorModel, ModelFitIndices, TauEquivalenceTest, fit_indices, fit_one_factor,
    tau_equivalence_test,
};

/// Smallest eigenvalue of the items' covariance matrix, relative to the largest, below which
/// it counts as singular (numerical tolerance).
const SINGULAR_RATIO: f64 = 1e-12;

/// Significance level of the tau-equivalence test for the reading (common practice).
pub const TAU_TEST_LEVEL: f64 = 0.05;
/// Fit limits for "one factor fits": CFI ≥ 0.95 and RMSEA ≤ 0.06 (Hu & Bentler 1999).
pub const CFI_GOOD: f64 = 0.95;
/// See [`CFI_GOOD`].
pub const RMSEA_GOOD: f64 = 0.06;

/// Which coefficient the reading recommends.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Recommendation {
    /// Alpha and omega agree; either serves.
    Either,
    /// Omega: alpha is a lower bound here.
    Omega,
    /// Neither: one factor does not describe the items.
    CheckDimensionality,
    /// Only alpha is available (two items).
    AlphaOnly,
    /// The one-factor solution is improper (Heywood case); alpha, with caution.
    AlphaWithCaution,
    /// Some items run against the others: reverse-key them before any coefficient.
    ReverseKeyFirst,
    /// The items share too little variance for a scale score.
    NoCommonVariance,
}

/// The one-factor part of an analysis.
#[derive(Debug, Clone)]
pub struct FactorPart {
    /// Congeneric fit.
    pub congeneric: FactorFit,
    /// Tau-equivalent fit.
    pub tau_equivalent: FactorFit,
    /// Test of tau-equivalence.
    pub tau_test: TauEquivalenceTest,
    /// Fit of the one-factor model.
    pub fit: ModelFitIndices,
    /// p value of the test that the items are uncorrelated (Bartlett's χ² of the
    /// correlation matrix).
    pub independence_p: f64,
}

/// The scale score's mean and SD, as the sum of the items and as their mean (the SD
/// ready for placing the study against a benchmark by its score spread).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScaleScore {
    /// Mean of the sum score.
    pub sum_mean: f64,
    /// SD of the sum score, √(1ᵀΣ1).
    pub sum_sd: f64,
    /// Mean of the mean score (sum / items).
    pub mean_mean: f64,
    /// SD of the mean score.
    pub mean_sd: f64,
}

impl ScaleScore {
    /// From the items' means and covariance matrix (n − 1 denominator).
    pub fn of(mean: &[f64], cov: &nalgebra::DMatrix<f64>) -> ScaleScore {
        let k = mean.len() as f64;
        let sum_mean: f64 = mean.iter().sum();
        let sum_sd = cov.sum().max(0.0).sqrt();
        ScaleScore {
            sum_mean,
            sum_sd,
            mean_mean: sum_mean / k,
            mean_sd: sum_sd / k,
        }
    }
}

/// Everything `relyard items` reports.
#[derive(Debug, Clone)]
pub struct ItemAnalysis {
    /// Respondents behind the statistics.
    pub n_used: u64,
    /// Number of items.
    pub k: usize,
    /// Coefficient alpha.
    pub alpha: f64,
    /// Standardized alpha.
    pub alpha_standardized: f64,
    /// Guttman's λ2.
    pub lambda2: f64,
    /// Feldt's interval.
    pub alpha_ci_feldt: (f64, f64),
    /// Bonett's interval.
    pub alpha_ci_bonett: (f64, f64),
    /// Confidence level.
    pub level: Level,
    /// Per-item statistics.
    pub item_statistics: Vec<ItemStatistic>,
    /// The scale score's mean and SD (sum and mean metric).
    pub score: ScaleScore,
    /// The one-factor models, or why there are none.
    pub factor: std::result::Result<FactorPart, String>,
    /// The greatest lower bound, or why it was not computed.
    pub glb: std::result::Result<glb::GreatestLowerBound, String>,
    /// Which coefficient to carry forward.
    pub recommendation: Recommendation,
    /// The reading in words.
    pub reading: crate::Message,
    /// Warnings.
    pub warnings: Vec<Warning>,
}

impl ItemAnalysis {
    /// Omega, when the one-factor model could be fitted.
    pub fn omega(&self) -> Option<f64> {
        self.factor.as_ref().ok().map(|f| f.congeneric.omega())
    }
}

/// Analyze item data at a confidence level.
pub fn analyze(data: &ItemData, level: Level) -> Result<ItemAnalysis> {
    analyze_with(data, level, &|_| {})
}

/// [`analyze`], telling `tick` of each one-factor model fitted (two in all: free and equal
/// loadings), for a progress display on wide item sets.
pub fn analyze_with(
    data: &ItemData,
    level: Level,
    tick: &(dyn Fn(usize) + Sync),
) -> Result<ItemAnalysis> {
    let cov = &data.moments.cov;
    let k = data.moments.k();
    let n_used = data.n_used();
    let n = n_used as f64;
    let mut warnings = data.notes.clone();
    if let Some(i) = (0..k).find(|&i| cov[(i, i)].is_nan() || cov[(i, i)] <= 0.0) {
        return Err(crate::Error::cannot(crate::setting::msg![
            format!(
                "item {} has no variance (every respondent gave the same answer), so \
                 reliability cannot be computed; leave it out with ",
                data.names[i]
            ),
            crate::Setting::ItemColumns
        ]));
    }
    if n_used < 3 {
        return Err(crate::Error::cannot(format!(
            "only {} can be used; reliability needs at least 3",
            crate::format::count(n_used, "respondent", "respondents")
        )));
    }
    let a = alpha(cov);
    if a < 0.0 {
        warnings.push(Warning::NegativeAlpha { alpha: a });
    }
    let mean: Vec<f64> = data.moments.mean.iter().copied().collect();
    let stats = item_statistics(&mean, cov);
    // A column that is (nearly) the sum of the others is a total score, not an item.
    if let Some(i) = stats.iter().position(|s| s.corrected_item_total > 0.9999) {
        return Err(crate::Error::cannot(crate::setting::msg![
            format!(
                "column {} correlates {} with the sum of the other columns: it looks like a \
                 total score rather than an item; leave it out with ",
                data.names[i],
                crate::format::fixed(stats[i].corrected_item_total, 4)
            ),
            crate::Setting::ItemColumns
        ]));
    }
    let factor = fit_factor(cov, n, &data.names, data.missing, &mut warnings, tick);
    let glb = lower_bound(cov, n, k, &mut warnings);
    let (recommendation, reading) = read(a, &factor, &data.names, k);
    Ok(ItemAnalysis {
        n_used,
        k,
        alpha: a,
        alpha_standardized: alpha_standardized(cov),
        lambda2: lambda2(cov),
        alpha_ci_feldt: feldt_interval(a, n, k as f64, level),
        alpha_ci_bonett: bonett_interval(a, n, k as f64, level),
        level,
        score: ScaleScore::of(&mean, cov),
        item_statistics: stats,
        factor,
        glb,
        recommendation,
        reading,
        warnings,
    })
}

/// The greatest lower bound, or why it is not computed (too many items, a covariance matrix
/// that is not positive definite).
fn lower_bound(
    cov: &nalgebra::DMatrix<f64>,
    n: f64,
    k: usize,
    warnings: &mut Vec<Warning>,
) -> std::result::Result<glb::GreatestLowerBound, String> {
    if k > crate::limits::MAX_GLB_ITEMS {
        return Err(format!(
            "with {} items (more than {}) the greatest lower bound is not computed (a bound on \
             time, see docs/limits.md)",
            crate::format::thousands(k as u64),
            crate::limits::MAX_GLB_ITEMS
        ));
    }
    if n <= k as f64 {
        return Err(
            "the items' covariance matrix is singular (fewer respondents than items)".into(),
        );
    }
    let g = glb::greatest_lower_bound(cov).map_err(|e| e.to_string())?;
    if !g.converged {
        warnings.push(Warning::ItemModelNotConverged {
            what: "the greatest lower bound".into(),
            iterations: g.newton_steps,
        });
    }
    Ok(g)
}

fn fit_factor(
    cov: &nalgebra::DMatrix<f64>,
    n: f64,
    names: &[String],
    missing: Missing,
    warnings: &mut Vec<Warning>,
    tick: &(dyn Fn(usize) + Sync),
) -> std::result::Result<FactorPart, String> {
    let k = cov.nrows();
    if k > crate::limits::MAX_FACTOR_ITEMS {
        return Err(format!(
            "with {} items (more than {}) the one-factor model is not fitted, so omega, its \
             tests and its fit are left out (a bound on time and memory, see docs/limits.md); \
             alpha and the item statistics stand",
            crate::format::thousands(k as u64),
            crate::format::thousands(crate::limits::MAX_FACTOR_ITEMS as u64)
        ));
    }
    if n <= k as f64 {
        return Err(format!(
            "with {n} respondents and {k} items the items' covariance matrix is singular (a \
             factor model needs more respondents than items), so no factor model, omega or fit \
             is reported"
        ));
    }
    let eig = cov.clone().symmetric_eigenvalues();
    let (lo, hi) = (eig.min(), eig.max());
    if !(hi > 0.0 && lo > SINGULAR_RATIO * hi) {
        return Err(match missing {
            Missing::Pairwise => "the pairwise covariance matrix is not positive definite \
                                  (pairwise deletion can give a matrix no complete data set \
                                  could have), so the one-factor model cannot be fitted; try \
                                  listwise deletion"
                .to_string(),
            Missing::Listwise => "the items' covariance matrix is singular (an item is a \
                                  linear combination of others), so no factor model, omega or \
                                  fit is reported"
                .to_string(),
        });
    }
    let reason = |e: crate::Error| e.to_string();
    let cong = fit_one_factor(cov, FactorModel::Congeneric).map_err(reason)?;
    tick(1);
    let tau = fit_one_factor(cov, FactorModel::TauEquivalent).map_err(reason)?;
    tick(1);
    for (name, f) in [
        ("the congeneric one-factor model", &cong),
        ("the tau-equivalent model", &tau),
    ] {
        if !f.stop.converged() {
            warnings.push(Warning::ItemModelNotConverged {
                what: name.into(),
                iterations: f.iterations,
            });
        }
    }
    let negative: Vec<String> = cong
        .loadings
        .iter()
        .zip(names)
        .filter(|(l, _)| **l < 0.0)
        .map(|(_, n)| n.clone())
        .collect();
    if !negative.is_empty() {
        warnings.push(Warning::NegativeLoading { items: negative });
    }
    Ok(FactorPart {
        tau_test: tau_equivalence_test(&cong, &tau, n, k),
        fit: fit_indices(cov, &cong, n),
        independence_p: factor::independence_test(cov, n),
        congeneric: cong,
        tau_equivalent: tau,
    })
}

fn read(
    a: f64,
    factor: &std::result::Result<FactorPart, String>,
    names: &[String],
    k: usize,
) -> (Recommendation, crate::Message) {
    let f = match factor {
        Ok(f) => f,
        Err(why) => return read_without_factor(a, why, k),
    };
    let omega = f.congeneric.omega();
    // 1. Items that run against the others.
    let negative: Vec<&str> = f
        .congeneric
        .loadings
        .iter()
        .zip(names)
        .filter(|(l, _)| **l < 0.0)
        .map(|(_, n)| n.as_str())
        .collect();
    if a <= 0.0 || !negative.is_empty() {
        return read_reverse_key_first(a, &negative);
    }
    // 2. Items that share (almost) nothing.
    if f.independence_p >= TAU_TEST_LEVEL {
        return (
            Recommendation::NoCommonVariance,
            format!(
                "the items share too little variance to be distinguished from unrelated items \
                 (test of zero correlations p {}): they do not form a scale here, so neither \
                 alpha ({}) nor omega ({}) describes a score's reliability",
                crate::format::p_value(f.independence_p),
                fx(a),
                fx(omega)
            )
            .into(),
        );
    }
    let heywood: Vec<&str> = f
        .congeneric
        .heywood
        .iter()
        .map(|&i| names[i].as_str())
        .collect();
    let fits = match (f.fit.cfi, f.fit.rmsea) {
        (Some(cfi), Some(rmsea)) => cfi >= CFI_GOOD && rmsea <= RMSEA_GOOD,
        _ => true, // three items: the model fits exactly (0 df)
    };
    // 3. One factor does not describe the items.
    if !fits {
        return read_poor_fit(a, f, &heywood);
    }
    // 4. An improper solution.
    if !heywood.is_empty() {
        return (
            Recommendation::AlphaWithCaution,
            format!(
                "the one-factor solution is improper: the uniqueness of {} is at zero (a Heywood \
                 case), so omega ({}) is not trustworthy; report alpha ({}) as a lower bound \
                 and examine those items",
                heywood.join(", "),
                fx(omega),
                fx(a)
            )
            .into(),
        );
    }
    // 5. Tau-equivalence.
    read_tau_test(a, f)
}

/// A value with three decimals, as the reading shows it.
fn fx(x: f64) -> String {
    crate::format::fixed(x, 3)
}

/// The reading when no one-factor model could be fitted.
fn read_without_factor(a: f64, why: &str, k: usize) -> (Recommendation, crate::Message) {
    let text = if k < 3 {
        format!(
            "with {k} items the one-factor model is not identified, so only alpha ({}) is \
             available; it is a lower bound to reliability unless the items are \
             tau-equivalent",
            fx(a)
        )
    } else {
        format!(
            "the one-factor model could not be fitted ({why}); alpha is {}",
            fx(a)
        )
    };
    let rec = if a > 0.0 {
        Recommendation::AlphaOnly
    } else {
        Recommendation::ReverseKeyFirst
    };
    (rec, text.into())
}

/// The reading when items run against the others (or alpha is not above 0).
fn read_reverse_key_first(a: f64, negative: &[&str]) -> (Recommendation, crate::Message) {
    let which = if negative.is_empty() {
        "some items".to_string()
    } else {
        negative.join(", ")
    };
    (
        Recommendation::ReverseKeyFirst,
        crate::setting::msg![
            format!(
                "{which} run against the other items (negative loading{}): reverse-key them \
                 (",
                if a <= 0.0 {
                    ", and alpha is not above 0"
                } else {
                    ""
                }
            ),
            crate::Setting::ReverseKeyed,
            " with ",
            crate::Setting::ResponseMin,
            " and ",
            crate::Setting::ResponseMax,
            format!(
                ") before computing any coefficient; neither alpha ({}) nor omega means \
                 anything until then",
                fx(a)
            )
        ],
    )
}

/// The reading when one factor does not describe the items.
fn read_poor_fit(a: f64, f: &FactorPart, heywood: &[&str]) -> (Recommendation, crate::Message) {
    let omega = f.congeneric.omega();
    let hw = if heywood.is_empty() {
        String::new()
    } else {
        format!(
            "; the solution is also improper (a Heywood case for {})",
            heywood.join(", ")
        )
    };
    (
        Recommendation::CheckDimensionality,
        format!(
            "one factor does not describe these items well (CFI {}, RMSEA {}; common limits \
             CFI ≥ 0.95, RMSEA ≤ 0.06){hw}: neither alpha ({}) nor omega ({}) is then the \
             reliability of a single trait; examine the items' dimensionality before \
             carrying either into a benchmark or a correction",
            f.fit.cfi.map(fx).unwrap_or_default(),
            f.fit.rmsea.map(fx).unwrap_or_default(),
            fx(a),
            fx(omega)
        )
        .into(),
    )
}

/// The reading from the test of tau-equivalence, once one factor fits properly.
fn read_tau_test(a: f64, f: &FactorPart) -> (Recommendation, crate::Message) {
    let omega = f.congeneric.omega();
    let test = format!(
        "χ²({}) = {}, p {}",
        f.tau_test.df,
        crate::format::fixed(f.tau_test.chi2, 2),
        crate::format::p_value(f.tau_test.p)
    );
    let gap = (omega - a).abs();
    if f.tau_test.p < TAU_TEST_LEVEL {
        let size = if gap < 0.01 {
            " — though here the two differ by less than 0.01, so the choice matters little"
        } else {
            ""
        };
        (
            Recommendation::Omega,
            format!(
                "the items are not tau-equivalent ({test}): their loadings differ, so alpha ({}) \
                 is a lower bound here; report omega ({}) and carry omega into a benchmark or a \
                 correction for measurement error (alpha would over-correct){size}",
                fx(a),
                fx(omega)
            )
            .into(),
        )
    } else {
        (
            Recommendation::Either,
            format!(
                "one factor fits and the test does not show unequal loadings ({test}); alpha ({}) \
                 and omega ({}) differ by {} here, so either may be carried into a benchmark or \
                 a correction (a test that does not reject is not proof of equal loadings: with \
                 few respondents, prefer omega)",
                fx(a),
                fx(omega),
                fx(gap)
            )
            .into(),
        )
    }
}
