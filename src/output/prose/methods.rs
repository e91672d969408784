//! The methods of a run, with formulas, for the report: written from the analysis's own
//! settings and results, so that they describe what was done.

use super::Reference;
use crate::analysis::{Analysis, Correction, Explained};
use crate::benchmark::Benchmark;
use crate::metareg::Centring;
use crate::pool::{CiMethod, Model, Prediction};

/// One paragraph of the methods: a short title and its text.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MethodsItem {
    /// The title, e.g. "Transformation".
    pub title: &'static str,
    /// The text.
    pub text: String,
}

fn item(title: &'static str, text: String) -> MethodsItem {
    MethodsItem { title, text }
}

/// The interval method in words.
pub fn interval_words(ci: CiMethod) -> &'static str {
    match ci {
        CiMethod::KnappHartung => "the Knapp–Hartung method",
        CiMethod::KnappHartungFloor => "the Knapp–Hartung method (scale factor at least 1)",
        CiMethod::Wald => "the Wald method (normal quantiles)",
    }
}

/// The methods of the run, and the works they cite.
pub fn methods(a: &Analysis) -> (Vec<MethodsItem>, Vec<Reference>) {
    let Some(b) = &a.benchmark else {
        return (Vec::new(), Vec::new());
    };
    let level = a.settings.level.percent();
    let mut refs = vec![Reference::HigginsThompson2002, Reference::SterneEgger2001];
    let mut m = vec![
        item(
            "Transformation",
            format!(
                "Each coefficient was analysed on the {} scale, T = {}, with its sampling \
                 variance vᵢ; results were transformed back to the coefficient's own scale for \
                 reporting.",
                b.transform.label(),
                b.transform.get().formula()
            ),
        ),
        model_item(b, &level, &mut refs),
        heterogeneity_item(&mut refs),
        range_item(b, &level, &mut refs),
        item(
            "Small-study patterns",
            "The precision plot shows each study's transformed value against its standard \
             error with lines at ±1.96 SE around the pooled value (Sterne & Egger, 2001); it \
             is a visual check, not a test."
                .into(),
        ),
    ];
    if let Some(e) = &a.explanation {
        m.push(moderators_item(a, e, &mut refs));
    }
    if a.placement.is_some() {
        m.push(item(
            "Placing the new study",
            "The expected range for an observed coefficient adds the new study's own sampling \
             variance to the prediction interval: μ̂(x₀) ± t·√(τ̂² + SE² + v(new)), with the \
             same t quantile; the percentile is the new study's place in that t distribution."
                .into(),
        ));
    }
    if let Some(c) = &a.correction {
        m.push(correction_item(c, &mut refs));
    }
    (m, refs)
}

/// The pooling model, its weights and its confidence interval.
fn model_item(b: &Benchmark, level: &str, refs: &mut Vec<Reference>) -> MethodsItem {
    let opts = b.pool.options;
    let ci_detail = match (opts.ci, b.pool.test.df) {
        (CiMethod::Wald, _) => String::new(),
        (_, Some(df)) => format!(
            " (t with k − 1 = {df} degrees of freedom, the variance scaled by the weighted \
             residual mean square)"
        ),
        (_, None) => String::new(),
    };
    if opts.ci != CiMethod::Wald {
        refs.push(Reference::KnappHartung2003);
    }
    match opts.model {
        Model::Common => item(
            "Model",
            format!(
                "A common-effect model: Tᵢ = μ + eᵢ with eᵢ ~ N(0, vᵢ) (one true value, τ² = 0 \
                 assumed); the pooled value μ̂ = ΣwᵢTᵢ/Σwᵢ with weights wᵢ = 1/vᵢ; its {level} \
                 confidence interval by {}{ci_detail}.",
                interval_words(opts.ci)
            ),
        ),
        Model::Random(e) => item(
            "Model",
            format!(
                "A random-effects model: Tᵢ = μ + uᵢ + eᵢ with eᵢ ~ N(0, vᵢ) and between-setting \
                 variation uᵢ ~ N(0, τ²); τ² estimated by {} ({}); the pooled value \
                 μ̂ = ΣwᵢTᵢ/Σwᵢ with weights wᵢ = 1/(vᵢ + τ̂²); its {level} confidence interval \
                 by {}{ci_detail}.",
                e.label(),
                e.abbreviation(),
                interval_words(opts.ci)
            ),
        ),
    }
}

/// Q (with the weights it uses), I², H² and τ²'s interval.
fn heterogeneity_item(refs: &mut Vec<Reference>) -> MethodsItem {
    refs.push(Reference::Viechtbauer2007);
    item(
        "Heterogeneity",
        "Cochran's Q = Σ(Tᵢ − μ̂₀)²/vᵢ, with μ̂₀ = Σ(Tᵢ/vᵢ)/Σ(1/vᵢ) the common-effect \
         (inverse-variance) mean, on k − 1 degrees of freedom; I² = 100·τ̂²/(τ̂² + s²) and \
         H² = (τ̂² + s²)/s² with the typical within-study variance s² = (k − 1)/tr(P), P the \
         projection of the common-effect fit; a Q-profile confidence interval for τ² \
         (Viechtbauer, 2007)."
            .into(),
    )
}

/// The prediction interval, or why there is none.
fn range_item(b: &Benchmark, level: &str, refs: &mut Vec<Reference>) -> MethodsItem {
    match b.pool.prediction {
        Prediction::Available { df, .. } => {
            refs.push(Reference::HigginsThompsonSpiegelhalter2009);
            item(
                "Expected range",
                format!(
                    "The {level} prediction interval for the true coefficient in a new setting, \
                     μ̂ ± t·√(τ̂² + SE²) with t the t quantile on k − 2 = {df} degrees of \
                     freedom (Higgins, Thompson & Spiegelhalter, 2009), transformed back."
                ),
            )
        }
        _ => item(
            "Expected range",
            "None is stated: the model or the number of studies leaves no room for a \
             prediction interval (see the warnings)."
                .into(),
        ),
    }
}

/// The meta-regression, its centring, and the score-variance test.
fn moderators_item(a: &Analysis, e: &Explained, refs: &mut Vec<Reference>) -> MethodsItem {
    refs.push(Reference::ThompsonHiggins2002);
    let centring = match a.settings.moderators.centring {
        Centring::Means => {
            "numeric moderators centred at their means, so that the intercept is the \
             expected value at the moderators' means (and the reference level of each \
             categorical moderator)"
        }
        Centring::None => {
            "numeric moderators uncentred, so that the intercept is the expected value where \
             each numeric moderator is 0"
        }
    };
    let mut text = format!(
        "Mixed-effects meta-regression Tᵢ = xᵢᵀβ + uᵢ + eᵢ with the same τ² estimator and \
         interval method, {centring}; R² = max(0, (τ̂²₀ − τ̂²)/τ̂²₀) against the model \
         without moderators. Each moderator figure shows that moderator in a model of its \
         own."
    );
    if let Some(s) = &e.spread {
        let others = if s.other_moderators().is_empty() {
            String::new()
        } else {
            format!(
                ", with {} in the same model",
                crate::format::and_list(&s.other_moderators())
            )
        };
        text.push_str(&format!(
            " The score-variance test regresses ln(1 − coefficient) on ln(SD){others}: since \
             1 − ρ = σ²(error)/σ²(observed), a slope of −2 means the differences come wholly \
             from the spread of scores, 0 that the error variance grows with it. Its figure \
             shows the same model: the line, and each study's coefficient adjusted to the \
             other terms' means."
        ));
    }
    item("Moderators", text)
}

/// The correction of a correlation or a regression.
fn correction_item(c: &Correction, refs: &mut Vec<Reference>) -> MethodsItem {
    refs.push(Reference::Spearman1904);
    refs.push(Reference::HunterSchmidt2004);
    let text = match c {
        Correction::Correlation { .. } => {
            "Spearman's correction, corrected r = r/√(r(xx)·r(yy)); the classical interval \
             corrects the ends of the Fisher-z interval of r; the Monte Carlo interval also \
             draws each reliability from its own distribution (an estimate on the Bonett \
             scale, a benchmark from its predictive t distribution)."
        }
        Correction::Regression { .. } => {
            "Errors-in-variables regression: the predictors' covariance matrix with each \
             error variance, (1 − reliability) × its variance, taken off its diagonal; \
             intervals by bootstrap of the respondents (raw data) or Monte Carlo draws of \
             the covariance matrix (a summary), the reliabilities drawn too."
        }
    };
    item("Correction", text.into())
}
