//! Permutation tests for meta-regression: the moderators are shuffled across studies
//! (each study keeping its effect and variance) — across clusters beside a multilevel fit —
//! the model refitted, and the observed statistics compared with their permutation
//! distribution.

use super::{Explanation, wald_statistic};
use crate::benchmark::Prepared;
use crate::error::{Error, Result};
use crate::pool::fit_coefficients;
use crate::pool::{FitOptions, MetaData};
use crate::random::stream;
use crate::setting::Setting;
use crate::setting::msg;
use rand::seq::SliceRandom;
use rayon::prelude::*;

/// Permutations handled between two progress reports.
const CHUNK: usize = 64;

/// What a permutation test found.
#[derive(Debug, Clone, PartialEq)]
pub struct PermutationResult {
    /// Permutations requested.
    pub permutations: usize,
    /// The seed.
    pub seed: u64,
    /// Permutations whose refit failed (left out of the p values).
    pub failed: usize,
    /// p value of the omnibus test.
    pub omnibus_p: Option<f64>,
    /// p value of each coefficient (`None` for the intercept, which permutation does not test).
    pub coefficient_p: Vec<Option<f64>>,
}

#[derive(Default, Clone)]
struct Tally {
    done: usize,
    failed: usize,
    omnibus: usize,
    coefficients: Vec<usize>,
}

impl Tally {
    fn merge(mut self, other: Tally) -> Tally {
        self.done += other.done;
        self.failed += other.failed;
        self.omnibus += other.omnibus;
        if self.coefficients.is_empty() {
            self.coefficients = other.coefficients;
        } else {
            for (a, b) in self.coefficients.iter_mut().zip(other.coefficients) {
                *a += b;
            }
        }
        self
    }
}

/// Run `permutations` permutations with `seed`, in parallel; `progress` is called with the
/// number of permutations finished since its last call.
///
/// p values are (b + 1)/(N + 1), with b the permutations whose statistic is at least as
/// extreme as the observed one and N those that could be fitted.
///
/// # References
/// Higgins, J. P. T., & Thompson, S. G. (2004). Controlling the risk of spurious findings
/// from meta-regression. *Statistics in Medicine*, 23(11), 1663–1682.
/// Phipson, B., & Smyth, G. K. (2010). Permutation p-values should never be zero.
/// *Statistical Applications in Genetics and Molecular Biology*, 9(1), Article 39.
pub fn permutation_test(
    p: &Prepared,
    ex: &Explanation,
    permutations: usize,
    seed: u64,
    progress: &(dyn Fn(usize) + Sync),
    stop: &(dyn Fn() -> bool + Sync),
) -> Result<PermutationResult> {
    let columns = ex.moderator_columns();
    check_request(permutations, &columns)?;
    let data = ex.data(p)?;
    let obs_omnibus = ex.omnibus.map(|o| o.statistic).unwrap_or(f64::NAN);
    let obs_coef: Vec<f64> = columns
        .iter()
        .map(|&j| ex.fit.coefficients[j].statistic.abs())
        .collect();
    let refits = Refits {
        data: &data,
        columns: &columns,
        opts: FitOptions {
            tau2_interval: false,
            ..ex.fit.options
        },
        obs_omnibus,
        // The omnibus statistic is F = Q/m under Knapp–Hartung and Q under Wald.
        omnibus_divisor: if ex.fit.df.is_some() {
            columns.len() as f64
        } else {
            1.0
        },
        obs_coef: &obs_coef,
        seed,
    };

    let n_chunks = permutations.div_ceil(CHUNK);
    let tally = (0..n_chunks)
        .into_par_iter()
        .map(|c| {
            // Asked to stop: the chunks not yet begun are passed over.
            if stop() {
                return Tally::default();
            }
            let start = c * CHUNK;
            let end = (start + CHUNK).min(permutations);
            let t = refits.run(start, end);
            progress(end - start);
            t
        })
        .reduce(Tally::default, Tally::merge);
    let observed = Observed {
        omnibus: obs_omnibus,
        each: &obs_coef,
        columns: &columns,
        p: ex.fit.p,
    };
    observed.p_values(tally, (permutations, seed), stop())
}

/// The observed statistics a permutation test compares with.
struct Observed<'a> {
    omnibus: f64,
    each: &'a [f64],
    columns: &'a [usize],
    /// Coefficients in the model (the intercept's p stays empty).
    p: usize,
}

impl Observed<'_> {
    /// The p values (count + 1)/(done + 1) of the permutations tallied; an error when the
    /// test was stopped or no permuted data set could be fitted.
    fn p_values(
        &self,
        tally: Tally,
        (permutations, seed): (usize, u64),
        stopped: bool,
    ) -> Result<PermutationResult> {
        if stopped {
            return Err(Error::CannotAnalyse(
                "the permutation test was stopped before it finished"
                    .to_string()
                    .into(),
            ));
        }
        if tally.done == 0 {
            return Err(Error::Numerical(
                "no permuted data set could be fitted, so there is no permutation test".into(),
            ));
        }
        let p_of = |count: usize| (count as f64 + 1.0) / (tally.done as f64 + 1.0);
        let mut coefficient_p = vec![None; self.p];
        for (slot, &j) in self.columns.iter().enumerate() {
            if self.each[slot].is_finite() {
                coefficient_p[j] = Some(p_of(tally.coefficients[slot]));
            }
        }
        Ok(PermutationResult {
            permutations,
            seed,
            failed: tally.failed,
            // Without an observed omnibus statistic there is nothing to compare.
            omnibus_p: self.omnibus.is_finite().then(|| p_of(tally.omnibus)),
            coefficient_p,
        })
    }
}

/// Refuse no permutations at all, or a model without moderators to permute.
fn check_request(permutations: usize, columns: &[usize]) -> Result<()> {
    if permutations == 0 {
        return Err(Error::setting(
            Setting::Permutations,
            msg![Setting::Permutations, " must be at least 1"],
        ));
    }
    if columns.is_empty() {
        return Err(Error::setting(
            Setting::Permutations,
            msg![
                "a permutation test needs at least one moderator (",
                Setting::Moderators,
                ")"
            ],
        ));
    }
    Ok(())
}

/// The refits of permuted data and the observed statistics they are compared with.
struct Refits<'a> {
    data: &'a MetaData,
    /// The moderators' design columns, which are permuted.
    columns: &'a [usize],
    opts: FitOptions,
    obs_omnibus: f64,
    /// What the Wald statistic is divided by to give the omnibus statistic.
    omnibus_divisor: f64,
    /// The observed |statistic| of each moderator column.
    obs_coef: &'a [f64],
    seed: u64,
}

impl Refits<'_> {
    /// Refit permutations `start..end` and count the statistics at least as extreme as
    /// the observed ones.
    fn run(&self, start: usize, end: usize) -> Tally {
        let (data, columns) = (self.data, self.columns);
        let k = data.k();
        let mut t = Tally {
            coefficients: vec![0; columns.len()],
            ..Tally::default()
        };
        let mut order: Vec<usize> = (0..k).collect();
        for b in start..end {
            let mut rng = stream(self.seed, b as u64);
            order.iter_mut().enumerate().for_each(|(i, o)| *o = i);
            order.shuffle(&mut rng);
            let mut x = data.x().clone();
            for (i, &src) in order.iter().enumerate() {
                for &j in columns {
                    x[(i, j)] = data.x()[(src, j)];
                }
            }
            let refit = MetaData::with_design(data.y().to_vec(), data.v().to_vec(), x)
                .and_then(|d| fit_coefficients(&d, &self.opts));
            match refit {
                Ok((beta, cov)) => {
                    t.done += 1;
                    let o = wald_statistic(&beta, &cov, columns) / self.omnibus_divisor;
                    if at_least(o, self.obs_omnibus) {
                        t.omnibus += 1;
                    }
                    for (slot, (&j, &obs)) in columns.iter().zip(self.obs_coef).enumerate() {
                        let z = beta[j] / cov[(j, j)].max(0.0).sqrt();
                        if at_least(z.abs(), obs) {
                            t.coefficients[slot] += 1;
                        }
                    }
                }
                Err(_) => t.failed += 1,
            }
        }
        t
    }
}

/// Whether a permuted statistic is at least as extreme as the observed one (with a
/// little room for rounding).
fn at_least(stat: f64, obs: f64) -> bool {
    stat >= obs - 1e-12 * obs.abs()
}

/// The statistics a permutation of a multilevel meta-regression is judged by, under the
/// inference in force: each moderator coefficient's |β̂/SE| and the Wald statistic of all
/// of them, with the cluster-robust (CR2) covariance or the model's.
fn dependent_statistics(
    d: &crate::pool::multilevel::NestedData,
    fit: &crate::pool::multilevel::MultilevelFit,
    inference: crate::pool::dependence::Inference,
    columns: &[usize],
) -> Result<(f64, Vec<f64>)> {
    let cov = match inference {
        crate::pool::dependence::Inference::Robust => crate::pool::multilevel::cr2(d, fit)?.cov,
        crate::pool::dependence::Inference::Model => fit.cov.clone(),
    };
    let wald = wald_statistic(&fit.beta, &cov, columns);
    let each = columns
        .iter()
        .map(|&j| (fit.beta[j] / cov[(j, j)].max(0.0).sqrt()).abs())
        .collect();
    Ok((wald, each))
}

/// The permutation test of a multilevel meta-regression: whole clusters' moderator values
/// permuted among the clusters (each cluster's rows keep their effects, variances, samples
/// and their cluster, and take another cluster's moderators), the model refitted for each
/// permutation, and each statistic of [`dependent_statistics`] compared with the observed
/// one. Under the null hypothesis of no moderator effect the clusters — the independent
/// units — are exchangeable, as the studies are in the two-level test; so every moderator
/// must take one value per cluster (a moderator that varies within a cluster cannot be
/// permuted this way, and the test is refused, saying so). P values (count + 1)/(done + 1).
///
/// # References
/// Higgins, J. P. T., & Thompson, S. G. (2004). Controlling the risk of spurious findings
/// from meta-regression. *Statistics in Medicine*, 23(11), 1663–1682 (the permutation test
/// of a meta-regression, here with clusters as the units permuted).
pub fn permutation_test_dependent(
    p: &Prepared,
    ex: &Explanation,
    permutations: usize,
    seed: u64,
    progress: &(dyn Fn(usize) + Sync),
    stop: &(dyn Fn() -> bool + Sync),
) -> Result<PermutationResult> {
    use crate::pool::multilevel::{NestedData, refit_from};
    let columns = ex.moderator_columns();
    check_request(permutations, &columns)?;
    let dep = ex.dependent.as_ref().ok_or_else(|| {
        Error::Numerical("the permutation test of dependent rows needs the multilevel fit".into())
    })?;
    let s = &dep.summary;
    let (y, v) = ex.design.effects(&p.y, &p.v);
    let x = &ex.design.x;
    let grouping = p.grouping_of(&ex.design.used).ok_or_else(|| {
        Error::Numerical("the permutation test of dependent rows needs the grouping".into())
    })?;
    if let Some(why) = varies_within_clusters(p, ex, &grouping) {
        return Err(Error::cannot(why));
    }
    // Each cluster's first row holds its moderator values.
    let clusters = grouping.clusters();
    let mut first: Vec<Option<usize>> = vec![None; clusters];
    for (i, &c) in grouping.cluster.iter().enumerate() {
        first[c].get_or_insert(i);
    }
    let first: Vec<usize> = first.into_iter().flatten().collect();
    let options = s.fit.options;
    let start = Some([s.fit.tau2_cluster, s.fit.tau2_within]);
    let (obs_omnibus, obs_coef) = dependent_statistics(&s.data, &s.fit, s.inference, &columns)?;
    let n_chunks = permutations.div_ceil(CHUNK);
    let tally = (0..n_chunks)
        .into_par_iter()
        .map(|chunk| {
            let mut t = Tally {
                coefficients: vec![0; columns.len()],
                ..Tally::default()
            };
            if stop() {
                return t;
            }
            let (from, to) = (chunk * CHUNK, ((chunk + 1) * CHUNK).min(permutations));
            let mut order: Vec<usize> = (0..clusters).collect();
            for b in from..to {
                let mut rng = stream(seed, b as u64);
                order.iter_mut().enumerate().for_each(|(i, o)| *o = i);
                order.shuffle(&mut rng);
                let mut xb = x.clone();
                for (i, &c) in grouping.cluster.iter().enumerate() {
                    let src = first[order[c]];
                    for &j in &columns {
                        xb[(i, j)] = x[(src, j)];
                    }
                }
                let refit = NestedData::new(&y, &v, &xb, &grouping).and_then(|d| {
                    let f = refit_from(&d, &options, start)?;
                    dependent_statistics(&d, &f, s.inference, &columns)
                });
                match refit {
                    Ok((omnibus, each)) if omnibus.is_finite() => {
                        t.done += 1;
                        if at_least(omnibus, obs_omnibus) {
                            t.omnibus += 1;
                        }
                        for (slot, (z, obs)) in each.iter().zip(&obs_coef).enumerate() {
                            if at_least(*z, *obs) {
                                t.coefficients[slot] += 1;
                            }
                        }
                    }
                    _ => t.failed += 1,
                }
            }
            progress(to - from);
            t
        })
        .reduce(Tally::default, Tally::merge);
    let observed = Observed {
        omnibus: obs_omnibus,
        each: &obs_coef,
        columns: &columns,
        p: ex.fit.p,
    };
    observed.p_values(tally, (permutations, seed), stop())
}

/// Why whole clusters cannot be permuted for this model: a moderator that varies within a
/// cluster (named, with two rows of the sheet that differ); `None` when each moderator takes
/// one value per cluster.
fn varies_within_clusters(
    p: &Prepared,
    ex: &Explanation,
    grouping: &crate::pool::multilevel::Grouping,
) -> Option<String> {
    let x = &ex.design.x;
    let columns = ex.moderator_columns();
    let mut first: Vec<Option<usize>> = vec![None; grouping.clusters()];
    for (i, &c) in grouping.cluster.iter().enumerate() {
        let f = *first[c].get_or_insert(i);
        if let Some(&j) = columns.iter().find(|&&j| x[(i, j)] != x[(f, j)]) {
            return Some(format!(
                "the permutation test of dependent rows permutes whole clusters, so each \
                 moderator must take one value per cluster; {} varies within a cluster (rows {} \
                 and {} of the sheet)",
                ex.design.names[j],
                p.records[ex.design.used[f]].row,
                p.records[ex.design.used[i]].row
            ));
        }
    }
    None
}

/// Why the permutation test of a multilevel model cannot be run, if it cannot (see
/// [`permutation_test_dependent`]).
pub fn dependent_permutation_refused(p: &Prepared, ex: &Explanation) -> Option<String> {
    let grouping = p.grouping_of(&ex.design.used)?;
    varies_within_clusters(p, ex, &grouping)
}
