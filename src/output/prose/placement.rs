//! The paragraph for a new study placed against the benchmark, and the one sentence on
//! how much of a shortfall score spread accounts for (the summary and the paragraph say
//! the same).

use super::{Paragraph, Reference};
use crate::format::{fixed, range, significant, thousands};
use crate::metareg::spread::SpreadReading;
use crate::placement::{Placement, SpreadShortfall};
use crate::pool::{CiMethod, Model};
use crate::transform::{BackInterval, TransformKind};

/// A percentile as an ordinal, with the extremes written as "below the 1st" and "above
/// the 99th" rather than "0th" and "100th".
pub fn ordinal(x: f64) -> String {
    if x < 0.5 {
        return "below the 1st".into();
    }
    if x > 99.5 {
        return "above the 99th".into();
    }
    let n = x.round() as i64;
    let suffix = match (n % 10, n % 100) {
        (_, 11..=13) => "th",
        (1, _) => "st",
        (2, _) => "nd",
        (3, _) => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}

/// How much of the study's shortfall score spread accounts for, in one sentence.
pub fn spread_conclusion(sp: &SpreadShortfall) -> String {
    let c2 = |x: f64| fixed(x, 2);
    if !sp.model.reading.spread_matters() {
        let why = match sp.model.reading {
            SpreadReading::OppositeDirection => {
                "show coefficients rising, not falling, where scores spread less"
            }
            SpreadReading::NothingToExplain => "do not differ beyond sampling error",
            SpreadReading::DoesNotAccount => {
                "show no clear link between score spread and the coefficient"
            }
            _ => "leave open whether score spread affects the coefficient",
        };
        return format!(
            "Score spread accounts for none of the difference: the benchmark studies {why}."
        );
    }
    let (lo, hi) = sp.explained_shortfall_ci;
    // One baseline throughout: the score-spread model's expectation at the typical SD.
    let (obs, expl) = (sp.shortfall_from_typical_sd, sp.explained_shortfall);
    if expl < 0.0 {
        // The interval of the rise, not of the (negative) shortfall.
        let ci = format!("CI {} to {}", c2(-hi), c2(-lo));
        return format!(
            "The sample's scores spread more than is typical, which raises its expected \
             coefficient by {} ({ci}); score spread accounts for none of {}.",
            c2(-expl),
            if obs > 0.0 {
                format!("the shortfall of {}", c2(obs))
            } else {
                "the difference".to_string()
            }
        );
    }
    let ci = format!("CI {} to {}", c2(lo), c2(hi));
    if obs <= 0.0 {
        return format!(
            "The coefficient is not below the value expected at the typical SD, so there is \
             no shortfall for score spread to account for (at this SD the benchmark expects a \
             coefficient {} lower than at the typical SD; {ci}).",
            c2(expl)
        );
    }
    if expl >= obs {
        format!(
            "Score spread accounts for all of the shortfall of {} from the value expected at \
             the typical SD: at this SD the benchmark expects a coefficient {} lower ({ci}).",
            c2(obs),
            c2(expl)
        )
    } else {
        format!(
            "Score spread accounts for about {}% of the shortfall of {} from the value \
             expected at the typical SD: at this SD the benchmark expects a coefficient {} \
             lower ({ci}); the rest, {}, is not explained by score spread.",
            fixed(100.0 * expl / obs, 0),
            c2(obs),
            c2(expl),
            c2(sp.unexplained_shortfall)
        )
    }
}

/// The sentence on score spread for the paragraph: the SDs compared, the slope, and the
/// conclusion.
fn spread_sentence(sp: &SpreadShortfall) -> String {
    format!(
        "Our sample's score SD ({} on the {} metric) compares with a median of {} in the \
         benchmark studies (slope of ln(1 − coefficient) on ln(SD): {}, {} CI {}). {}",
        significant(sp.sd, 3),
        sp.metric,
        significant(sp.typical_sd, 3),
        fixed(sp.model.slope.estimate, 2),
        sp.model.fit.options.level.percent(),
        range(sp.model.slope.ci.lower, sp.model.slope.ci.upper, |x| fixed(
            x, 2
        )),
        spread_conclusion(sp)
    )
}

fn conditions(pl: &Placement) -> String {
    if pl.at.is_empty() {
        String::new()
    } else {
        let parts: Vec<String> = pl.at.iter().map(|(k, v)| format!("{k} = {v}")).collect();
        format!(" for a study with {}", parts.join(", "))
    }
}

/// The paragraph a researcher can adapt.
pub fn placement_paragraph(pl: &Placement, measure: Option<&str>) -> Paragraph {
    let measure = measure.unwrap_or("the measure");
    let level = pl.fit.options.level.percent();
    let c2 = |x: f64| fixed(x, 2);
    let r = |i: BackInterval| range(i.lower, i.upper, c2);
    let between = |i: BackInterval| format!("{} and {}", c2(i.lower), c2(i.upper));
    let mut refs = vec![Reference::HigginsThompsonSpiegelhalter2009];
    let source = match &pl.dependent {
        Some(d) => format!(
            "k = {} coefficients from {} samples in {} clusters",
            d.summary.fit.k, d.summary.fit.samples, d.summary.fit.clusters
        ),
        None => format!("k = {} prior administrations", pl.fit.k),
    };
    let mut s = format!(
        "We compared the {} of {} observed in our sample (n = {}) with a benchmark from {}{}. ",
        pl.study.coef_type.words(),
        measure,
        thousands(pl.study.n),
        source,
        if pl.at.is_empty() {
            String::new()
        } else {
            format!(
                " (a meta-regression on {}, evaluated{})",
                pl.at.keys().cloned().collect::<Vec<_>>().join(", "),
                conditions(pl)
            )
        }
    );
    let (scale, scale_ref) = match pl.transform {
        TransformKind::Bonett => (" (Bonett, 2002)", Some(Reference::Bonett2002)),
        TransformKind::HakstianWhalen => (
            " (Hakstian & Whalen, 1976)",
            Some(Reference::HakstianWhalen1976),
        ),
        TransformKind::FisherZ => (" (Fisher, 1921)", Some(Reference::Fisher1921)),
        _ => ("", None),
    };
    refs.extend(scale_ref);
    let model = match (pl.fit.options.model, pl.at.is_empty(), &pl.dependent) {
        (_, true, Some(_)) => "multilevel random-effects model",
        (_, false, Some(_)) => "multilevel mixed-effects meta-regression",
        (Model::Common, true, None) => "common-effect model",
        (Model::Common, false, None) => "common-effect meta-regression",
        (Model::Random(_), true, None) => "random-effects model",
        (Model::Random(_), false, None) => "mixed-effects meta-regression",
    };
    let intervals = match &pl.dependent {
        Some(d) => {
            refs.push(Reference::PustejovskyTipton2022);
            let robust = if d.summary.inference == crate::pool::dependence::Inference::Robust
                && pl.in_cluster.is_none()
            {
                refs.push(Reference::Tipton2015);
                "; cluster-robust intervals, Tipton, 2015"
            } else {
                ""
            };
            format!(
                " (variance between and within clusters, sampling errors within a sample \
                 correlated at an assumed r = {}; Pustejovsky & Tipton, 2022{robust})",
                fixed(d.summary.dependence.sampling_correlation, 2)
            )
        }
        None if pl.fit.options.ci == CiMethod::Wald => String::new(),
        None => {
            refs.push(Reference::KnappHartung2003);
            " and Knapp–Hartung intervals (Knapp & Hartung, 2003)".to_string()
        }
    };
    let setting = match (&pl.in_cluster, &pl.dependent) {
        (Some(c), _) => format!("a new sample of the benchmark's cluster \"{c}\""),
        (None, Some(_)) => "a new sample from a new cluster".to_string(),
        (None, None) => "a new, comparable setting".to_string(),
    };
    s.push_str(&format!(
        "Pooled on the {} scale{scale} with a {model}{intervals}, the expected coefficient was \
         {} ({level} CI {}); the true coefficient in {setting} is expected between {}, and \
         a coefficient observed in a sample of n = {} between {} (Higgins, Thompson, & \
         Spiegelhalter, 2009). ",
        pl.transform.label(),
        c2(pl.expected),
        r(pl.ci),
        between(pl.pi),
        thousands(pl.study.n),
        between(pl.pi_observed)
    ));
    s.push_str(&format!(
        "Our coefficient of {} lies {} this range, at the {} percentile of the coefficients \
         expected from such a study.",
        c2(pl.study.coef),
        pl.verdict.word(),
        ordinal(pl.percentile)
    ));
    if let Some(sp) = &pl.spread {
        s.push(' ');
        s.push_str(&spread_sentence(sp));
    }
    Paragraph::new(s, refs)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ordinals_read_naturally() {
        assert_eq!(ordinal(0.2), "below the 1st");
        assert_eq!(ordinal(1.2), "1st");
        assert_eq!(ordinal(12.0), "12th");
        assert_eq!(ordinal(22.4), "22nd");
        assert_eq!(ordinal(99.9), "above the 99th");
    }
}
