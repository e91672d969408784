//! The report's figures, built from the analyses' results.

use crate::benchmark::{Benchmark, Prepared};
use crate::correct::correlation::CorrelationCorrection;
use crate::dist::{normal_quantile, t_quantile};
use crate::error::Result;
use crate::metareg::spread::{ScoreSpread, bonett_scale};
use crate::metareg::{ModeratorSpec, build_design, explain};
use crate::placement::Placement;
use crate::plot::{
    BubblePoint, Figure, FitBand, ForestRow, Kind, SensitivitySeries, forest_capacity,
};
use crate::pool::FitOptions;
use crate::transform::{CoefficientTransform, TransformKind, Transformed};

/// Back-transform a value, or keep it when the transform has no coefficient scale.
fn back(tr: &dyn CoefficientTransform, t: f64) -> f64 {
    tr.back(Transformed(t)).map_or(t, |c| c.0)
}

fn ordered(a: f64, b: f64) -> (f64, f64) {
    if a <= b { (a, b) } else { (b, a) }
}

/// The axis label of the coefficient scale.
fn scale_label(kind: TransformKind) -> String {
    if kind == TransformKind::None {
        "effect (as coded)".into()
    } else {
        "reliability coefficient".into()
    }
}

/// The coded studies with their 95% intervals, the pooled value and the expected range.
pub fn forest(b: &Benchmark) -> Figure {
    let tr = b.transform.get();
    let study_level = b.pool.options.level;
    let z = normal_quantile(0.5 + study_level / 2.0);
    // Study intervals on the coefficient scale end at 1, as every other interval does.
    let top = if b.transform == TransformKind::None {
        f64::INFINITY
    } else {
        crate::transform::COEFFICIENT_MAX
    };
    // The heaviest studies when there are too many to draw, in sheet order.
    let mut order: Vec<usize> = (0..b.studies.len()).collect();
    let cap = forest_capacity();
    if order.len() > cap {
        order.sort_by(|&i, &j| {
            b.studies[j]
                .weight_percent
                .total_cmp(&b.studies[i].weight_percent)
        });
        order.truncate(cap);
        order.sort_unstable();
    }
    let rows: Vec<ForestRow> = order
        .iter()
        .map(|&i| {
            let s = &b.studies[i];
            let half = z * s.variance.sqrt();
            let (lower, upper) = ordered(back(tr, s.effect - half), back(tr, s.effect + half));
            let (lower, upper) = (lower.min(top), upper.min(top));
            ForestRow {
                label: s.record.label.clone(),
                estimate: back(tr, s.effect),
                lower,
                upper,
                weight: s.weight_percent,
            }
        })
        .collect();
    let p = &b.pool;
    let (lower, upper) = ordered(back(tr, p.ci.lower), back(tr, p.ci.upper));
    let pooled = ForestRow {
        label: "pooled".into(),
        estimate: back(tr, p.estimate),
        lower,
        upper,
        weight: 0.0,
    };
    let prediction = p
        .prediction
        .interval()
        .map(|i| ordered(back(tr, i.lower), back(tr, i.upper)));
    let omitted = b.studies.len() - rows.len();
    let height = 140 + 22 * (rows.len() as u32 + 3);
    let level = 100.0 * p.options.level;
    Figure {
        name: "forest".into(),
        title: format!("Coded studies and the benchmark (k = {})", b.studies.len()),
        description: format!(
            "Each study's coefficient with its {level:.0}% interval ({} drawn{}); the pooled value \
             {:.3} with its {level:.0}% confidence interval {:.3} to {:.3}{}.",
            rows.len(),
            if omitted > 0 {
                format!(", the {omitted} with the least weight left out of the drawing")
            } else {
                String::new()
            },
            pooled.estimate,
            pooled.lower,
            pooled.upper,
            match prediction {
                Some((a, b)) => format!(
                    "; the expected range for a new setting ({level:.0}% prediction interval) \
                     {a:.3} to {b:.3}"
                ),
                None => String::new(),
            }
        ),
        size: (820, height.min(1600)),
        kind: Kind::Forest {
            rows,
            pooled,
            prediction,
            omitted,
            x_label: scale_label(b.transform),
        },
    }
}

/// Most studies drawn in the precision plot.
const PRECISION_POINTS_MAX: usize = 5000;

/// Transformed coefficients against their standard errors (small-study patterns).
pub fn funnel(b: &Benchmark) -> Figure {
    // Very large benchmarks: every m-th study, so the figure stays a readable size.
    let step = b.studies.len().div_ceil(PRECISION_POINTS_MAX).max(1);
    let points: Vec<(f64, f64)> = b
        .studies
        .iter()
        .step_by(step)
        .map(|s| (s.effect, s.variance.sqrt()))
        .collect();
    let drawn = if step > 1 {
        format!(
            " ({} of the {} studies drawn: every {step}th in sheet order)",
            points.len(),
            b.studies.len()
        )
    } else {
        String::new()
    };
    Figure {
        name: "precision".into(),
        title: "Coefficients against their standard errors".into(),
        description: format!(
            "Each study's value on the {} scale against its standard error{drawn} (most \
             precise at the top), with the pooled value {:.3} and lines at ±1.96 standard \
             errors around it. An asymmetric cloud, with small studies on one side only, \
             suggests small-study effects or selective reporting.",
            b.transform.name(),
            b.pool.estimate
        ),
        size: (760, 520),
        kind: Kind::Funnel {
            points,
            centre: b.pool.estimate,
            x_label: b.transform.get().formula().to_string(),
            y_label: "standard error".into(),
        },
    }
}

/// Points and the fitted line with its bands along a grid of x values.
fn bands(
    xs: impl Iterator<Item = f64>,
    predict: impl Fn(f64) -> (f64, f64),
    crit: f64,
    pi_t: Option<f64>,
    tau2: f64,
    map: impl Fn(f64) -> f64,
) -> Vec<FitBand> {
    xs.map(|x| {
        let (fit, var) = predict(x);
        let ci = ordered(map(fit - crit * var.sqrt()), map(fit + crit * var.sqrt()));
        let pi = pi_t.map(|t| {
            ordered(
                map(fit - t * (var + tau2).sqrt()),
                map(fit + t * (var + tau2).sqrt()),
            )
        });
        FitBand {
            x,
            fit: map(fit),
            ci,
            pi,
        }
    })
    .collect()
}

/// The t quantile of a prediction band, or `None` where the pooled results give no
/// prediction interval either (common-effect model, or no degrees of freedom left).
fn prediction_t(fit: &crate::pool::ModelFit) -> Option<f64> {
    let df = fit.k as f64 - fit.p as f64 - 1.0;
    let random = matches!(fit.options.model, crate::pool::Model::Random(_));
    (random && df >= 1.0).then(|| t_quantile(0.5 + fit.options.level / 2.0, df))
}

fn grid(lo: f64, hi: f64, n: usize) -> impl Iterator<Item = f64> {
    (0..n).map(move |i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
}

/// Coefficients against one numeric moderator, from the model with that moderator alone.
pub fn moderator(p: &Prepared, name: &str, options: &FitOptions) -> Result<Figure> {
    let design = build_design(p, &[ModeratorSpec::auto(name)])?;
    let ex = explain(p, design, options)?;
    let tr = p.transform.get();
    let used = &ex.design.used;
    let xs: Vec<f64> = (0..used.len()).map(|i| ex.design.x[(i, 1)]).collect();
    let points: Vec<BubblePoint> = used
        .iter()
        .zip(&xs)
        .zip(&ex.fit.weights)
        .map(|((&i, &x), &w)| BubblePoint {
            x,
            y: back(tr, p.y[i]),
            weight: w,
        })
        .collect();
    let (lo, hi) = xs
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let level = ex.fit.options.level;
    let fit = bands(
        grid(lo, hi, 60),
        |x| ex.fit.predict(&[1.0, x]),
        ex.fit.critical_value(),
        prediction_t(&ex.fit),
        ex.fit.tau2.tau2,
        |t| back(tr, t),
    );
    let slope = &ex.fit.coefficients[1];
    Ok(Figure {
        name: format!("moderator-{}", file_safe(name)),
        title: format!("Coefficients against {name}"),
        description: format!(
            "Each study's coefficient against {name} (marker area by weight), with the fitted \
             line of the model with {name} alone, its {lvl:.0}% confidence band and the \
             {lvl:.0}% prediction band; slope {:.4} on the {} scale (p = {:.3}).",
            slope.estimate,
            p.transform.name(),
            slope.p,
            lvl = 100.0 * level
        ),
        size: (760, 520),
        kind: Kind::Bubble {
            points,
            fit,
            reference: None,
            x_label: name.to_string(),
            y_label: scale_label(p.transform),
        },
    })
}

/// The score-spread model on the Bonett scale with the slope −2 reference.
pub fn score_spread(p: &Prepared, s: &ScoreSpread) -> Figure {
    let by_row: std::collections::HashMap<usize, &crate::sheet::StudyRecord> =
        p.records.iter().map(|r| (r.row, r)).collect();
    let weights = &s.fit.weights;
    let points: Vec<BubblePoint> = s
        .rows
        .iter()
        .zip(&s.sds)
        .zip(weights)
        .filter_map(|((row, sd), &w)| {
            let r = by_row.get(row)?;
            let (y, _) = bonett_scale(r).ok()?;
            Some(BubblePoint {
                x: sd.ln(),
                y,
                weight: w,
            })
        })
        .collect();
    let (lo, hi) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), q| {
            (a.min(q.x), b.max(q.x))
        });
    // The line at the model's other columns' weighted means (ln items, other moderators).
    let x = &s.fit;
    let sum_w: f64 = weights.iter().sum();
    let means: Vec<f64> = (0..x.p)
        .map(|j| {
            if j < 2 {
                return 0.0;
            }
            s.x.column(j)
                .iter()
                .zip(weights)
                .map(|(v, w)| v * w)
                .sum::<f64>()
                / sum_w
        })
        .collect();
    let predict = |l: f64| {
        let mut x0 = means.clone();
        x0[0] = 1.0;
        x0[1] = l;
        s.fit.predict(&x0)
    };
    let level = s.fit.options.level;
    let fit = bands(
        grid(lo, hi, 60),
        predict,
        s.fit.critical_value(),
        prediction_t(&s.fit),
        s.fit.tau2.tau2,
        |t| t,
    );
    // Slope −2 through the fitted value at the weighted mean ln(SD).
    let mean_l = points.iter().map(|q| q.x * q.weight).sum::<f64>()
        / points.iter().map(|q| q.weight).sum::<f64>().max(1e-300);
    let at_mean = predict(mean_l).0;
    let reference = vec![
        (lo, at_mean - 2.0 * (lo - mean_l)),
        (hi, at_mean - 2.0 * (hi - mean_l)),
    ];
    Figure {
        name: "score-spread".into(),
        title: "Coefficients and the spread of scores".into(),
        description: format!(
            "Each study's ln(1 − coefficient) against the natural log of its score SD ({} \
             metric), marker area by weight, with the fitted line (slope {:.2}, {lvl:.0}% CI \
             {:.2} to {:.2}) and its bands; the orange line has slope −2, what a constant \
             error variance implies.",
            s.metric.name(),
            s.slope.estimate,
            s.slope.ci.lower,
            s.slope.ci.upper,
            lvl = 100.0 * level
        ),
        size: (760, 520),
        kind: Kind::Bubble {
            points,
            fit,
            reference: Some((reference, "slope −2 (constant error variance)".into())),
            x_label: "ln(score SD)".into(),
            y_label: "ln(1 − coefficient)".into(),
        },
    }
}

/// Where the new study falls: the distribution of an observed coefficient in a new
/// setting like its own, with the expected range and the study's value.
pub fn placement(pl: &Placement) -> Figure {
    let tr = pl.transform.get();
    let level = pl.fit.options.level;
    let tq = t_quantile(0.5 + level / 2.0, pl.pi_df.max(1.0));
    let m = pl.expected_t;
    let scale = (pl.pi_observed_t.upper - pl.pi_observed_t.lower) / (2.0 * tq);
    let t = statrs::distribution::StudentsT::new(0.0, 1.0, pl.pi_df.max(1.0)).ok();
    // Density on the coefficient scale: the t density of the transformed value times
    // |dT/dc|, evaluated on a grid of coefficients.
    let (a, b) = (pl.pi_observed.lower, pl.pi_observed.upper);
    let width = (b - a).max(1e-3);
    let lo = a - 0.35 * width;
    let hi = b + 0.35 * width;
    let lo = lo.min(pl.study.coef - 0.05 * width);
    let hi = hi.max(pl.study.coef + 0.05 * width);
    // Coefficients end at 1: the density is drawn up to just below it.
    let hi = if pl.transform == TransformKind::None {
        hi
    } else {
        hi.min(1.0 - 1e-6)
    };
    let lo = if lo < hi { lo } else { hi - 0.1 };
    let mut curve = Vec::new();
    for c in grid(lo, hi, 240) {
        let f = |c: f64| tr.forward(crate::transform::Coefficient(c)).0;
        let (t0, h) = (f(c), 1e-6 * width);
        let d = ((f(c + h) - f(c - h)) / (2.0 * h)).abs();
        let dens = match &t {
            Some(t) if t0.is_finite() && d.is_finite() => {
                use statrs::distribution::Continuous;
                t.pdf((t0 - m) / scale) / scale * d
            }
            _ => 0.0,
        };
        if dens.is_finite() {
            curve.push((c, dens));
        }
    }
    Figure {
        name: "placement".into(),
        title: "Where the new study falls".into(),
        description: format!(
            "The distribution of the coefficient a study like the new one can expect to \
             observe (benchmark uncertainty, between-setting spread and its own sampling \
             error), the expected range {:.3} to {:.3} shaded ({:.0}%), the expected value \
             {:.3}, and the new study's {:.3} (percentile {:.0}).",
            a,
            b,
            100.0 * level,
            pl.expected,
            pl.study.coef,
            pl.percentile
        ),
        size: (760, 460),
        kind: Kind::Placement {
            curve,
            range: (a, b),
            expected: pl.expected,
            observed: pl.study.coef,
            x_label: scale_label(pl.transform),
        },
    }
}

/// The corrected correlation over the reliability of x, one line per reliability of y.
pub fn sensitivity(c: &CorrelationCorrection, rel_x: f64, rel_y: f64) -> Figure {
    let mut ys: Vec<f64> = c.sensitivity.iter().map(|s| s.rel_y).collect();
    ys.sort_by(|a, b| a.total_cmp(b));
    ys.dedup_by(|a, b| (*a - *b).abs() < 1e-12);
    let series: Vec<SensitivitySeries> = ys
        .iter()
        .map(|&ry| {
            let mut points: Vec<(f64, Option<f64>)> = c
                .sensitivity
                .iter()
                .filter(|s| (s.rel_y - ry).abs() < 1e-12)
                .map(|s| (s.rel_x, s.corrected))
                .collect();
            points.sort_by(|a, b| a.0.total_cmp(&b.0));
            SensitivitySeries {
                label: format!("reliability of y {ry:.2}"),
                points,
            }
        })
        .collect();
    Figure {
        name: "correction".into(),
        title: "The corrected correlation and the reliabilities".into(),
        description: format!(
            "The observed correlation {:.3} corrected for unreliability, over a range of \
             reliabilities of x (horizontal) and of y (one line each); gaps mark impossible \
             corrections (beyond ±1). The point marks the reliabilities used ({rel_x:.2} and \
             {rel_y:.2}).",
            c.observed
        ),
        size: (760, 500),
        kind: Kind::Sensitivity {
            series,
            marker: c.admissible.then_some((rel_x, c.corrected_value)),
            x_label: "reliability of x".into(),
            y_label: "corrected correlation".into(),
        },
    }
}

/// A name usable in a file name.
pub fn file_safe(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    let s = s.trim_matches('-').to_string();
    if s.is_empty() { "moderator".into() } else { s }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::benchmark::{BenchmarkOptions, prepare};
    use crate::placement::{NewStudy, place};
    use crate::sheet::{CoefType, read_coding_sheet};

    /// The placement curve is the t distribution of the observed value carried to the
    /// coefficient scale: its area over the expected range is the interval's level (the t
    /// probability between ±t_q by definition; statrs for the density), to the accuracy of
    /// the trapezoid rule on the drawing grid.
    #[test]
    fn placement_density_holds_the_level_over_the_range() {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("datasets-demo/candor-benchmark.csv");
        let opts = BenchmarkOptions::default();
        let p = prepare(
            read_coding_sheet(&path, &Default::default()).unwrap(),
            &opts,
        )
        .unwrap();
        let fit = FitOptions {
            model: opts.pool.model,
            ci: opts.pool.ci,
            level: 0.9,
            tau2_interval: false,
        };
        let study = NewStudy {
            coef: 0.72,
            coef_type: CoefType::Alpha,
            n: 150,
            items: Some(10),
            sd: None,
            sd_metric: None,
            scale_min: None,
            scale_max: None,
        };
        let pl = place(&p, &study, &[], &Default::default(), None, &fit).unwrap();
        let Kind::Placement { curve, range, .. } = placement(&pl).kind else {
            panic!("not a placement figure");
        };
        let inside: Vec<&(f64, f64)> = curve
            .iter()
            .filter(|(c, _)| *c >= range.0 && *c <= range.1)
            .collect();
        let area: f64 = inside
            .windows(2)
            .map(|w| (w[1].0 - w[0].0) * (w[0].1 + w[1].1) / 2.0)
            .sum();
        // The grid stops up to one step short of each end of the range.
        assert!((area - 0.9).abs() < 0.02, "area {area}");
        let total: f64 = curve
            .windows(2)
            .map(|w| (w[1].0 - w[0].0) * (w[0].1 + w[1].1) / 2.0)
            .sum();
        assert!(total > area && total <= 1.0 + 1e-3, "total {total}");
    }
}
