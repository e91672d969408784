//! The methods of a run, with formulas, for the report: written from the analysis's own
//! settings and results, so that they describe what was done.

use super::Reference;
use crate::analysis::{Analysis, Correction, Explained};
use crate::benchmark::Benchmark;
use crate::format::fixed;
use crate::metareg::Centring;
use crate::pool::dependence::{DependenceMethod, DependenceResult, Inference};
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
    let mut m = vec![item(
        "Transformation",
        format!(
            "Each coefficient was analysed on the {} scale, T = {}, with its sampling variance \
             vᵢ; results were transformed back to the coefficient's own scale for reporting.",
            b.transform.label(),
            b.transform.get().formula()
        ),
    )];
    match b.pool.dependence.as_ref() {
        Some(d) if d.method == DependenceMethod::Multilevel => {
            m.extend(multilevel_items(b, d, &level, &mut refs));
        }
        other => {
            if let Some(d) = other {
                m.push(dependence_item(d, &mut refs));
            }
            m.push(model_item(b, &level, &mut refs));
            m.push(heterogeneity_item(&mut refs));
            m.push(range_item(b, &level, &mut refs));
        }
    }
    m.push(item(
        "Small-study patterns",
        "The precision plot shows each study's transformed value against its standard error \
         with lines at ±1.96 SE around the pooled value (Sterne & Egger, 2001); it is a visual \
         check, not a test."
            .into(),
    ));
    if let Some(e) = &a.explanation {
        m.push(moderators_item(a, e, &mut refs));
    }
    if a.explanation
        .as_ref()
        .is_some_and(|e| e.main.dependent.is_some())
    {
        refs.push(Reference::TiptonPustejovsky2015);
        m.push(item(
            "Moderators of dependent coefficients",
            "The moderators' model is the multilevel model above with the moderators as \
             fixed effects; each coefficient's test and interval are cluster-robust (CR2 with \
             Satterthwaite degrees of freedom) unless model-based inference was chosen, and \
             all moderators are tested together by the approximate Hotelling T² test \
             (Tipton & Pustejovsky, 2015): Q = (Cβ̂)ᵀ(CV^CR2Cᵀ)⁻¹(Cβ̂) referred as \
             ((η − q + 1)/(ηq))·Q to F(q, η − q + 1); R² compares the two variances' sum \
             with that of the model without moderators."
                .into(),
        ));
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

/// The multilevel model, its variance components, their intervals and test, the robust
/// inference and the expected range for a new sample from a new cluster.
fn multilevel_items(
    b: &Benchmark,
    d: &DependenceResult,
    level: &str,
    refs: &mut Vec<Reference>,
) -> Vec<MethodsItem> {
    refs.push(Reference::PustejovskyTipton2022);
    refs.push(Reference::Cheung2014);
    refs.push(Reference::SelfLiang1987);
    let est = match b.pool.options.model {
        Model::Random(e) => format!("{} ({})", e.label(), e.abbreviation()),
        Model::Common => "restricted maximum likelihood (REML)".into(),
    };
    let r = fixed(d.sampling_correlation, 2);
    let model = format!(
        "Rows that share a sample (the same respondents) or a cluster (a paper, lab or data \
         set) were modelled as dependent: Tᵢⱼ = μ + uⱼ + wᵢⱼ + eᵢⱼ for row i of cluster j, with \
         uⱼ ~ N(0, τ²_cluster), wᵢⱼ ~ N(0, τ²_within) and sampling errors eᵢⱼ ~ N(0, vᵢⱼ) \
         correlated at an assumed r = {r} between rows of one sample and independent \
         otherwise (the correlated-and-hierarchical-effects working model; Pustejovsky & \
         Tipton, 2022); both variances by {est}, fitted cluster by cluster; μ̂ the \
         generalized least-squares mean with weights V⁻¹. The sampling correlation is an \
         assumption (common practice, no source): the results at r = 0, 0.3, 0.6 and 0.9 \
         are shown beside."
    );
    let inference = match b.pool.inference {
        Some(Inference::Model) => format!(
            "The pooled value's {level} confidence interval uses the model-based standard error √((XᵀV⁻¹X)⁻¹) \
             with {}.",
            if b.pool.test.df.is_some() {
                "t quantiles on clusters − 1 degrees of freedom"
            } else {
                "normal quantiles"
            }
        ),
        _ => {
            refs.push(Reference::Tipton2015);
            format!(
                "The pooled value's {level} confidence interval uses the cluster-robust CR2 standard error with \
                 Satterthwaite degrees of freedom under the working model (Tipton, 2015), so \
                 that it holds even when the working model's assumptions are not exact."
            )
        }
    };
    let heterogeneity = "Q = rᵀS⁻¹r, r the residuals from the fit with both variances 0 and S \
        the rows' sampling covariance, on k − 1 degrees of freedom; the shares of the total \
        variance at each level I²_cluster = 100·τ̂²_cluster/(τ̂²_cluster + τ̂²_within + s²) and \
        likewise within clusters (Cheung, 2014), s² the typical within-study variance; \
        profile-likelihood intervals for both variances (the other maximized out); and the \
        likelihood-ratio test of τ²_cluster = 0, whose null value lies on the boundary, so \
        that its statistic is referred to a 50:50 mixture of χ²(0) and χ²(1) (Self & Liang, \
        1987)."
        .to_string();
    let range = match b.pool.prediction {
        Prediction::Available { df, .. } => {
            refs.push(Reference::HigginsThompsonSpiegelhalter2009);
            format!(
                "The {level} prediction interval for the true coefficient in a new sample from \
                 a new cluster, μ̂ ± t·√(τ̂²_cluster + τ̂²_within + SE²), t on m − 2 = {df} \
                 degrees of freedom for m clusters (Higgins, Thompson & Spiegelhalter, 2009, \
                 with clusters as the independent units), transformed back."
            )
        }
        _ => "None is stated: fewer than three clusters leave no room for a prediction \
              interval (see the warnings)."
            .to_string(),
    };
    vec![
        item("Model", format!("{model} {inference}")),
        item("Heterogeneity", heterogeneity),
        item("Expected range", range),
    ]
}

/// How the rows of one sample were combined, or that they were taken as independent.
fn dependence_item(d: &DependenceResult, refs: &mut Vec<Reference>) -> MethodsItem {
    let text = match d.method {
        DependenceMethod::Aggregate => {
            refs.push(Reference::Borenstein2009);
            format!(
                "The rows of each sample were averaged on the analysis scale into one \
                 composite with the variance of a mean of correlated estimates, \
                 (Σvᵢ + Σᵢ≠ⱼ r√(vᵢvⱼ))/m², r = {} assumed (Borenstein, Hedges, Higgins & \
                 Rothstein, 2009, ch. 24); the {} composites were pooled as independent.",
                fixed(d.sampling_correlation, 2),
                d.k_samples
            )
        }
        _ => format!(
            "The {} rows come from {} samples in {} clusters, but were pooled as if \
             independent: the intervals below are too narrow.",
            d.k_rows, d.k_samples, d.k_clusters
        ),
    };
    item("Dependent rows", text)
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
