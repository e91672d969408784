//! The methods-section paragraph for a scale's own coefficient (`relyard items
//! --paragraph`): what was analysed, which coefficient is reported and why, and with what
//! interval.

use super::{Paragraph, Reference};
use crate::analysis::ItemsOutcome;
use crate::format::{fixed, p_value, range, thousands};
use crate::items::{FactorPart, ItemAnalysis, ItemData, Missing, Recommendation};

/// Two decimals, as a methods section reports coefficients.
fn c2(x: f64) -> String {
    fixed(x, 2)
}

/// The paragraph for the coefficient `relyard items` recommends.
pub fn items_paragraph(o: &ItemsOutcome) -> Paragraph {
    let (d, a) = (&o.data, &o.analysis);
    let mut refs = Vec::new();
    let mut text = sample_sentence(d, a);
    text.push(' ');
    let coefficients = coefficient_sentences(o);
    if coefficients.contains("Feldt, 1965") {
        refs.push(Reference::Feldt1965);
    }
    if coefficients.contains("McDonald's (1999)") {
        refs.push(Reference::McDonald1999);
    }
    text.push_str(&coefficients);
    if let Some(Ok(m)) = &o.multidimensional
        && let (Some(w), Some(fit)) = (&m.omegas, &m.fit_bifactor)
    {
        refs.push(Reference::RodriguezReiseHaviland2016);
        let own: Vec<f64> = w
            .subscales
            .iter()
            .map(|s| s.omega_hierarchical_subscale)
            .collect();
        let (lo, hi) = (
            own.iter().copied().fold(f64::INFINITY, f64::min),
            own.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        );
        let strong = matches!(
            m.general_factor,
            Some(crate::items::multidimensional::GeneralFactor::Strong)
        );
        text.push_str(&format!(
            " A bifactor model with {} subscales ({}; CFI = {}, RMSEA = {}) gave omega total = \
             {} and omega hierarchical = {}, with an explained common variance of {} \
             (Rodriguez, Reise, & Haviland, 2016): the general factor was {}, and the \
             subscales' reliable variance of their own (omega-hierarchical-subscale) {}.{}",
            m.groups.count(),
            crate::format::and_list(&m.groups.names),
            fit.cfi.map(c2).unwrap_or_else(|| "–".into()),
            fit.rmsea.map(c2).unwrap_or_else(|| "–".into()),
            c2(w.omega_total),
            c2(w.omega_hierarchical),
            c2(w.ecv),
            if strong {
                "strong, so the total score is interpreted as one trait"
            } else {
                "not strong enough for the total score to be read as one trait"
            },
            if c2(lo) == c2(hi) {
                format!("was {}", c2(lo))
            } else {
                format!("ranged from {} to {}", c2(lo), c2(hi))
            },
            structure_caveats(m, &o.data.names)
        ));
    }
    if let Some(Ok(p)) = &o.ordinal
        && let Ok(w) = p.omega
    {
        refs.push(Reference::GreenYang2009);
        text.push_str(&format!(
            " Allowing for the items' few response categories, categorical omega was {} \
             (Green & Yang, 2009).",
            c2(w)
        ));
    }
    text.push_str(&format!(
        " Coefficients were computed with relyard {}.",
        env!("CARGO_PKG_VERSION")
    ));
    Paragraph::new(text, refs)
}

/// The bifactor model's cautions, as the reading gives them: two group factors, an improper
/// solution.
fn structure_caveats(
    m: &crate::items::multidimensional::MultidimensionalAnalysis,
    names: &[String],
) -> String {
    let mut out = String::new();
    if m.groups.count() == 2 {
        out.push_str(
            " With only two group factors the bifactor model is weakly identified, so these \
             values are read with caution.",
        );
    }
    if let Ok(f) = &m.bifactor
        && !f.heywood.is_empty()
    {
        let items: Vec<String> = f.heywood.iter().map(|&i| names[i].clone()).collect();
        out.push_str(&format!(
            " The bifactor solution was improper (the uniqueness of {} at zero), so its \
             coefficients are not trustworthy.",
            crate::format::and_list(&items)
        ));
    }
    out
}

/// Who was analysed, and how missing answers and reversed items were handled.
fn sample_sentence(d: &ItemData, a: &ItemAnalysis) -> String {
    let missing = match d.missing {
        Missing::Listwise if d.rows_read > a.n_used => format!(
            " who answered every item ({} of {} left out for missing answers)",
            thousands(d.rows_read - a.n_used),
            thousands(d.rows_read)
        ),
        Missing::Listwise => String::new(),
        Missing::Pairwise => format!(
            " (pairwise deletion: each pair of items from the respondents who answered both; \
             the smallest pair count was {})",
            thousands(a.n_used)
        ),
    };
    let reversed: Vec<String> = d
        .names
        .iter()
        .zip(&d.reversed)
        .filter(|(_, r)| **r)
        .map(|(n, _)| n.clone())
        .collect();
    let reversed = match reversed.len() {
        0 => String::new(),
        1 => format!(" Item {} was reverse-keyed before analysis.", reversed[0]),
        _ => format!(
            " Items {} were reverse-keyed before analysis.",
            crate::format::and_list(&reversed)
        ),
    };
    let n = if d.missing == Missing::Pairwise {
        d.rows_read
    } else {
        a.n_used
    };
    format!(
        "Reliability of the {}-item scale was estimated from {} respondents{missing}.{reversed}",
        a.k,
        thousands(n)
    )
}

/// Alpha with its interval, as the paragraph gives it.
fn alpha_words(a: &ItemAnalysis) -> String {
    format!(
        "α = {} ({} CI {}; Feldt, 1965)",
        c2(a.alpha),
        a.level.percent(),
        range(a.alpha_ci_feldt.0, a.alpha_ci_feldt.1, c2)
    )
}

/// Omega with its bootstrap interval when there is one.
fn omega_words(o: &ItemsOutcome, omega: f64) -> String {
    match &o.bootstrap {
        Some(b) => format!(
            "ω = {} ({} bootstrap CI {})",
            c2(omega),
            o.analysis.level.percent(),
            range(b.interval.0, b.interval.1, c2)
        ),
        None => format!("ω = {}", c2(omega)),
    }
}

/// The one-factor model's fit in words.
fn fit_words(f: &FactorPart) -> String {
    match (f.fit.cfi, f.fit.rmsea) {
        (Some(c), Some(r)) => format!("CFI = {}, RMSEA = {}", c2(c), c2(r)),
        _ => "with three items the model fits exactly".into(),
    }
}

/// Which coefficient is reported, and why.
fn coefficient_sentences(o: &ItemsOutcome) -> String {
    let a = &o.analysis;
    let (f, omega) = match (&a.factor, a.omega()) {
        (Ok(f), Some(w)) => (f, w),
        _ => {
            return format!(
                "Only coefficient alpha could be computed: {}; it is a lower bound to \
                 reliability unless the items are tau-equivalent.",
                alpha_words(a)
            );
        }
    };
    let tau = format!(
        "χ²({}) = {}, p {}",
        f.tau_test.df,
        fixed(f.tau_test.chi2, 2),
        p_value(f.tau_test.p)
    );
    match a.recommendation {
        Recommendation::Omega => format!(
            "The items were not tau-equivalent ({tau}), so coefficient alpha, {}, is a lower \
             bound; McDonald's (1999) omega from a one-factor model fitted by maximum \
             likelihood ({}) is reported: {}.",
            alpha_words(a),
            fit_words(f),
            omega_words(o, omega)
        ),
        Recommendation::Either => format!(
            "A one-factor model fitted by maximum likelihood described the items ({}) and \
             equal loadings were not rejected ({tau}); coefficient alpha, {}, and McDonald's \
             (1999) omega, {}, agree.",
            fit_words(f),
            alpha_words(a),
            omega_words(o, omega)
        ),
        Recommendation::CheckDimensionality => format!(
            "A one-factor model did not describe the items ({}), so neither coefficient alpha, \
             {}, nor one-factor omega, ω = {}, is the reliability of a single trait.",
            fit_words(f),
            alpha_words(a),
            c2(omega)
        ),
        Recommendation::AlphaWithCaution => format!(
            "The one-factor solution was improper (a uniqueness at zero), so omega is not \
             reported; coefficient alpha, {}, is reported as a lower bound.",
            alpha_words(a)
        ),
        Recommendation::ReverseKeyFirst => format!(
            "Coefficient alpha was {}, but some items ran against the others (negative \
             loadings), so no coefficient is reported as the scale's reliability until they \
             are reverse-keyed.",
            c2(a.alpha)
        ),
        Recommendation::NoCommonVariance => format!(
            "Coefficient alpha was {}, but the items shared too little variance to be told \
             apart from unrelated items, so no coefficient is reported as a scale's \
             reliability.",
            c2(a.alpha)
        ),
        Recommendation::AlphaOnly => format!(
            "Coefficient alpha was {}; it is a lower bound to reliability unless the items \
             are tau-equivalent.",
            alpha_words(a)
        ),
    }
}
