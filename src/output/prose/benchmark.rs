//! The paragraph for a benchmark: what was pooled, how, and the range a new study should
//! expect.

use super::{Paragraph, Reference, dependence};
use crate::benchmark::{Benchmark, describe_types};
use crate::format::{fixed, range, significant, thousands};
use crate::pool::dependence::DependenceMethod;
use crate::pool::{CiMethod, Model, PoolOptions, Tau2Estimator};
use crate::transform::TransformKind;

/// Write the paragraph for a benchmark. `measure` names the scale (e.g. "the Team
/// Candor Scale"); without it the text says "the measure".
pub fn benchmark_paragraph(b: &Benchmark, measure: Option<&str>) -> Paragraph {
    let w = Words::new(b, measure);
    let mut refs = vec![Reference::HigginsThompson2002];
    let mut s = opening(b, &w);
    let dep = dependence::dependence(b);
    let transformed = transform_words(b.transform, &mut refs);
    let method = dep.and_then(|d| dependence::method_words(b, d, &mut refs));
    let multilevel = dep.is_some_and(|d| d.method == DependenceMethod::Multilevel);
    match (&method, multilevel) {
        (Some(m), true) => s.push_str(&format!("The reported {} {transformed} {m}. ", w.what)),
        _ => s.push_str(&format!(
            "The reported {} {transformed} {}{}{}. ",
            w.what,
            method.map(|m| m + " ").unwrap_or_default(),
            model_words(b.pool.options.model, &mut refs),
            interval_words(&b.pool.options, &w, &mut refs)
        )),
    }
    s.push_str(&pooled_sentence(b, &w));
    match dep {
        Some(d) if multilevel => s.push_str(&dependence::levels_sentence(b, d, &mut refs)),
        _ => s.push_str(&spread_sentence(b, &w, &mut refs)),
    }
    s.push_str(&range_sentence(b, &w, &mut refs));
    if let Some(d) = dep {
        match d.method {
            DependenceMethod::Ignore => s.push_str(
                " Coefficients that share a sample or a cluster were treated as independent, \
                 so these intervals are too narrow.",
            ),
            _ => {
                let t = dependence::sensitivity_sentence(b, d);
                if !t.is_empty() {
                    s.push(' ');
                    s.push_str(&t);
                }
            }
        }
    }
    Paragraph::new(s, refs)
}

/// The words that depend on whether coefficients or other effects were pooled.
struct Words {
    /// "alpha and omega coefficients" or "effects".
    what: String,
    /// "coefficient" or "effect".
    noun: &'static str,
    /// "a" or "an", for the noun.
    article: &'static str,
    /// "95%".
    level: String,
    /// The measure's name, or "the measure".
    measure: String,
    /// Whether the results are on the coefficient scale.
    on_coef: bool,
}

impl Words {
    fn new(b: &Benchmark, measure: Option<&str>) -> Words {
        let on_coef = b.coefficient.is_some();
        Words {
            what: if on_coef {
                format!("{} coefficients", describe_types(b))
            } else {
                "effects".to_string()
            },
            noun: if on_coef { "coefficient" } else { "effect" },
            article: if on_coef { "a" } else { "an" },
            level: b.pool.options.level.percent(),
            measure: measure.unwrap_or("the measure").to_string(),
            on_coef,
        }
    }
}

/// The first sentence: what the benchmark was built from.
fn opening(b: &Benchmark, w: &Words) -> String {
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
    let subset = b
        .source
        .subset_words()
        .map(|s| format!(" with {s}"))
        .unwrap_or_default();
    if let Some(d) = dependence::dependence(b) {
        let n_part = n_part.replace(")", ", each sample counted once)");
        format!(
            "We judged the reliability of {} against a benchmark built from k = {} {} reported \
             for {} samples in {} clusters{subset}{n_part}{left_out}. ",
            w.measure,
            d.k_rows,
            w.noun.to_string() + "s",
            d.k_samples,
            d.k_clusters
        )
    } else if w.on_coef {
        format!(
            "We judged the reliability of {} against a benchmark built from k = {} prior \
             administrations{subset}{n_part}{left_out}. ",
            w.measure, b.pool.k
        )
    } else {
        format!(
            "We pooled the effects of k = {} studies{subset}{n_part}{left_out}. ",
            b.pool.k
        )
    }
}

/// How the coefficients were transformed (ends with "and").
fn transform_words(t: TransformKind, refs: &mut Vec<Reference>) -> &'static str {
    match t {
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
    }
}

/// The pooling model and its τ² estimator.
fn model_words(model: Model, refs: &mut Vec<Reference>) -> String {
    match model {
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
    }
}

/// The confidence interval's method (starts with "; ").
fn interval_words(opts: &PoolOptions, w: &Words, refs: &mut Vec<Reference>) -> String {
    let (level, noun) = (&w.level, w.noun);
    match opts.ci {
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
    }
}

/// The pooled value with its confidence interval.
fn pooled_sentence(b: &Benchmark, w: &Words) -> String {
    let (p, level) = (&b.pool, &w.level);
    match &b.coefficient {
        Some(cs) => format!(
            "The pooled coefficient was {} ({level} CI {} to {}). ",
            fixed(cs.estimate, 2),
            fixed(cs.ci.lower, 2),
            fixed(cs.ci.upper, 2)
        ),
        None => format!(
            "The pooled effect was {} ({level} CI {} to {}). ",
            significant(p.estimate, 3),
            significant(p.ci.lower, 3),
            significant(p.ci.upper, 3)
        ),
    }
}

/// How much the studies differ: τ² with its Q-profile interval and I², or Q for a
/// common-effect model.
fn spread_sentence(b: &Benchmark, w: &Words, refs: &mut Vec<Reference>) -> String {
    let (p, what, level) = (&b.pool, &w.what, &w.level);
    if p.options.model == Model::Common {
        return format!(
            "Cochran's Q was {} on {} df (I² = {}% [Higgins & Thompson, 2002]). ",
            fixed(p.heterogeneity.q, 2),
            p.heterogeneity.df,
            fixed(p.i2, 0)
        );
    }
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
        format!(
            "The {what} varied no more than sampling error would predict (τ² = 0{ci}; \
             I² = 0% [Higgins & Thompson, 2002]). "
        )
    } else if clear {
        format!(
            "The {what} varied between studies beyond sampling error (τ² = {}{scale}{ci}; \
             I² = {}% [Higgins & Thompson, 2002]). ",
            significant(p.tau2.tau2, 2),
            fixed(p.i2, 0)
        )
    } else {
        format!(
            "The {what} varied somewhat between studies, but not clearly beyond sampling \
             error (τ² = {}{scale}{ci}, an interval that includes 0; I² = {}% \
             [Higgins & Thompson, 2002]). ",
            significant(p.tau2.tau2, 2),
            fixed(p.i2, 0)
        )
    }
}

/// The expected range for a new setting (the prediction interval), or why there is none.
fn range_sentence(b: &Benchmark, w: &Words, refs: &mut Vec<Reference>) -> String {
    let (p, noun, level) = (&b.pool, w.noun, &w.level);
    let c = |x: f64| fixed(x, 2);
    if p.options.model == Model::Common {
        let rejected = if p.heterogeneity.p < crate::pool::COMMON_EFFECT_REJECTED {
            format!(
                ", and Cochran's Q test rejects that assumption (p {}), so a random-effects \
                 benchmark is advisable",
                crate::format::p_value(p.heterogeneity.p)
            )
        } else {
            String::new()
        };
        return format!(
            "Because the common-effect model assumes no between-study variation, it states no \
             expected range for a new setting beyond the uncertainty of the pooled {noun}{rejected}."
        );
    }
    let pi = match (&b.coefficient, p.prediction.interval()) {
        (Some(cs), Some(_)) => cs.pi.map(|i| (c(i.lower), c(i.upper))),
        (None, Some(i)) => Some((significant(i.lower, 3), significant(i.upper, 3))),
        _ => None,
    };
    let Some((lo, hi)) = pi else {
        return "With only two studies no prediction interval can be given, so the benchmark \
                states no expected range for a new setting."
            .to_string();
    };
    refs.push(Reference::HigginsThompsonSpiegelhalter2009);
    let of_measure = if w.on_coef {
        format!(" of {}", w.measure)
    } else {
        String::new()
    };
    let setting = match dependence::dependence(b).map(|d| d.method) {
        Some(DependenceMethod::Multilevel) => "a new sample from a new cluster",
        _ => "a new, comparable setting",
    };
    let mut s = format!(
        "The {level} prediction interval (Higgins, Thompson, & Spiegelhalter, 2009) \
         indicates that the true {noun}{of_measure} in {setting} can be \
         expected to lie between {lo} and {hi}; {} {noun} observed in a single new \
         sample will vary somewhat more because of that sample's own sampling error.",
        w.article
    );
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
    s
}

/// How much true coefficients differ between settings, in one sentence (the readable
/// summary and the page say the same).
pub fn differences_sentence(b: &Benchmark) -> String {
    let p = &b.pool;
    let level = p.options.level.percent();
    if p.options.model == Model::Common {
        return format!(
            "Not estimated: the common-effect model assumes no differences between settings \
             (τ² = 0). The coefficients' spread relative to sampling error: I² = {}% from Q.",
            fixed(p.i2, 1)
        );
    }
    let scale = if b.transform == TransformKind::None {
        "the effects' scale".to_string()
    } else {
        format!("the {} scale", b.transform.get().formula())
    };
    let ci = p
        .tau2_ci
        .map(|c| {
            format!(
                ", {level} CI {}",
                range(c.lower, c.upper, |x| significant(x, 3))
            )
        })
        .unwrap_or_default();
    let words = if p.tau2.at_zero {
        "no more than sampling error predicts"
    } else if p.tau2_ci.is_some_and(|c| c.lower > 0.0) {
        "beyond sampling error"
    } else {
        "somewhat, but not clearly beyond sampling error"
    };
    format!(
        "True coefficients vary between settings {words}: τ = {} on {scale} (τ² = {}{ci}).",
        significant(p.tau2.tau2.sqrt(), 3),
        significant(p.tau2.tau2, 3)
    )
}

/// The between-setting share: I² with its interval, and H² (random effects only).
pub fn share_words(b: &Benchmark) -> Option<String> {
    let p = &b.pool;
    if p.options.model == Model::Common {
        return None;
    }
    let level = p.options.level.percent();
    let i2ci = p
        .i2_ci
        .map(|c| {
            format!(
                ", {level} CI {}",
                range(c.lower, c.upper, |x| fixed(x, 1) + "%")
            )
        })
        .unwrap_or_default();
    Some(format!(
        "I² = {}%{i2ci}; H² = {}",
        fixed(p.i2, 1),
        fixed(p.h2, 2)
    ))
}

/// The test of equal values: Q on its degrees of freedom.
pub fn equal_values_words(b: &Benchmark) -> String {
    let h = &b.pool.heterogeneity;
    format!(
        "Q = {} on {} df, p {}",
        fixed(h.q, 2),
        h.df,
        crate::format::p_value(h.p)
    )
}
