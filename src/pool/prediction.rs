//! Prediction intervals: the one place that turns a fitted model into the range a new
//! setting (or a new study's observed coefficient) should expect.
//!
//! On the analysis scale the true value in a new setting with design row x₀ is predicted
//! as μ̂(x₀) + t(df)·√(τ̂² + SE²(x₀)), with df = k − p − 1; for the coefficient a new
//! study of its own size will observe, its sampling variance v_new is added under the
//! root. Every part of relyard that states an expected range (the benchmark, the
//! placement of a new study, a benchmark used as a reliability in a correction, the bands
//! of the figures) takes it from here.
//!
//! # References
//! Higgins, J. P. T., Thompson, S. G., & Spiegelhalter, D. J. (2009). A re-evaluation of
//! random-effects meta-analysis. *Journal of the Royal Statistical Society, Series A*,
//! 172(1), 137–159.

use super::{Interval, Model, ModelFit};
use crate::dist::{t_quantile, t_sf};
use crate::level::Level;

/// Degrees of freedom of a prediction interval's t quantile: k − p − 1 for k studies and p
/// coefficients (k − 2 for plain pooling); `None` when fewer than 1 remain.
///
/// One degree of freedom more is spent than by the coefficients' own t quantile (k − p)
/// because τ² is estimated too (Higgins, Thompson & Spiegelhalter 2009, section 3.4).
pub fn prediction_df(k: usize, p: usize) -> Option<f64> {
    (k >= p + 2).then(|| (k - p - 1) as f64)
}

/// A predictive distribution on the analysis scale: centre + scale · t(df).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Predictive {
    /// Its centre, the model's fitted value μ̂(x₀).
    pub centre: f64,
    /// Its scale, √(τ² + SE² [+ v_new]).
    pub scale: f64,
    /// Degrees of freedom of the t distribution.
    pub df: f64,
}

impl Predictive {
    /// The true value in a new setting at design row `x0`, from a random-effects fit;
    /// `None` under the common-effect model (which states no range for a new setting) or
    /// when no degrees of freedom remain.
    pub fn new_setting(fit: &ModelFit, x0: &[f64]) -> Option<Predictive> {
        Self::with_tau2(fit, x0, fit.tau2.tau2)
    }

    /// As [`Predictive::new_setting`] with another value of τ² (the upper end of its
    /// interval, say).
    pub fn with_tau2(fit: &ModelFit, x0: &[f64], tau2: f64) -> Option<Predictive> {
        if !matches!(fit.options.model, Model::Random(_)) {
            return None;
        }
        let df = prediction_df(fit.units, fit.p)?;
        let (centre, var) = fit.predict(x0);
        Some(Predictive {
            centre,
            scale: (tau2 + var).sqrt(),
            df,
        })
    }

    /// The value a new study observes, with its own sampling variance `v_new` added.
    pub fn observed(self, v_new: f64) -> Predictive {
        Predictive {
            scale: (self.scale * self.scale + v_new).sqrt(),
            ..self
        }
    }

    /// The central interval at `level`.
    pub fn interval(self, level: Level) -> Interval {
        Interval::around(self.centre, t_quantile(level.upper(), self.df) * self.scale)
    }

    /// P(value ≤ x).
    pub fn cdf(self, x: f64) -> f64 {
        1.0 - t_sf((x - self.centre) / self.scale, self.df)
    }

    /// The density at x.
    pub fn density(self, x: f64) -> f64 {
        use statrs::distribution::{Continuous, StudentsT};
        match StudentsT::new(0.0, 1.0, self.df) {
            Ok(t) => t.pdf((x - self.centre) / self.scale) / self.scale,
            Err(_) => f64::NAN,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The interval is the t quantile times the scale either side (scipy:
    /// `scipy.stats.t.ppf(0.975, 10)` = 2.2281388519649385), and the CDF at its ends is
    /// the tail probability.
    #[test]
    fn interval_and_cdf_agree() {
        let p = Predictive {
            centre: -1.5,
            scale: 0.2,
            df: 10.0,
        };
        let i = p.interval(Level::NINETY_FIVE);
        // Quantiles agree with scipy to 1e-10 relative (the suite's quantile tolerance).
        let t = 2.2281388519649385;
        assert!((i.upper - (-1.5 + 0.2 * t)).abs() < 1e-10 * t, "{i:?}");
        assert!((p.cdf(i.lower) - 0.025).abs() < 1e-10);
        assert!((p.cdf(i.upper) - 0.975).abs() < 1e-10);
        let wider = p.observed(0.03);
        assert!((wider.scale - (0.04f64 + 0.03).sqrt()).abs() < 1e-15);
        assert_eq!(prediction_df(3, 1), Some(1.0));
        assert_eq!(prediction_df(2, 1), None);
        assert_eq!(prediction_df(10, 3), Some(6.0));
    }
}
