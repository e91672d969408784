//! Influence diagnostics: each study left out in turn, externally studentized residuals
//! and Cook's distances, with outlying and influential studies flagged.

use crate::dist::{f_quantile, normal_quantile};
use crate::error::Result;
use crate::pool::{FitOptions, Interval, MetaData, ModelFit, fit_light};
use nalgebra::{DMatrix, DVector};
use rayon::prelude::*;

/// The model refitted without one study.
#[derive(Debug, Clone, PartialEq)]
pub struct LeaveOneOut {
    /// Coefficients (intercept first; for plain pooling, the pooled value).
    pub beta: Vec<f64>,
    /// CI of the first coefficient (the pooled value for plain pooling).
    pub ci: Interval,
    /// τ².
    pub tau2: f64,
    /// I² in percent.
    pub i2: f64,
}

/// Influence of one study.
#[derive(Debug, Clone, PartialEq)]
pub struct StudyInfluence {
    /// Index of the study in the fitted data.
    pub index: usize,
    /// Residual yᵢ − xᵢβ̂ of the full fit.
    pub residual: f64,
    /// The fit without this study (`None` when it cannot be fitted, e.g. the last study of
    /// a level).
    pub without: Option<LeaveOneOut>,
    /// Externally studentized residual.
    pub rstudent: Option<f64>,
    /// Cook's distance.
    pub cooks_distance: Option<f64>,
    /// |rstudent| above the two-sided 5% normal quantile (common practice, no source).
    pub outlier: bool,
    /// Cook's distance above the median of F(p, k − p) (Cook 1977).
    pub influential: bool,
}

impl StudyInfluence {
    /// A study's diagnostics, flagged as outlying when |rstudent| exceeds `z` and as
    /// influential when Cook's distance exceeds `cook_cut`.
    pub(crate) fn flagged(
        index: usize,
        residual: f64,
        (without, rstudent, cooks): (Option<LeaveOneOut>, Option<f64>, Option<f64>),
        (z, cook_cut): (f64, f64),
    ) -> StudyInfluence {
        StudyInfluence {
            index,
            residual,
            without,
            rstudent,
            cooks_distance: cooks,
            outlier: rstudent.is_some_and(|r| r.abs() > z),
            influential: cooks.is_some_and(|d| d > cook_cut),
        }
    }
}

/// Leave each study out in turn: the refits run in parallel (each deterministic, so the
/// result is the same on any machine), each with τ² estimated from the full model's τ²
/// (a warm start: the likelihood of k − 1 studies is near that of k), and `tick` is told
/// of every refit done.
///
/// rstudentᵢ = (yᵢ − xᵢβ̂₍₋ᵢ₎) / √(vᵢ + τ̂²₍₋ᵢ₎ + xᵢᵀ Var(β̂₍₋ᵢ₎) xᵢ);
/// Dᵢ = (β̂ − β̂₍₋ᵢ₎)ᵀ (XᵀŴX) (β̂ − β̂₍₋ᵢ₎) / p.
///
/// # References
/// Viechtbauer, W., & Cheung, M. W.-L. (2010). Outlier and influence diagnostics for
/// meta-analysis. *Research Synthesis Methods*, 1(2), 112–125.
/// Cook, R. D. (1977). Detection of influential observation in linear regression.
/// *Technometrics*, 19(1), 15–18.
pub fn influence(
    data: &MetaData,
    fit: &ModelFit,
    tick: &(dyn Fn(usize) + Sync),
) -> Result<Vec<StudyInfluence>> {
    let (k, p) = (data.k(), data.p());
    let opts = FitOptions {
        tau2_interval: false,
        ..fit.options
    };
    let xtwx: DMatrix<f64> = fit
        .cov_wald
        .clone()
        .try_inverse()
        .unwrap_or_else(|| DMatrix::from_element(p, p, f64::NAN));
    let z = normal_quantile(0.975);
    let cook_cut = if k > p {
        f_quantile(0.5, p as f64, (k - p) as f64)
    } else {
        f64::INFINITY
    };
    let one = |i: usize| {
        let keep: Vec<usize> = (0..k).filter(|&j| j != i).collect();
        let y: Vec<f64> = keep.iter().map(|&j| data.y()[j]).collect();
        let v: Vec<f64> = keep.iter().map(|&j| data.v()[j]).collect();
        let x = data.x().select_rows(&keep);
        let refit =
            MetaData::with_design(y, v, x).and_then(|d| fit_light(&d, &opts, Some(fit.tau2.tau2)));
        let (without, rstudent, cooks) = match refit {
            Ok(f) => {
                let xv = DVector::from_fn(p, |j, _| data.x()[(i, j)]);
                let pred = xv.dot(&f.beta);
                let var_pred = (xv.transpose() * &f.cov_wald * &xv)[(0, 0)];
                let denom = (data.v()[i] + f.tau2 + var_pred).sqrt();
                let rs = (data.y()[i] - pred) / denom;
                let diff = &fit.beta - &f.beta;
                let d = (diff.transpose() * &xtwx * &diff)[(0, 0)] / p as f64;
                let loo = LeaveOneOut {
                    beta: f.beta.iter().copied().collect(),
                    ci: f.first_ci,
                    tau2: f.tau2,
                    i2: f.i2,
                };
                (Some(loo), Some(rs), Some(d))
            }
            Err(_) => (None, None, None),
        };
        tick(1);
        StudyInfluence::flagged(
            i,
            fit.residuals[i],
            (without, rstudent, cooks),
            (z, cook_cut),
        )
    };
    Ok((0..k).into_par_iter().map(one).collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::pool::{CiMethod, Model, Tau2Estimator, fit_model};

    /// The warm-started light refits agree with full, cold refits by the general fitting
    /// function (its own starting values, every table), study by study, for each
    /// likelihood estimator and a moment estimator, on data whose studies disagree
    /// (Bonett-scale values of an invented spread; the check is internal consistency of
    /// two routes to one estimate, the estimate itself being checked against outside
    /// references in the pooling tests).
    #[test]
    fn warm_refits_match_cold_refits() {
        let y: Vec<f64> = (0..25)
            .map(|i| -1.6 + 0.05 * i as f64 + if i % 7 == 0 { 0.4 } else { 0.0 })
            .collect();
        let v: Vec<f64> = (0..25).map(|i| 0.004 + 0.002 * (i % 5) as f64).collect();
        let x = DMatrix::from_fn(25, 2, |i, j| if j == 0 { 1.0 } else { (i % 6) as f64 });
        let data = MetaData::with_design(y.clone(), v.clone(), x.clone()).unwrap();
        for est in [Tau2Estimator::Reml, Tau2Estimator::Ml, Tau2Estimator::Dl] {
            let opts = FitOptions {
                model: Model::Random(est),
                ci: CiMethod::KnappHartung,
                level: crate::Level::default(),
                tau2_interval: false,
                dependence: Default::default(),
            };
            let full = fit_model(&data, &opts).unwrap();
            let ticks = std::sync::atomic::AtomicUsize::new(0);
            let infl = influence(&data, &full, &|n| {
                ticks.fetch_add(n, std::sync::atomic::Ordering::Relaxed);
            })
            .unwrap();
            assert_eq!(ticks.into_inner(), 25);
            for (i, s) in infl.iter().enumerate() {
                let keep: Vec<usize> = (0..25).filter(|&j| j != i).collect();
                let d = MetaData::with_design(
                    keep.iter().map(|&j| y[j]).collect(),
                    keep.iter().map(|&j| v[j]).collect(),
                    x.select_rows(&keep),
                )
                .unwrap();
                let cold = fit_model(&d, &opts).unwrap();
                let w = s.without.as_ref().unwrap();
                assert!((w.tau2 - cold.tau2.tau2).abs() < 1e-9, "{est:?} study {i}");
                for (a, b) in w.beta.iter().zip(cold.beta.iter()) {
                    assert!((a - b).abs() < 1e-9, "{est:?} study {i}");
                }
                assert!((w.ci.lower - cold.coefficients[0].ci.lower).abs() < 1e-9);
                assert!((w.ci.upper - cold.coefficients[0].ci.upper).abs() < 1e-9);
                assert!((w.i2 - cold.i2).abs() < 1e-7);
            }
        }
    }
}
