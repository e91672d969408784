//! The words for a benchmark whose rows share samples or clusters: what was counted, how
//! the dependence was modelled, the variance at each level and the sensitivity to the
//! assumed sampling correlation. The readable summary, the paragraph and the page say
//! the same.

use super::Reference;
use crate::benchmark::Benchmark;
use crate::format::{fixed, p_value, range, significant};
use crate::pool::dependence::{DependenceMethod, DependenceResult, Inference};

/// A variance component with its profile-likelihood interval: "τ² = 0.113; 95% CI 0.0255
/// to 0.449 (profile likelihood)" (the readable summaries and the page say the same).
pub fn component_words(
    tau2: Option<f64>,
    ci: Option<crate::pool::multilevel::ComponentInterval>,
    level: &str,
) -> String {
    let ci = ci
        .map(|c| {
            format!(
                "; {level} CI {} (profile likelihood)",
                range(c.lower, c.upper, |x| significant(x, 3))
            )
        })
        .unwrap_or_default();
    tau2.map(|t| format!("τ² = {}{ci}", significant(t, 3)))
        .unwrap_or_else(|| "–".into())
}

/// The likelihood-ratio test of no variance between clusters: "likelihood ratio 5.29, p =
/// 0.011 (50:50 mixture of χ²(0) and χ²(1): the value tested is on the boundary)".
pub fn lrt_words(t: &crate::pool::multilevel::LikelihoodRatio) -> String {
    format!(
        "likelihood ratio {}, p {} (50:50 mixture of χ²(0) and χ²(1): the value tested is on \
         the boundary)",
        fixed(t.statistic, 2),
        p_value(t.p)
    )
}

/// The dependence result of a benchmark whose sheet groups its rows.
pub fn dependence(b: &Benchmark) -> Option<&DependenceResult> {
    b.pool.dependence.as_ref()
}

/// "14 coefficients from 12 samples in 8 clusters" (or "14 studies" for a sheet that does
/// not group its rows).
pub fn counted_words(b: &Benchmark) -> String {
    let noun = if b.coefficient.is_some() {
        ("coefficient", "coefficients")
    } else {
        ("effect", "effects")
    };
    if dependence(b).is_none() {
        return crate::format::count(b.k_rows as u64, "coded study", "coded studies");
    }
    format!(
        "{} from {} in {}",
        crate::format::count(b.k_rows as u64, noun.0, noun.1),
        crate::format::count(b.k_samples as u64, "sample", "samples"),
        crate::format::count(b.k_clusters as u64, "cluster", "clusters")
    )
}

/// How the dependent rows were pooled, for the paragraph's method sentence (replacing the
/// model and interval words of independent pooling); `None` when they were pooled as
/// independent.
pub fn method_words(
    b: &Benchmark,
    d: &DependenceResult,
    refs: &mut Vec<Reference>,
) -> Option<String> {
    let level = b.pool.options.level.percent();
    let r = fixed(d.sampling_correlation, 2);
    match d.method {
        DependenceMethod::Multilevel => {
            refs.push(Reference::PustejovskyTipton2022);
            let estimator = match b.pool.options.model {
                crate::pool::Model::Random(e) => e.abbreviation(),
                crate::pool::Model::Common => "REML",
            };
            let ci = match b.pool.inference {
                Some(Inference::Robust) | None => {
                    refs.push(Reference::Tipton2015);
                    format!(
                        "; the {level} confidence interval used cluster-robust (CR2) standard \
                         errors with Satterthwaite degrees of freedom (Tipton, 2015)"
                    )
                }
                Some(Inference::Model) => {
                    format!("; the {level} confidence interval used the model's standard error")
                }
            };
            Some(format!(
                "pooled in a multilevel random-effects model with one variance between clusters \
                 (papers, labs or data sets) and one between coefficients within a cluster, \
                 both estimated by {estimator}, the sampling errors of coefficients from one \
                 sample taken as correlated at an assumed r = {r} (Pustejovsky & Tipton, \
                 2022){ci}"
            ))
        }
        DependenceMethod::Aggregate => {
            refs.push(Reference::Borenstein2009);
            Some(format!(
                "averaged within each sample into one composite whose variance assumes a \
                 sampling correlation of r = {r} between the sample's coefficients (Borenstein, \
                 Hedges, Higgins, & Rothstein, 2009), and the composites were"
            ))
        }
        DependenceMethod::Ignore => None,
    }
}

/// The variance at each level, for the paragraph and the summary (multilevel only).
pub fn levels_sentence(b: &Benchmark, d: &DependenceResult, refs: &mut Vec<Reference>) -> String {
    let (Some(tc), Some(tw)) = (d.tau2_cluster, d.tau2_within) else {
        return String::new();
    };
    refs.push(Reference::Cheung2014);
    let level = b.pool.options.level.percent();
    let ci = |c: Option<crate::pool::multilevel::ComponentInterval>| {
        c.map(|c| {
            format!(
                " ({level} profile-likelihood CI {})",
                range(c.lower, c.upper, |x| significant(x, 2))
            )
        })
        .unwrap_or_default()
    };
    let within = if d.within_identified {
        format!(
            "τ² = {} within clusters{}",
            significant(tw, 2),
            ci(d.tau2_within_ci)
        )
    } else {
        "no variance within clusters could be estimated (every cluster holds one coefficient)"
            .to_string()
    };
    let shares = match (d.i2_cluster, d.i2_within) {
        (Some(a), Some(w)) => format!(
            "; I² = {}% between and {}% within clusters [Cheung, 2014]",
            fixed(a, 0),
            fixed(w, 0)
        ),
        _ => String::new(),
    };
    let test = d
        .lrt
        .map(|t| {
            format!(
                ". A likelihood-ratio test of no variance between clusters gave χ² = {}, p {} \
                 (referred to a 50:50 mixture of χ²(0) and χ²(1), because the tested value \
                 lies on the boundary)",
                fixed(t.statistic, 2),
                p_value(t.p)
            )
        })
        .unwrap_or_default();
    format!(
        "Beyond sampling error the coefficients varied by τ² = {} between clusters{} and \
         {within}{shares}{test}. ",
        significant(tc, 2),
        ci(d.tau2_cluster_ci)
    )
}

/// The pooled value and prediction interval at each assumed sampling correlation, on the
/// coefficient scale when there is one.
pub fn sensitivity_sentence(b: &Benchmark, d: &DependenceResult) -> String {
    if d.sensitivity.is_empty() {
        return String::new();
    }
    let tr = b.transform.get();
    let shown = |x: f64| match b.coefficient {
        Some(_) => tr
            .back(crate::transform::Transformed(x))
            .map(|c| fixed(c.0.min(crate::transform::COEFFICIENT_MAX), 2))
            .unwrap_or_else(|| significant(x, 3)),
        None => significant(x, 3),
    };
    let ends = |i: crate::pool::Interval| -> String {
        match b.coefficient {
            Some(_) => crate::transform::back_interval(
                tr,
                crate::transform::Transformed(i.lower),
                crate::transform::Transformed(i.upper),
            )
            .map(|c| format!("{} to {}", fixed(c.lower, 2), fixed(c.upper, 2)))
            .unwrap_or_default(),
            None => format!("{} to {}", significant(i.lower, 3), significant(i.upper, 3)),
        }
    };
    let parts: Vec<String> = d
        .sensitivity
        .iter()
        .map(|row| {
            let pi = row
                .pi
                .map(|i| format!(", expected range {}", ends(i)))
                .unwrap_or_default();
            format!(
                "r = {}: {}{pi}",
                fixed(row.sampling_correlation, 1),
                shown(row.estimate)
            )
        })
        .collect();
    format!(
        "At other assumed sampling correlations the pooled {} was: {}.",
        if b.coefficient.is_some() {
            "coefficient"
        } else {
            "effect"
        },
        parts.join("; ")
    )
}
