//! The multilevel random-effects model for dependent coefficients:
//! y = Xβ + u(cluster) + w(row) + e, with u ~ N(0, τ²_cluster), w ~ N(0, τ²_within) and
//! the sampling errors e of rows from one sample correlated with an assumed sampling
//! correlation — the correlated-and-hierarchical-effects working model — fitted by REML
//! or ML cluster by cluster.
//!
//! # References
//! Pustejovsky, J. E., & Tipton, E. (2022). Meta-analysis with robust variance estimation:
//! Expanding the range of working models. *Prevention Science*, 23, 425–438.
//! Konstantopoulos, S. (2011). Fixed effects and variance components estimation in
//! three-level meta-analysis. *Research Synthesis Methods*, 2(1), 61–76.
//! Cheung, M. W.-L. (2014). Modeling dependent effect sizes with three-level
//! meta-analyses: A structural equation modeling approach. *Psychological Methods*, 19(2),
//! 211–229.

mod data;
mod profile;
mod robust;

pub use data::{Grouping, NestedData, row_covariance};
pub use profile::{ComponentInterval, LikelihoodRatio, cluster_test, component_intervals};
pub use robust::{HotellingTest, RobustCovariance, contrast_df, cr2, hotelling};

use super::tau2::{TAU2_FLOOR, TAU2_MAX_ITERATIONS, TAU2_TOLERANCE, Termination};
use crate::error::{Error, Result};
use data::{Evaluation, evaluate};
use nalgebra::{DMatrix, DVector};

/// The sampling correlation assumed between coefficients of one sample when the user
/// gives none (common practice, no source: a middling value, with the sensitivity to it
/// always shown).
pub const DEFAULT_SAMPLING_CORRELATION: f64 = 0.6;

/// The sampling correlations every multilevel result is also shown at.
pub const SENSITIVITY_CORRELATIONS: [f64; 4] = [0.0, 0.3, 0.6, 0.9];

/// Step halvings allowed when a scoring step lowers the likelihood.
const MAX_HALVINGS: usize = 60;

/// Options of a multilevel fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MultilevelOptions {
    /// REML (true) or ML.
    pub restricted: bool,
    /// Assumed correlation of the sampling errors of rows from one sample, in [0, 1).
    pub sampling_correlation: f64,
}

/// A fitted multilevel model, on the analysis scale.
#[derive(Debug, Clone, PartialEq)]
pub struct MultilevelFit {
    /// Rows.
    pub k: usize,
    /// Coefficients.
    pub p: usize,
    /// Clusters.
    pub clusters: usize,
    /// Samples.
    pub samples: usize,
    /// The options used.
    pub options: MultilevelOptions,
    /// Variance between clusters.
    pub tau2_cluster: f64,
    /// Variance between rows within a cluster.
    pub tau2_within: f64,
    /// False when no cluster has two rows: τ²_within cannot be told from τ²_cluster and
    /// is held at 0 (the model is then the two-level model).
    pub within_identified: bool,
    /// Coefficients.
    pub beta: DVector<f64>,
    /// Their model-based covariance, (XᵀV⁻¹X)⁻¹.
    pub cov: DMatrix<f64>,
    /// The maximized (restricted) log-likelihood, without its constant.
    pub log_lik: f64,
    /// r'S⁻¹r at τ² = 0 (S the sampling covariance): the heterogeneity statistic Q with
    /// k − p degrees of freedom (NaN in the crate's internal refits, which do not read it).
    pub q: f64,
    /// Scoring iterations.
    pub iterations: usize,
    /// Why the scoring stopped.
    pub termination: Termination,
    /// Each row's weight in percent, in input order: the row sums of V⁻¹ over their total —
    /// for plain pooling each row's share of the pooled value (negative shares can occur
    /// when sampling errors are correlated); with moderators a relative weight for figures
    /// (empty in the crate's internal refits).
    pub weights_percent: Vec<f64>,
}

impl MultilevelFit {
    /// True unless the scoring ran out of iterations.
    pub fn converged(&self) -> bool {
        self.termination != Termination::IterationLimit
    }
}

/// The maximum of the likelihood over the free components.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Maximum {
    pub theta: [f64; 2],
    pub score: [f64; 2],
    pub log_lik: f64,
    pub iterations: usize,
    pub termination: Termination,
}

/// Fit the model.
///
/// Fewer than two clusters is refused (τ²_cluster and the between-cluster inference need
/// at least two); with one row per cluster τ²_within is held at 0.
pub fn fit(d: &NestedData, options: &MultilevelOptions) -> Result<MultilevelFit> {
    fit_from(d, options, None)
}

/// [`fit`], the scoring started from `start` = (τ²_cluster, τ²_within) when given (a
/// nearby fit's values, such as the same data's at another sampling correlation).
pub fn fit_from(
    d: &NestedData,
    options: &MultilevelOptions,
    start: Option<[f64; 2]>,
) -> Result<MultilevelFit> {
    fit_with(d, options, start, true)
}

/// [`fit_from`] without Q and the weights (`q` is NaN, `weights_percent` empty): for the
/// refits of the sensitivity table and the leave-one-out diagnostics, which read only the
/// coefficients, their covariance and the variances (two passes over the data fewer).
pub(crate) fn refit_from(
    d: &NestedData,
    options: &MultilevelOptions,
    start: Option<[f64; 2]>,
) -> Result<MultilevelFit> {
    fit_with(d, options, start, false)
}

fn fit_with(
    d: &NestedData,
    options: &MultilevelOptions,
    start: Option<[f64; 2]>,
    detail: bool,
) -> Result<MultilevelFit> {
    check(d, options)?;
    let (scaled, s) = d.rescaled();
    let within_identified = d.largest_cluster() > 1;
    let fixed = [None, (!within_identified).then_some(0.0)];
    let start = match start {
        Some([c, w]) => [c / s, w / s],
        None => starting_values(&scaled),
    };
    let m = maximize(&scaled, options, start, fixed)?;
    let theta = [m.theta[0] * s, m.theta[1] * s];
    assemble(d, options, theta, (m.iterations, m.termination), detail)
}

/// The fit at θ = (τ²_cluster, τ²_within): coefficients, covariance, Q and weights.
fn assemble(
    d: &NestedData,
    options: &MultilevelOptions,
    theta: [f64; 2],
    (iterations, termination): (usize, Termination),
    detail: bool,
) -> Result<MultilevelFit> {
    let r = options.sampling_correlation;
    let e = evaluate(d, r, theta, options.restricted, false)?;
    let (q, weights) = if detail {
        (
            evaluate(d, r, [0.0, 0.0], options.restricted, false)?.quad,
            weights_percent(d, r, theta)?,
        )
    } else {
        (f64::NAN, Vec::new())
    };
    Ok(MultilevelFit {
        k: d.k(),
        p: d.p(),
        clusters: d.clusters(),
        samples: d.samples(),
        options: *options,
        tau2_cluster: theta[0],
        tau2_within: theta[1],
        within_identified: d.largest_cluster() > 1,
        weights_percent: weights,
        beta: e.beta,
        cov: e.cov,
        log_lik: e.log_lik,
        q,
        iterations,
        termination,
    })
}

/// The model with its variance components held at given values (no estimation): the
/// generalized least-squares fit at those values.
pub fn fit_with_components(
    d: &NestedData,
    options: &MultilevelOptions,
    tau2_cluster: f64,
    tau2_within: f64,
) -> Result<MultilevelFit> {
    check(d, options)?;
    let theta = [tau2_cluster.max(0.0), tau2_within.max(0.0)];
    assemble(d, options, theta, (0, Termination::ClosedForm), true)
}

/// The prediction of x₀β + u_j for a known cluster j (its index in the grouping): the
/// centre x₀β̂ + û_j with û_j = τ²_c·1ᵀV_j⁻¹(y_j − X_jβ̂) (the best linear unbiased predictor)
/// and its prediction-error variance
/// x₀ᵀMx₀ + τ²_c − τ²_c²·1ᵀV_j⁻¹1 + τ²_c²·bᵀMb − 2τ²_c·x₀ᵀMb, b = X_jᵀV_j⁻¹1, M = (XᵀV⁻¹X)⁻¹
/// (model-based). A new sample of the cluster adds τ²_within. `cluster` is the cluster's
/// number in the [`Grouping`] (clusters are numbered 0, 1, … without gaps, and the data's
/// blocks are in that order).
///
/// # References
/// Henderson, C. R. (1975). Best linear unbiased estimation and prediction under a
/// selection model. *Biometrics*, 31(2), 423–447.
pub fn in_cluster(
    d: &NestedData,
    fit: &MultilevelFit,
    cluster: usize,
    x0: &[f64],
) -> Result<(f64, f64)> {
    let b = d
        .blocks
        .get(cluster)
        .ok_or_else(|| Error::cannot("no such cluster in the model"))?;
    let r = fit.options.sampling_correlation;
    let tc = fit.tau2_cluster;
    let (w, _) = data::inverse_and_log_det(d.marginal_cov(b, r, [tc, fit.tau2_within]))?;
    let x = d.x_of(b);
    let resid = d.y_of(b) - &x * &fit.beta;
    let u = w.column_sum();
    let x0 = DVector::from_column_slice(x0);
    let m = &fit.cov;
    let bvec = x.transpose() * &u;
    let centre = x0.dot(&fit.beta) + tc * u.dot(&resid);
    let pev = (x0.transpose() * m * &x0)[(0, 0)] + tc - tc * tc * u.sum()
        + tc * tc * (bvec.transpose() * m * &bvec)[(0, 0)]
        - 2.0 * tc * (x0.transpose() * m * &bvec)[(0, 0)];
    Ok((centre, pev.max(0.0)))
}

fn check(d: &NestedData, options: &MultilevelOptions) -> Result<()> {
    let r = options.sampling_correlation;
    if !(0.0..1.0).contains(&r) {
        return Err(Error::cannot(format!(
            "the sampling correlation must be at least 0 and below 1 (got {r})"
        )));
    }
    if d.clusters() < 2 {
        return Err(Error::cannot(crate::setting::msg![
            "every row is in one cluster: a multilevel model needs at least two clusters to \
             tell the variance between clusters from the pooled value; pool the rows as \
             composites of their samples (",
            crate::setting::given(crate::setting::Setting::Dependence, "aggregate"),
            ") or as independent (",
            crate::setting::given(crate::setting::Setting::Dependence, "ignore"),
            ", intervals too narrow)"
        ]));
    }
    if d.clusters() <= d.p() {
        return Err(Error::cannot(format!(
            "{} cannot support a model with {}: at least {} clusters are needed",
            crate::format::count(d.clusters() as u64, "cluster", "clusters"),
            crate::format::count(d.p() as u64, "coefficient", "coefficients"),
            d.p() + 1
        )));
    }
    let largest = d.largest_cluster();
    if largest > crate::limits::MAX_CLUSTER_ROWS {
        return Err(Error::cannot(format!(
            "a cluster holds {largest} rows; a multilevel fit takes at most {} rows per \
             cluster (its cost grows with the cube of a cluster's rows)",
            crate::limits::MAX_CLUSTER_ROWS
        )));
    }
    Ok(())
}

/// Half the spread of the effects beyond their sampling variance at each level (on the
/// rescaled data), or a small share of the typical sampling variance.
fn starting_values(d: &NestedData) -> [f64; 2] {
    let k = d.k() as f64;
    let mean = d.y.iter().sum::<f64>() / k;
    let var = d.y.iter().map(|y| (y - mean).powi(2)).sum::<f64>() / (k - 1.0).max(1.0);
    let mean_v = d.v.iter().sum::<f64>() / k;
    let total = (var - mean_v).max(0.1);
    [total / 2.0, total / 2.0]
}

/// Projected Fisher scoring over the components not held fixed, with step halving; a
/// component on its boundary 0 whose score points below it stays there.
pub(crate) fn maximize(
    d: &NestedData,
    options: &MultilevelOptions,
    start: [f64; 2],
    fixed: [Option<f64>; 2],
) -> Result<Maximum> {
    maximize_to(d, options, start, fixed, TAU2_TOLERANCE)
}

/// [`maximize`] to a relative tolerance of its own (the points of a profile need less:
/// an error δ in the maximized-out component changes the profile by O(δ²)).
pub(crate) fn maximize_to(
    d: &NestedData,
    options: &MultilevelOptions,
    start: [f64; 2],
    fixed: [Option<f64>; 2],
    tolerance: f64,
) -> Result<Maximum> {
    let (r, restricted) = (options.sampling_correlation, options.restricted);
    let mut theta = [0, 1].map(|i| fixed[i].unwrap_or(start[i].max(0.0)));
    let mut current = evaluate(d, r, theta, restricted, true)?;
    // The last point and score of a one-component search, for its secant step.
    let mut previous: Option<(usize, f64, f64)> = None;
    for it in 1..=TAU2_MAX_ITERATIONS {
        let free: Vec<usize> = (0..2)
            .filter(|&i| fixed[i].is_none() && !(theta[i] <= 0.0 && current.score[i] <= 0.0))
            .collect();
        if free.is_empty() {
            return Ok(done(theta, &current, it - 1, Termination::Converged));
        }
        let mut step = scoring_step(&current, &free);
        if let ([i], Some((j, t0, s0))) = (free.as_slice(), previous)
            && *i == j
        {
            step[*i] = secant_step(theta[*i], current.score[*i], (t0, s0)).unwrap_or(step[*i]);
        }
        previous = match free.as_slice() {
            [i] => Some((*i, theta[*i], current.score[*i])),
            _ => None,
        };
        // Converged when the whole (projected) scoring step is within the tolerance: a
        // step that had to be halved says nothing about being near the maximum.
        let full = [0, 1].map(|i| (theta[i] + step[i]).max(0.0));
        let small = (0..2).all(|i| {
            (full[i] - theta[i]).abs() <= tolerance * full[i].max(theta[i]).max(TAU2_FLOOR)
        });
        // A step within the tolerance is not taken: the point is already as close to the
        // maximum as asked (and its likelihood differs from the maximum's by the square).
        if small {
            return Ok(done(theta, &current, it - 1, Termination::Converged));
        }
        let Some((next, eval)) = halve_until_better(d, options, theta, step, &current)? else {
            return Ok(done(theta, &current, it, Termination::Stalled));
        };
        theta = next;
        current = eval;
    }
    Ok(done(
        theta,
        &current,
        TAU2_MAX_ITERATIONS,
        Termination::IterationLimit,
    ))
}

/// The step to the root of the score along the secant through the last two points of a
/// one-component search: where the expected information misjudges the curvature (a model
/// far from the data, as when τ²_cluster is held at 0), scoring converges only linearly and
/// the secant superlinearly. `None` unless the secant falls (the likelihood is concave
/// there).
fn secant_step(t: f64, score: f64, (t0, s0): (f64, f64)) -> Option<f64> {
    let slope = (score - s0) / (t - t0);
    (slope < 0.0 && slope.is_finite()).then(|| -score / slope)
}

fn done(theta: [f64; 2], e: &Evaluation, iterations: usize, termination: Termination) -> Maximum {
    Maximum {
        theta,
        score: e.score,
        log_lik: e.log_lik,
        iterations,
        termination,
    }
}

/// The scoring step I⁻¹s over the free components (zero for the others); a nearly
/// singular information is solved component by component.
fn scoring_step(e: &Evaluation, free: &[usize]) -> [f64; 2] {
    let mut step = [0.0; 2];
    if let [i] = free {
        step[*i] = e.score[*i] / e.info[*i][*i];
        return step;
    }
    let [[a, b], [c, dd]] = e.info;
    let det = a * dd - b * c;
    if det > 1e-10 * a * dd {
        step[0] = (dd * e.score[0] - b * e.score[1]) / det;
        step[1] = (a * e.score[1] - c * e.score[0]) / det;
    } else {
        step[0] = e.score[0] / a;
        step[1] = e.score[1] / dd;
    }
    step
}

/// Take the step (projected onto θ ≥ 0), halving it while the likelihood falls; `None`
/// when no fraction of it raised the likelihood.
fn halve_until_better(
    d: &NestedData,
    options: &MultilevelOptions,
    theta: [f64; 2],
    step: [f64; 2],
    current: &Evaluation,
) -> Result<Option<([f64; 2], Evaluation)>> {
    let (r, restricted) = (options.sampling_correlation, options.restricted);
    let mut t = 1.0;
    for _ in 0..MAX_HALVINGS {
        let next = [0, 1].map(|i| (theta[i] + t * step[i]).max(0.0));
        let eval = evaluate(d, r, next, restricted, true)?;
        if eval.log_lik >= current.log_lik - 1e-12 * current.log_lik.abs().max(1.0) {
            return Ok(Some((next, eval)));
        }
        t /= 2.0;
    }
    Ok(None)
}

/// Each row's share of the first coefficient's estimate in percent: the row sums of V⁻¹
/// over their total (plain pooling), in input order.
fn weights_percent(d: &NestedData, r: f64, theta: [f64; 2]) -> Result<Vec<f64>> {
    let permuted = data::row_weights(d, r, theta)?;
    let total: f64 = permuted.iter().sum();
    let mut out = vec![0.0; d.k()];
    for (i, &row) in d.order.iter().enumerate() {
        out[row] = 100.0 * permuted[i] / total;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::pool::{MetaData, Tau2Estimator};

    /// One row per cluster: the multilevel fit is the two-level random-effects model —
    /// τ²_cluster is the usual REML (and ML) τ², τ²_within is held at 0, and the pooled
    /// value and its model-based variance 1/Σw agree.
    #[test]
    fn one_row_per_cluster_is_the_two_level_model() {
        let y = [
            -1.71, -1.51, -2.12, -1.35, -1.66, -1.17, -1.90, -2.30, -1.47,
        ];
        let v = [
            0.0087, 0.0122, 0.0056, 0.0194, 0.0077, 0.0246, 0.0044, 0.0036, 0.0154,
        ];
        let k = y.len();
        let x = DMatrix::from_element(k, 1, 1.0);
        let d = NestedData::new(&y, &v, &x, &Grouping::independent(k)).unwrap();
        for (restricted, est) in [(true, Tau2Estimator::Reml), (false, Tau2Estimator::Ml)] {
            let f = fit(
                &d,
                &MultilevelOptions {
                    restricted,
                    sampling_correlation: 0.6,
                },
            )
            .unwrap();
            let two = est
                .estimate(&MetaData::intercept_only(y.to_vec(), v.to_vec()).unwrap())
                .unwrap();
            assert!(!f.within_identified && f.tau2_within == 0.0);
            assert!(
                (f.tau2_cluster - two.tau2).abs() < 1e-9 * two.tau2,
                "{restricted}: {} vs {}",
                f.tau2_cluster,
                two.tau2
            );
            let w: Vec<f64> = v.iter().map(|vi| 1.0 / (vi + two.tau2)).collect();
            let sw: f64 = w.iter().sum();
            let mean = w.iter().zip(&y).map(|(w, y)| w * y).sum::<f64>() / sw;
            assert!((f.beta[0] - mean).abs() < 1e-9);
            assert!((f.cov[(0, 0)] - 1.0 / sw).abs() < 1e-9 / sw);
        }
    }
}
