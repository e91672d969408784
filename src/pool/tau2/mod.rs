//! Estimators of the between-study variance τ², one file each.

mod dl;
mod he;
mod likelihood;
mod ml;
mod pm;
pub(crate) use pm::{bracket_decreasing, root_of_q};
mod reml;
mod sj;

use super::data::MetaData;
use crate::error::Result;
use serde::Serialize;
use std::fmt;
use std::str::FromStr;

/// Convergence tolerance of the iterative estimators: on data rescaled by the median
/// sampling variance, they stop when τ² changes by less than this times
/// max(τ², [`TAU2_FLOOR`]), i.e. to 1e-10 relative unless τ² is tiny.
pub const TAU2_TOLERANCE: f64 = 1e-10;

/// Below this (in units of the median sampling variance) τ² is resolved absolutely, to
/// TAU2_TOLERANCE × TAU2_FLOOR = 1e-14.
pub const TAU2_FLOOR: f64 = 1e-4;

/// Iteration limit of the iterative estimators.
pub const TAU2_MAX_ITERATIONS: usize = 1000;

/// An estimator of the between-study variance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Tau2Estimator {
    /// Restricted maximum likelihood.
    Reml,
    /// Maximum likelihood.
    Ml,
    /// DerSimonian–Laird method of moments.
    Dl,
    /// Paule–Mandel (generalized Q equal to its expectation).
    Pm,
    /// Sidik–Jonkman.
    Sj,
    /// Hedges' unweighted method of moments.
    He,
}

impl Tau2Estimator {
    /// Every estimator.
    pub const ALL: [Tau2Estimator; 6] = [
        Tau2Estimator::Reml,
        Tau2Estimator::Ml,
        Tau2Estimator::Dl,
        Tau2Estimator::Pm,
        Tau2Estimator::Sj,
        Tau2Estimator::He,
    ];

    /// Command-line and JSON name.
    pub fn name(self) -> &'static str {
        match self {
            Tau2Estimator::Reml => "reml",
            Tau2Estimator::Ml => "ml",
            Tau2Estimator::Dl => "dl",
            Tau2Estimator::Pm => "pm",
            Tau2Estimator::Sj => "sj",
            Tau2Estimator::He => "he",
        }
    }

    /// Full name for reports.
    pub fn label(self) -> &'static str {
        match self {
            Tau2Estimator::Reml => "restricted maximum likelihood",
            Tau2Estimator::Ml => "maximum likelihood",
            Tau2Estimator::Dl => "the DerSimonian–Laird method",
            Tau2Estimator::Pm => "the Paule–Mandel method",
            Tau2Estimator::Sj => "the Sidik–Jonkman method",
            Tau2Estimator::He => "Hedges' unweighted method of moments",
        }
    }

    /// Abbreviation for reports.
    pub fn abbreviation(self) -> &'static str {
        match self {
            Tau2Estimator::Reml => "REML",
            Tau2Estimator::Ml => "ML",
            Tau2Estimator::Dl => "DL",
            Tau2Estimator::Pm => "PM",
            Tau2Estimator::Sj => "SJ",
            Tau2Estimator::He => "HE",
        }
    }

    /// A short citation for reports.
    pub fn citation(self) -> &'static str {
        match self {
            Tau2Estimator::Reml | Tau2Estimator::Ml => "Viechtbauer, 2005",
            Tau2Estimator::Dl => "DerSimonian & Laird, 1986",
            Tau2Estimator::Pm => "Paule & Mandel, 1982",
            Tau2Estimator::Sj => "Sidik & Jonkman, 2005",
            Tau2Estimator::He => "Hedges & Olkin, 1985",
        }
    }

    /// Estimate τ² from the data. The estimators work on data rescaled by the median
    /// sampling variance, so that their tolerances are relative to it.
    pub fn estimate(self, d: &MetaData) -> Result<Tau2Fit> {
        let (scaled, s) = d.rescaled();
        let d = &scaled;
        let mut fit = match self {
            Tau2Estimator::Reml => reml::estimate(d),
            Tau2Estimator::Ml => ml::estimate(d),
            Tau2Estimator::Dl => dl::estimate(d),
            Tau2Estimator::Pm => pm::estimate(d),
            Tau2Estimator::Sj => sj::estimate(d),
            Tau2Estimator::He => he::estimate(d),
        }?;
        fit.tau2 *= s;
        Ok(fit)
    }

    /// The estimate with the likelihood's maximization started at `start` alone (a nearby
    /// model's τ², such as the full model's for a leave-one-out refit) instead of the
    /// usual starting values; the estimators that do not maximize a likelihood are
    /// computed as always.
    pub fn estimate_from(self, d: &MetaData, start: f64) -> Result<Tau2Fit> {
        let restricted = match self {
            Tau2Estimator::Reml => true,
            Tau2Estimator::Ml => false,
            _ => return self.estimate(d),
        };
        let (scaled, s) = d.rescaled();
        let mut fit = likelihood::maximize(&scaled, &[start / s], restricted)?;
        fit.tau2 *= s;
        Ok(fit)
    }
}

impl fmt::Display for Tau2Estimator {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Tau2Estimator {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let norm = s.trim().to_ascii_lowercase();
        Tau2Estimator::ALL
            .into_iter()
            .find(|e| e.name() == norm)
            .ok_or_else(|| format!("unknown τ² estimator \"{s}\""))
    }
}

/// Why an estimator stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Termination {
    /// A closed-form estimator: no iterations.
    ClosedForm,
    /// The change in τ² fell below [`TAU2_TOLERANCE`].
    Converged,
    /// The iteration limit was reached first: the value may be wrong.
    IterationLimit,
    /// No step along the scoring direction raised the likelihood although the tolerance
    /// was not met (a multilevel fit): the value may be wrong.
    Stalled,
}

/// An estimate of τ² with how it was reached.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Tau2Fit {
    /// The estimate (≥ 0).
    pub tau2: f64,
    /// Iterations used (0 for closed forms).
    pub iterations: usize,
    /// Why the estimator stopped.
    pub termination: Termination,
    /// True when the estimate sits on the boundary τ² = 0.
    pub at_zero: bool,
}

impl Tau2Fit {
    fn closed_form(raw: f64) -> Self {
        let tau2 = raw.max(0.0);
        Tau2Fit {
            tau2,
            iterations: 0,
            termination: Termination::ClosedForm,
            at_zero: tau2 == 0.0,
        }
    }

    /// True unless an iterative estimator ran out of iterations.
    pub fn converged(&self) -> bool {
        !matches!(
            self.termination,
            Termination::IterationLimit | Termination::Stalled
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for e in Tau2Estimator::ALL {
            assert_eq!(e.name().parse::<Tau2Estimator>().unwrap(), e);
        }
        assert!("hs".parse::<Tau2Estimator>().is_err());
    }

    /// With all effects equal, every estimator gives τ² = 0.
    #[test]
    fn homogeneous_effects_give_zero() {
        let d =
            MetaData::intercept_only(vec![0.5; 6], vec![0.1, 0.2, 0.05, 0.3, 0.1, 0.2]).unwrap();
        for e in Tau2Estimator::ALL {
            let f = e.estimate(&d).unwrap();
            assert_eq!(f.tau2, 0.0, "{e}");
            assert!(f.at_zero && f.converged(), "{e}");
        }
    }
}
