//! The readable summary of a benchmark (`relyard pool`).

use super::{heading, line, paper, para, read_with_care, sheet_line, skipped_rows, t4};
use crate::benchmark::Benchmark;
use crate::format::{fixed, range, significant, thousands};
use crate::output::prose::Paragraph;
use crate::output::prose::dependence::{component_words, counted_words, dependence};
use crate::pool::dependence::{DependenceMethod, DependenceResult, Inference};
use crate::pool::{CiMethod, Model, PoolResult, Prediction, Termination};
use crate::setting::SettingNames;
use crate::transform::TransformKind;
use std::fmt::Write;

/// Render the benchmark summary; `show_studies` adds a table of the pooled studies.
pub fn benchmark_summary(
    b: &Benchmark,
    paragraph: &Paragraph,
    measure: Option<&str>,
    show_studies: bool,
    names: &dyn SettingNames,
) -> String {
    let mut o = String::new();
    expectation(&mut o, b, measure);
    let _ = writeln!(o);
    differences(&mut o, b);
    let _ = writeln!(o);
    computation(&mut o, b);
    if let Some(d) = dependence(b) {
        sensitivity(&mut o, b, d);
    }
    if show_studies {
        studies(&mut o, b);
    }
    skipped_rows(&mut o, &b.skipped, names);
    let what = if b.coefficient.is_some() {
        format!(
            "For your paper (adapt as needed; {} reported {} coefficients)",
            b.pool.k,
            crate::benchmark::describe_types(b)
        )
    } else {
        format!(
            "For your paper (adapt as needed; {} reported effects)",
            b.pool.k
        )
    };
    paper(&mut o, &what, paragraph);
    read_with_care(&mut o, &b.warnings, names);
    o
}

/// What a new study should expect: the expected range first, then the pooled value.
fn expectation(o: &mut String, b: &Benchmark, measure: Option<&str>) {
    let p = &b.pool;
    let level = p.options.level.percent();
    let c3 = |x: f64| fixed(x, 3);
    let Some(c) = &b.coefficient else {
        heading(o, &format!("Pooled effects of {} studies (as coded)", p.k));
        line(
            o,
            "pooled effect",
            &format!("{}  (SE {})", t4(p.estimate), t4(p.se)),
        );
        line(
            o,
            &format!("{level} CI"),
            &range(p.ci.lower, p.ci.upper, t4),
        );
        if let Some(i) = p.prediction.interval() {
            line(
                o,
                &format!("{level} expected range"),
                &range(i.lower, i.upper, t4),
            );
        }
        return;
    };
    heading(
        o,
        &format!(
            "What a new study of {} should expect",
            measure.unwrap_or("the measure")
        ),
    );
    let setting = match dependence(b).map(|d| d.method) {
        Some(DependenceMethod::Multilevel) => "In a new sample from a new cluster",
        _ => "In a new, comparable setting",
    };
    match (p.prediction, c.pi) {
        (Prediction::Available { .. }, Some(pi)) => {
            para(
                o,
                &format!(
                    "{setting} the true coefficient is expected between {} and {} ({level} \
                     expected range; {}). A coefficient observed in one new sample \
                     scatters a little more, by that sample's own sampling error; relyard \
                     check places a particular study.",
                    c3(pi.lower),
                    c3(pi.upper),
                    counted_words(b)
                ),
            );
            if let Some(w) = c.pi_at_tau2_upper {
                para(
                    o,
                    &format!(
                        "τ² was estimated at 0, so this range reflects only the uncertainty of \
                         the pooled coefficient; at the upper end of τ²'s interval it would be \
                         {} to {}.",
                        c3(w.lower),
                        c3(w.upper)
                    ),
                );
            }
        }
        (Prediction::CommonEffect, _) => para(
            o,
            "The common-effect model assumes one true coefficient for every setting, so it \
             states no expected range for a new one beyond the interval of the pooled value.",
        ),
        _ if dependence(b).is_some_and(|d| d.method == DependenceMethod::Multilevel) => {
            para(
                o,
                &format!(
                    "No expected range can be stated: {} clusters leave the t quantile no \
                     degrees of freedom (clusters − 2).",
                    b.k_clusters
                ),
            );
            para(o, "Code more papers or samples to state one.");
        }
        _ => {
            para(
                o,
                "No expected range can be stated: k = 2 leaves the t quantile no degrees of \
                 freedom.",
            );
            para(o, "Code more studies to state one.");
        }
    }
    let _ = writeln!(o);
    line(
        o,
        "pooled coefficient",
        &format!(
            "{}   {level} CI {}",
            c3(c.estimate),
            range(c.ci.lower, c.ci.upper, c3)
        ),
    );
}

/// How much the studies differ.
fn differences(o: &mut String, b: &Benchmark) {
    heading(o, "How much the studies differ");
    if let Some(d) = dependence(b)
        && d.method == DependenceMethod::Multilevel
    {
        levels(o, b, d);
        return;
    }
    para(o, &crate::output::prose::differences_sentence(b));
    if let Some(share) = crate::output::prose::share_words(b) {
        line(o, "between-setting share", &share);
    }
    line(
        o,
        "test of equal values",
        &crate::output::prose::equal_values_words(b),
    );
}

/// The variance between and within clusters, their shares and tests.
fn levels(o: &mut String, b: &Benchmark, d: &DependenceResult) {
    let level = b.pool.options.level.percent();
    let component = |t, ci| component_words(t, ci, &level);
    para(
        o,
        "True coefficients differ between clusters (papers, labs, data sets) and, within a \
         cluster, between samples and coefficients; the two variances on the analysis scale:",
    );
    line(
        o,
        "between clusters",
        &component(d.tau2_cluster, d.tau2_cluster_ci),
    );
    if d.within_identified {
        line(
            o,
            "within clusters",
            &component(d.tau2_within, d.tau2_within_ci),
        );
    } else {
        line(
            o,
            "within clusters",
            "not estimable (every cluster holds one row)",
        );
    }
    if let (Some(a), Some(w)) = (d.i2_cluster, d.i2_within) {
        line(
            o,
            "shares of variance",
            &format!(
                "I² = {}% between, {}% within clusters",
                fixed(a, 1),
                fixed(w, 1)
            ),
        );
    }
    if let Some(t) = d.lrt {
        line(
            o,
            "cluster variance = 0?",
            &crate::output::prose::dependence::lrt_words(&t),
        );
    }
    line(
        o,
        "test of equal values",
        &crate::output::prose::equal_values_words(b),
    );
}

/// The results at each assumed sampling correlation.
fn sensitivity(o: &mut String, b: &Benchmark, d: &DependenceResult) {
    if d.sensitivity.is_empty() {
        return;
    }
    let _ = writeln!(o);
    heading(o, "What the assumed sampling correlation changes");
    let tr = b.transform.get();
    let shown = |lo: f64, hi: f64| -> String {
        match b.coefficient {
            Some(_) => crate::transform::back_interval(
                tr,
                crate::transform::Transformed(lo),
                crate::transform::Transformed(hi),
            )
            .map(|c| range(c.lower, c.upper, |x| fixed(x, 3)))
            .unwrap_or_default(),
            None => range(lo, hi, t4),
        }
    };
    let one = |x: f64| match b.coefficient {
        Some(_) => tr
            .back(crate::transform::Transformed(x))
            .map(|c| fixed(c.0.min(crate::transform::COEFFICIENT_MAX), 3))
            .unwrap_or_default(),
        None => t4(x),
    };
    let _ = writeln!(
        o,
        "  {:>12}  {:>8}  {:<18}  expected range",
        "correlation", "pooled", "CI"
    );
    for row in &d.sensitivity {
        let mark = if (row.sampling_correlation - d.sampling_correlation).abs() < 1e-12 {
            " (in force)"
        } else {
            ""
        };
        let text = format!(
            "  {:>12}  {:>8}  {:<18}  {:<18}{mark}",
            fixed(row.sampling_correlation, 1),
            one(row.estimate),
            shown(row.ci.lower, row.ci.upper),
            row.pi
                .map(|i| shown(i.lower, i.upper))
                .unwrap_or_else(|| "–".into()),
        );
        let _ = writeln!(o, "{}", text.trim_end());
    }
    para(
        o,
        "The correlation between the sampling errors of coefficients from one sample is \
         assumed, not estimated (common practice, no source); read the benchmark as firm \
         when these rows agree.",
    );
}

/// How the numbers were computed.
fn computation(o: &mut String, b: &Benchmark) {
    let p = &b.pool;
    heading(o, "How it was computed");
    line(
        o,
        "sheet",
        &sheet_line(&b.source, b.studies.len(), b.skipped.len()),
    );
    if b.coefficient.is_some() {
        let counts: Vec<String> = b
            .coef_types
            .iter()
            .map(|(t, n)| format!("{t} {n}"))
            .collect();
        line(o, "coefficients", &counts.join(", "));
    }
    let n_text = if b.n_total > 0 {
        let miss = if b.n_missing > 0 {
            format!(" ({} studies without n)", b.n_missing)
        } else {
            String::new()
        };
        format!("{}{miss}", thousands(b.n_total))
    } else {
        "not given".into()
    };
    if let Some(d) = dependence(b) {
        line(
            o,
            "rows, samples, clusters",
            &format!(
                "{} rows from {} samples in {} clusters",
                d.k_rows, d.k_samples, d.k_clusters
            ),
        );
        line(
            o,
            "respondents",
            &format!("{n_text} (each sample counted once)"),
        );
    } else {
        line(o, "respondents", &n_text);
    }
    let scale = if b.transform == TransformKind::None {
        "as coded: coef holds the effect, var its sampling variance".to_string()
    } else {
        format!(
            "{}: {}{}",
            b.transform.label(),
            b.transform.get().formula(),
            if b.transform_chosen {
                ""
            } else {
                " (the default for these coefficients)"
            }
        )
    };
    line(o, "analysis scale", &scale);
    match dependence(b) {
        Some(d) if d.method == DependenceMethod::Multilevel => {
            line(o, "model", &multilevel_words(p, d));
            line(o, "intervals", &robust_words(p));
        }
        Some(d) => {
            let how = if d.method == DependenceMethod::Aggregate {
                format!(
                    "one composite per sample (its rows averaged, sampling correlation {} \
                     assumed), then {}",
                    fixed(d.sampling_correlation, 2),
                    model_words(p)
                )
            } else {
                format!(
                    "{}; rows of one sample or cluster taken as INDEPENDENT (intervals too \
                     narrow)",
                    model_words(p)
                )
            };
            line(o, "model", &how);
            line(o, "intervals", &interval_words(p));
        }
        None => {
            line(o, "model", &model_words(p));
            line(o, "intervals", &interval_words(p));
        }
    }
    if b.transform != TransformKind::None {
        let pi = p
            .prediction
            .interval()
            .map(|i| format!("; expected range {}", range(i.lower, i.upper, t4)))
            .unwrap_or_default();
        line(
            o,
            "on the analysis scale",
            &format!(
                "pooled {} (SE {}); CI {}{pi}",
                t4(p.estimate),
                t4(p.se),
                range(p.ci.lower, p.ci.upper, t4)
            ),
        );
    }
}

/// The model, its τ² estimator and whether the fit converged.
fn model_words(p: &PoolResult) -> String {
    match p.options.model {
        Model::Common => "common effect (τ² = 0 assumed)".to_string(),
        Model::Random(e) => {
            let how = match p.tau2.termination {
                Termination::ClosedForm => "closed form".to_string(),
                Termination::Converged => format!(
                    "converged in {} iteration{}",
                    p.tau2.iterations,
                    if p.tau2.iterations == 1 { "" } else { "s" }
                ),
                Termination::IterationLimit | Termination::Stalled => {
                    format!("NOT converged after {} iterations", p.tau2.iterations)
                }
            };
            format!(
                "random effects; τ² by {} ({}), {how}",
                e.label(),
                e.abbreviation()
            )
        }
    }
}

/// The multilevel model in words.
fn multilevel_words(p: &PoolResult, d: &DependenceResult) -> String {
    let how = match p.tau2.termination {
        Termination::IterationLimit | Termination::Stalled => {
            format!("NOT converged after {} iterations", p.tau2.iterations)
        }
        _ => format!("converged in {} iterations", p.tau2.iterations),
    };
    let by = match p.options.model {
        Model::Random(e) => e.abbreviation(),
        Model::Common => "REML",
    };
    format!(
        "multilevel random effects (between and within clusters) by {by}, {how}; sampling \
         errors within a sample correlated at {} (assumed)",
        fixed(d.sampling_correlation, 2)
    )
}

/// The inference of a multilevel fit.
fn robust_words(p: &PoolResult) -> String {
    let level = p.options.level.percent();
    match (p.inference, p.robust) {
        (Some(Inference::Robust), Some(r)) => format!(
            "cluster-robust (CR2) SE with {} Satterthwaite df; level {level}",
            fixed(r.df, 1)
        ),
        _ => match p.test.df {
            Some(df) => format!("model-based SE, t with {df} df (clusters − 1); level {level}"),
            None => format!("model-based SE, normal quantiles; level {level}"),
        },
    }
}

/// The interval method with its degrees of freedom and scale factor, and the level.
fn interval_words(p: &PoolResult) -> String {
    let opts = p.options;
    let df = p.test.df.unwrap_or(p.k.saturating_sub(1) as f64);
    match opts.ci {
        CiMethod::KnappHartung | CiMethod::KnappHartungFloor => format!(
            "Knapp–Hartung{} (t with {} df, SE scaled by {}); level {}",
            if opts.ci == CiMethod::KnappHartungFloor {
                ", factor at least 1"
            } else {
                ""
            },
            df,
            fixed(p.kh_scale.unwrap_or(1.0).sqrt(), 3),
            opts.level.percent()
        ),
        CiMethod::Wald => format!("Wald (normal quantiles); level {}", opts.level.percent()),
    }
}

/// Every pooled study.
fn studies(o: &mut String, b: &Benchmark) {
    let _ = writeln!(o);
    heading(o, "The pooled studies");
    let _ = writeln!(
        o,
        "  {:>5}  {:<30} {:>8} {:>7} {:>5} {:>10} {:>10} {:>7}",
        "row", "study", "coef", "n", "items", "scaled", "variance", "weight"
    );
    let dash = || "–".to_string();
    for s in &b.studies {
        let label: String = s.record.label.chars().take(30).collect();
        let _ = writeln!(
            o,
            "  {:>5}  {:<30} {:>8} {:>7} {:>5} {:>10} {:>10} {:>6}%",
            s.record.row,
            label,
            fixed(s.record.coef, 3),
            s.record.n.map(|n| n.to_string()).unwrap_or_else(dash),
            s.record.items.map(|n| n.to_string()).unwrap_or_else(dash),
            fixed(s.effect, 4),
            significant(s.variance, 3),
            fixed(s.weight_percent, 1)
        );
    }
}
