//! The paragraph for a benchmark: what was pooled, how, and the range a new study should
//! expect.

use super::{Paragraph, Reference};
use crate::benchmark::{Benchmark, describe_types};
use crate::format::{fixed, range, significant, thousands};
use crate::pool::{CiMethod, Model, Tau2Estimator};
use crate::transform::TransformKind;

/// Write the paragraph for a benchmark. `measure` names the scale (e.g. "the Team
/// Candor Scale"); without it the text says "the measure".
pub fn benchmark_paragraph(b: &Benchmark, measure: Option<&str>) -> Paragraph {
    let mut refs = vec![Reference::HigginsThompson2002];
    let p = &b.pool;
    let opts = p.options;
    let level = opts.level.percent();
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
            refs.push(Reference::Bonett2002);
            "were transformed with Bonett's (2002) transformation, ln(1 − coefficient), and"
        }
        TransformKind::HakstianWhalen => {
            refs.push(Reference::HakstianWhalen1976);
            "were transformed with the Hakstian–Whalen (1976) cube-root transformation, \
             (1 − coefficient)^(1/3), and"
        }
        TransformKind::FisherZ => {
            refs.push(Reference::Fisher1921);
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
                Tau2Estimator::Reml | Tau2Estimator::Ml => Reference::Viechtbauer2005,
                Tau2Estimator::Dl => Reference::DerSimonianLaird1986,
                Tau2Estimator::Pm => Reference::PauleMandel1982,
                Tau2Estimator::Sj => Reference::SidikJonkman2005,
                Tau2Estimator::He => Reference::HedgesOlkin1985,
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
            refs.push(Reference::KnappHartung2003);
            let floor = if opts.ci == CiMethod::KnappHartungFloor {
                refs.push(Reference::RoverKnappFriede2015);
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
            refs.push(Reference::Viechtbauer2007);
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
                crate::format::p_value(p.heterogeneity.p)
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
            refs.push(Reference::HigginsThompsonSpiegelhalter2009);
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

fn finish(text: String, refs: Vec<Reference>) -> Paragraph {
    Paragraph::new(text, refs)
}
