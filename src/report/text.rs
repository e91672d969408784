//! The readable summary printed by `relyard pool`.

use super::INDIVIDUAL_DECISIONS_CAUTION;
use super::format::{fixed, p_value, percent_level, range, significant, thousands, wrap};
use super::paragraph::Paragraph;
use crate::benchmark::{Benchmark, describe_types};
use crate::pool::{CiMethod, Model, Prediction, Termination};
use std::fmt::Write;

/// Width the text is wrapped to.
const WIDTH: usize = 88;

/// Render the benchmark summary. `show_studies` adds a table of the pooled studies.
pub fn benchmark_summary(b: &Benchmark, paragraph: &Paragraph, show_studies: bool) -> String {
    let p = &b.pool;
    let opts = p.options;
    let level = percent_level(opts.level);
    let tr = b.transform.get();
    let mut o = String::new();
    let rule = "─".repeat(WIDTH.min(72));

    if b.coefficient.is_some() {
        let _ = writeln!(o, "Reliability benchmark from {} coded studies", p.k);
    } else {
        let _ = writeln!(o, "Pooled effects from {} studies", p.k);
    }
    let _ = writeln!(o, "{rule}");
    let _ = writeln!(
        o,
        "  sheet         {} ({}; {} rows read, {} pooled, {} left out)",
        b.file,
        crate::report::format::sheet_kind(b.delimiter),
        b.rows_read,
        b.studies.len(),
        b.skipped.len()
    );
    if b.coefficient.is_some() {
        let counts: Vec<String> = b
            .coef_types
            .iter()
            .map(|(t, n)| format!("{t} {n}"))
            .collect();
        let _ = writeln!(o, "  coefficients  {}", counts.join(", "));
    }
    let chosen = if b.transform_chosen {
        ""
    } else {
        " (default for these coefficients)"
    };
    if b.transform == crate::transform::TransformKind::None {
        let _ = writeln!(
            o,
            "  scale         as given: coef holds the effect, var its sampling variance"
        );
    } else {
        let _ = writeln!(
            o,
            "  scale         {}: {}{chosen}",
            b.transform.label(),
            tr.formula()
        );
    }
    let model = match opts.model {
        Model::Common => "common effect (τ² = 0 assumed)".to_string(),
        Model::Random(e) => {
            let how = match p.tau2.termination {
                Termination::ClosedForm => "closed form".to_string(),
                Termination::Converged => format!(
                    "converged in {} iteration{}",
                    p.tau2.iterations,
                    if p.tau2.iterations == 1 { "" } else { "s" }
                ),
                Termination::IterationLimit => {
                    format!("NOT converged after {} iterations", p.tau2.iterations)
                }
            };
            format!(
                "random effects; τ² by {} ({}), {how}",
                e.label(),
                e.abbreviation()
            )
        }
    };
    let _ = writeln!(o, "  model         {model}");
    let interval = match opts.ci {
        CiMethod::KnappHartung | CiMethod::KnappHartungFloor => format!(
            "Knapp–Hartung{} (t with {} df, SE scaled by {})",
            if opts.ci == CiMethod::KnappHartungFloor {
                ", factor at least 1"
            } else {
                ""
            },
            p.k - 1,
            fixed(p.kh_scale.unwrap_or(1.0).sqrt(), 3)
        ),
        CiMethod::Wald => "Wald (normal quantiles)".to_string(),
    };
    let _ = writeln!(o, "  interval      {interval}; level {level}");
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
    let _ = writeln!(o, "  total N       {n_text}");
    let _ = writeln!(o);

    // Main table.
    let head_coef = if b.coefficient.is_some() {
        "coefficient"
    } else {
        ""
    };
    let _ = writeln!(
        o,
        "  {:<28}{:<22}transformed ({})",
        "",
        head_coef,
        b.transform.name()
    );
    let t = |x: f64| significant_fixed(x);
    let coef = b.coefficient;
    let _ = writeln!(
        o,
        "  {:<28}{:<22}{}   (SE {})",
        "pooled value",
        coef.map(|c| fixed(c.estimate, 3)).unwrap_or_default(),
        t(p.estimate),
        t(p.se)
    );
    let _ = writeln!(
        o,
        "  {:<28}{:<22}{} to {}",
        format!("{level} confidence interval"),
        coef.map(|c| format!("{} to {}", fixed(c.ci.lower, 3), fixed(c.ci.upper, 3)))
            .unwrap_or_default(),
        t(p.ci.lower),
        t(p.ci.upper)
    );
    match p.prediction {
        Prediction::Available { interval, df } => {
            let _ = writeln!(
                o,
                "  {:<28}{:<22}{} to {}   (t with {} df)",
                format!("{level} prediction interval"),
                coef.and_then(|c| c.pi)
                    .map(|i| format!("{} to {}", fixed(i.lower, 3), fixed(i.upper, 3)))
                    .unwrap_or_default(),
                t(interval.lower),
                t(interval.upper),
                df
            );
        }
        Prediction::TooFewStudies => {
            let _ = writeln!(
                o,
                "  {:<28}none: k = 2 leaves the t quantile no degrees of freedom",
                format!("{level} prediction interval")
            );
        }
        Prediction::CommonEffect => {
            let _ = writeln!(
                o,
                "  {:<28}none: the common-effect model assumes one true coefficient",
                format!("{level} prediction interval")
            );
        }
    }
    let _ = writeln!(o);

    let _ = writeln!(o, "  Heterogeneity (transformed scale)");
    match opts.model {
        Model::Random(_) => {
            let ci = p
                .tau2_ci
                .map(|c| {
                    let zero = if c.upper_at_zero {
                        "; both ends at 0"
                    } else {
                        ""
                    };
                    let r = range(c.lower, c.upper, |x| significant(x, 3));
                    format!("   {level} CI {r} (Q-profile){zero}")
                })
                .unwrap_or_default();
            let _ = writeln!(o, "    τ²  {}{ci}", significant(p.tau2.tau2, 3));
            let _ = writeln!(o, "    τ   {}", significant(p.tau2.tau2.sqrt(), 3));
            let i2_ci = p
                .i2_ci
                .map(|c| {
                    format!(
                        "   {level} CI {}",
                        range(c.lower, c.upper, |x| fixed(x, 1) + "%")
                    )
                })
                .unwrap_or_default();
            let _ = writeln!(o, "    I²  {}%{i2_ci}", fixed(p.i2, 1));
        }
        Model::Common => {
            let _ = writeln!(o, "    τ²  0 (assumed by the common-effect model)");
            let _ = writeln!(o, "    I²  {}% (from Q)", fixed(p.i2, 1));
        }
    }
    let _ = writeln!(o, "    H²  {}", fixed(p.h2, 2));
    let _ = writeln!(
        o,
        "    Q   {} on {} df, p {}",
        fixed(p.heterogeneity.q, 2),
        p.heterogeneity.df,
        p_value(p.heterogeneity.p)
    );

    if show_studies {
        let _ = writeln!(o);
        let _ = writeln!(
            o,
            "  {:>5}  {:<30} {:>8} {:>7} {:>5} {:>10} {:>10} {:>7}",
            "row", "study", "coef", "n", "items", "effect", "variance", "weight"
        );
        for s in &b.studies {
            let label: String = s.record.label.chars().take(30).collect();
            let _ = writeln!(
                o,
                "  {:>5}  {:<30} {:>8} {:>7} {:>5} {:>10} {:>10} {:>6}%",
                s.record.row,
                label,
                fixed(s.record.coef, 3),
                s.record
                    .n
                    .map(|n| n.to_string())
                    .unwrap_or_else(|| "–".into()),
                s.record
                    .items
                    .map(|n| n.to_string())
                    .unwrap_or_else(|| "–".into()),
                fixed(s.effect, 4),
                significant(s.variance, 3),
                fixed(s.weight_percent, 1)
            );
        }
    }

    if !b.skipped.is_empty() {
        let _ = writeln!(o);
        let _ = writeln!(o, "  Rows left out (--skip-invalid)");
        for s in &b.skipped {
            let _ = writeln!(o, "    row {}: {}", s.row, s.reasons.join("; "));
        }
    }

    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "For your paper (adapt as needed; {} reported {})",
        p.k,
        if b.coefficient.is_some() {
            describe_types(b) + " coefficients"
        } else {
            "effects".into()
        }
    );
    o.push_str(&wrap(&paragraph.text, WIDTH - 2, "  "));
    let _ = writeln!(o);
    let _ = writeln!(o, "References");
    for r in &paragraph.references {
        let w = wrap(r, WIDTH - 4, "    ");
        o.push_str("  ");
        o.push_str(w.trim_start());
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "Caution");
    o.push_str(&wrap(INDIVIDUAL_DECISIONS_CAUTION, WIDTH - 2, "  "));
    o
}

/// Four significant digits for values on the transformed scale.
fn significant_fixed(x: f64) -> String {
    if x.abs() >= 0.001 || x == 0.0 {
        fixed(x, 4)
    } else {
        significant(x, 3)
    }
}
