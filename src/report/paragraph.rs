//! The plain-language paragraph a researcher can adapt for a paper, with references.

use super::format::{fixed, percent_level, range, significant, thousands};
use crate::benchmark::{Benchmark, describe_types};
use crate::pool::{CiMethod, Model, Tau2Estimator};
use crate::transform::TransformKind;

/// A paragraph and the full references it cites.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Paragraph {
    /// The paragraph.
    pub text: String,
    /// Full citations, alphabetical.
    pub references: Vec<String>,
}

const REF_BONETT: &str = "Bonett, D. G. (2002). Sample size requirements for testing and \
estimating coefficient alpha. Journal of Educational and Behavioral Statistics, 27(4), 335–340.";
const REF_HW: &str = "Hakstian, A. R., & Whalen, T. E. (1976). A k-sample significance test \
for independent alpha coefficients. Psychometrika, 41(2), 219–231.";
const REF_FISHER: &str = "Fisher, R. A. (1921). On the \"probable error\" of a coefficient of \
correlation deduced from a small sample. Metron, 1, 3–32.";
const REF_VIECHTBAUER_2005: &str = "Viechtbauer, W. (2005). Bias and efficiency of \
meta-analytic variance estimators in the random-effects model. Journal of Educational and \
Behavioral Statistics, 30(3), 261–293.";
const REF_VIECHTBAUER_2007: &str = "Viechtbauer, W. (2007). Confidence intervals for the \
amount of heterogeneity in meta-analysis. Statistics in Medicine, 26(1), 37–52.";
const REF_DL: &str = "DerSimonian, R., & Laird, N. (1986). Meta-analysis in clinical trials. \
Controlled Clinical Trials, 7(3), 177–188.";
const REF_PM: &str = "Paule, R. C., & Mandel, J. (1982). Consensus values and weighting \
factors. Journal of Research of the National Bureau of Standards, 87(5), 377–385.";
const REF_SJ: &str = "Sidik, K., & Jonkman, J. N. (2005). Simple heterogeneity variance \
estimation for meta-analysis. Journal of the Royal Statistical Society, Series C, 54(2), 367–384.";
const REF_HE: &str = "Hedges, L. V., & Olkin, I. (1985). Statistical methods for \
meta-analysis. Orlando, FL: Academic Press.";
const REF_KH: &str = "Knapp, G., & Hartung, J. (2003). Improved tests for a random effects \
meta-regression with a single covariate. Statistics in Medicine, 22(17), 2693–2710.";
const REF_ROVER: &str = "Röver, C., Knapp, G., & Friede, T. (2015). Hartung-Knapp-Sidik-Jonkman \
approach and its modification for random-effects meta-analysis with few studies. BMC Medical \
Research Methodology, 15, 99.";
const REF_HTS: &str = "Higgins, J. P. T., Thompson, S. G., & Spiegelhalter, D. J. (2009). A \
re-evaluation of random-effects meta-analysis. Journal of the Royal Statistical Society, \
Series A, 172(1), 137–159.";
const REF_HT: &str = "Higgins, J. P. T., & Thompson, S. G. (2002). Quantifying heterogeneity \
in a meta-analysis. Statistics in Medicine, 21(11), 1539–1558.";

/// Write the paragraph for a benchmark. `measure` names the scale (e.g. "the Team
/// Candor Scale"); without it the text says "the measure".
pub fn benchmark_paragraph(b: &Benchmark, measure: Option<&str>) -> Paragraph {
    let mut refs: Vec<&str> = vec![REF_HT];
    let p = &b.pool;
    let opts = p.options;
    let level = percent_level(opts.level);
    let measure = measure.unwrap_or("the measure");
    let on_coef = b.coefficient.is_some();
    let noun = if on_coef { "coefficient" } else { "effect" };
    let types = describe_types(b);
    let what = if on_coef {
        format!("{types} coefficients")
    } else {
        "effects".to_string()
    };
    let c = |x: f64| fixed(x, 2);

    let mut s = String::new();
    let n_part = if b.n_total > 0 {
        let missing = if b.n_missing > 0 {
            format!("; {} without a reported sample size", b.n_missing)
        } else {
            String::new()
        };
        format!(" (total N = {}{missing})", thousands(b.n_total))
    } else {
        String::new()
    };
    let left_out = match b.skipped.len() {
        0 => String::new(),
        1 => "; one further coded row was left out because of a coding problem".to_string(),
        m => format!("; {m} further coded rows were left out because of coding problems"),
    };
    if on_coef {
        s.push_str(&format!(
            "We judged the reliability of {measure} against a benchmark built from k = {} prior \
             administrations{n_part}{left_out}. ",
            p.k
        ));
    } else {
        s.push_str(&format!(
            "We pooled the effects of k = {} studies{n_part}{left_out}. ",
            p.k
        ));
    }
    let transform_part = match b.transform {
        TransformKind::Bonett => {
            refs.push(REF_BONETT);
            "were transformed with Bonett's (2002) transformation, ln(1 − coefficient), and"
        }
        TransformKind::HakstianWhalen => {
            refs.push(REF_HW);
            "were transformed with the Hakstian–Whalen (1976) cube-root transformation, \
             (1 − coefficient)^(1/3), and"
        }
        TransformKind::FisherZ => {
            refs.push(REF_FISHER);
            "were transformed to Fisher's (1921) z and"
        }
        TransformKind::Raw => "were left untransformed and",
        TransformKind::None => "were taken as given, with their reported sampling variances, and",
    };
    let model_part = match opts.model {
        Model::Common => {
            "pooled in a common-effect (inverse-variance) model, which assumes that every study \
             shares one true value"
                .to_string()
        }
        Model::Random(e) => {
            refs.push(match e {
                Tau2Estimator::Reml | Tau2Estimator::Ml => REF_VIECHTBAUER_2005,
                Tau2Estimator::Dl => REF_DL,
                Tau2Estimator::Pm => REF_PM,
                Tau2Estimator::Sj => REF_SJ,
                Tau2Estimator::He => REF_HE,
            });
            format!(
                "pooled in a random-effects model, with the between-study variance (τ²) \
                 estimated by {} ({}; {})",
                e.label(),
                e.abbreviation(),
                e.citation()
            )
        }
    };
    let ci_part = match opts.ci {
        CiMethod::KnappHartung | CiMethod::KnappHartungFloor => {
            refs.push(REF_KH);
            let floor = if opts.ci == CiMethod::KnappHartungFloor {
                refs.push(REF_ROVER);
                " with its scale factor kept at 1 or more (Röver, Knapp, & Friede, 2015)"
            } else {
                ""
            };
            format!(
                "; the {level} confidence interval of the pooled {noun} used the Knapp–Hartung \
                 method (Knapp & Hartung, 2003){floor}"
            )
        }
        CiMethod::Wald => {
            format!("; the {level} confidence interval of the pooled {noun} used normal quantiles")
        }
    };
    s.push_str(&format!(
        "The reported {what} {transform_part} {model_part}{ci_part}. "
    ));
    match &b.coefficient {
        Some(cs) => s.push_str(&format!(
            "The pooled coefficient was {} ({level} CI {} to {}). ",
            c(cs.estimate),
            c(cs.ci.lower),
            c(cs.ci.upper)
        )),
        None => s.push_str(&format!(
            "The pooled effect was {} ({level} CI {} to {}). ",
            significant(p.estimate, 3),
            significant(p.ci.lower, 3),
            significant(p.ci.upper, 3)
        )),
    }
    match opts.model {
        Model::Common => s.push_str(&format!(
            "Cochran's Q was {} on {} df (I² = {}% [Higgins & Thompson, 2002]). ",
            fixed(p.heterogeneity.q, 2),
            p.heterogeneity.df,
            fixed(p.i2, 0)
        )),
        Model::Random(_) => {
            refs.push(REF_VIECHTBAUER_2007);
            let ci = p
                .tau2_ci
                .map(|t| {
                    let r = range(t.lower, t.upper, |x| significant(x, 2));
                    format!(", {level} CI {r} by the Q-profile method [Viechtbauer, 2007]")
                })
                .unwrap_or_default();
            let scale = if b.transform == TransformKind::None || b.transform == TransformKind::Raw {
                ""
            } else {
                " on the transformed scale"
            };
            let clear = p.tau2_ci.is_some_and(|t| t.lower > 0.0);
            if p.tau2.at_zero {
                s.push_str(&format!(
                    "The {what} varied no more than sampling error would predict (τ² = 0{ci}; \
                     I² = 0% [Higgins & Thompson, 2002]). "
                ));
            } else if clear {
                s.push_str(&format!(
                    "The {what} varied between studies beyond sampling error (τ² = {}{scale}{ci}; \
                     I² = {}% [Higgins & Thompson, 2002]). ",
                    significant(p.tau2.tau2, 2),
                    fixed(p.i2, 0)
                ));
            } else {
                s.push_str(&format!(
                    "The {what} varied somewhat between studies, but not clearly beyond sampling \
                     error (τ² = {}{scale}{ci}, an interval that includes 0; I² = {}% \
                     [Higgins & Thompson, 2002]). ",
                    significant(p.tau2.tau2, 2),
                    fixed(p.i2, 0)
                ));
            }
        }
    }
    let pi = match (&b.coefficient, p.prediction.interval()) {
        (Some(cs), Some(_)) => cs.pi.map(|i| (c(i.lower), c(i.upper))),
        (None, Some(i)) => Some((significant(i.lower, 3), significant(i.upper, 3))),
        _ => None,
    };
    let of_measure = if on_coef {
        format!(" of {measure}")
    } else {
        String::new()
    };
    let article = if on_coef { "a" } else { "an" };
    if opts.model == Model::Common {
        let rejected = if p.heterogeneity.p < crate::pool::COMMON_EFFECT_REJECTED {
            format!(
                ", and Cochran's Q test rejects that assumption (p {}), so a random-effects \
                 benchmark is advisable",
                super::format::p_value(p.heterogeneity.p)
            )
        } else {
            String::new()
        };
        s.push_str(&format!(
            "Because the common-effect model assumes no between-study variation, it states no \
             expected range for a new setting beyond the uncertainty of the pooled {noun}{rejected}."
        ));
        return finish(s, refs);
    }
    match pi {
        Some((lo, hi)) => {
            refs.push(REF_HTS);
            s.push_str(&format!(
                "The {level} prediction interval (Higgins, Thompson, & Spiegelhalter, 2009) \
                 indicates that the true {noun}{of_measure} in a new, comparable setting can be \
                 expected to lie between {lo} and {hi}; {article} {noun} observed in a single new \
                 sample will vary somewhat more because of that sample's own sampling error."
            ));
            let wider = match (&b.coefficient, p.prediction_at_tau2_upper) {
                (Some(cs), _) => cs.pi_at_tau2_upper.map(|i| (c(i.lower), c(i.upper))),
                (None, Some(i)) => Some((significant(i.lower, 3), significant(i.upper, 3))),
                _ => None,
            };
            if let Some((wl, wh)) = wider {
                s.push_str(&format!(
                    " Because τ² was estimated at 0, this range reflects only the uncertainty of \
                     the pooled {noun}; at the upper end of τ²'s interval it would be {wl} to {wh}."
                ));
            }
        }
        None => s.push_str(
            "With only two studies no prediction interval can be given, so the benchmark states \
             no expected range for a new setting.",
        ),
    }
    finish(s, refs)
}

fn finish(text: String, mut refs: Vec<&str>) -> Paragraph {
    refs.sort_unstable();
    refs.dedup();
    Paragraph {
        text,
        references: refs.into_iter().map(str::to_string).collect(),
    }
}
