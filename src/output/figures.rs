//! The figures, built from the analysis's results (no model is refitted here: every line
//! and band is the fitted model's prediction, every interval the analysis's own).

use crate::benchmark::{Benchmark, Prepared};
use crate::correct::correlation::CorrelationCorrection;
use crate::dist::normal_quantile;
use crate::format::fixed;
use crate::metareg::Explanation;
use crate::metareg::spread::{ScoreSpread, bonett_scale};
use crate::placement::Placement;
use crate::plot::{
    BubbleAxes, BubblePoint, Figure, FitBand, ForestRow, Kind, SensitivitySeries, forest_capacity,
};
use crate::pool::{ModelFit, Predictive};
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
    let z = normal_quantile(b.pool.options.level.upper());
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
    let level = p.options.level.percent();
    let f3 = |x: f64| fixed(x, 3);
    Figure {
        name: "forest".into(),
        title: format!("Coded studies and the benchmark (k = {})", b.studies.len()),
        description: format!(
            "Each study's coefficient with its {level} interval ({} drawn{}); the pooled value \
             {} with its {level} confidence interval {} to {}{}.",
            rows.len(),
            if omitted > 0 {
                format!(", the {omitted} with the least weight left out of the drawing")
            } else {
                String::new()
            },
            f3(pooled.estimate),
            f3(pooled.lower),
            f3(pooled.upper),
            match prediction {
                Some((a, z)) => format!(
                    "; the expected range for {} ({level} prediction interval) {} to {}",
                    match p.dependence.as_ref().map(|d| d.method) {
                        Some(crate::pool::dependence::DependenceMethod::Multilevel) => {
                            "a new sample from a new cluster"
                        }
                        _ => "a new setting",
                    },
                    f3(a),
                    f3(z)
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
             precise at the top), with the pooled value {} and lines at ±1.96 standard \
             errors around it. An asymmetric cloud, with small studies on one side only, \
             suggests small-study effects or selective reporting.",
            b.transform.label(),
            fixed(b.pool.estimate, 3)
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

/// The fitted line with its confidence band and prediction band (where the model states
/// one) along a grid of x values; `row(x)` is the design row at x.
fn bands(
    fit: &ModelFit,
    xs: impl Iterator<Item = f64>,
    row: impl Fn(f64) -> Vec<f64>,
    map: impl Fn(f64) -> f64,
) -> Vec<FitBand> {
    let crit = fit.critical_value();
    let level = fit.options.level;
    xs.map(|x| {
        let x0 = row(x);
        let (centre, var) = fit.predict(&x0);
        let half = crit * var.sqrt();
        let ci = ordered(map(centre - half), map(centre + half));
        let pi = Predictive::new_setting(fit, &x0).map(|p| {
            let i = p.interval(level);
            ordered(map(i.lower), map(i.upper))
        });
        FitBand {
            x,
            fit: map(centre),
            ci,
            pi,
        }
    })
    .collect()
}

fn grid(lo: f64, hi: f64, n: usize) -> impl Iterator<Item = f64> {
    (0..n).map(move |i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
}

/// Coefficients against one numeric moderator, from the model with that moderator alone
/// (the analysis's marginal fit).
pub fn moderator(p: &Prepared, ex: &Explanation) -> Option<Figure> {
    let name = ex.design.moderators.first()?.name().to_string();
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
    let fit = bands(&ex.fit, grid(lo, hi, 60), |x| vec![1.0, x], |t| back(tr, t));
    let slope = &ex.fit.coefficients[1];
    Some(Figure {
        name: format!("moderator-{}", file_safe(&name)),
        title: format!("Coefficients against {name}"),
        description: format!(
            "Each study's coefficient against {name} (marker area by weight), with the fitted \
             line of the model with {name} alone, its {lvl} confidence band{}; slope {} on \
             the {} scale (p {}).",
            if fit.iter().any(|f| f.pi.is_some()) {
                format!(" and the {} prediction band", level.percent())
            } else {
                String::new()
            },
            fixed(slope.estimate, 4),
            p.transform.label(),
            crate::format::p_value(slope.p),
            lvl = level.percent()
        )
        .replace(" ;", ";"),
        size: (760, 520),
        kind: Kind::Bubble {
            points,
            fit,
            reference: None,
            axes: BubbleAxes::Linear,
            x_label: name,
            y_label: scale_label(p.transform),
        },
    })
}

/// Most ticks on a score-spread axis.
const SPREAD_TICKS_MAX: usize = 7;

/// Round values for the score-spread axes that cover the data: SDs from the series 1,
/// 1.2, 1.5, 2, 2.5, 3, 4, 5, 6, 8 (times a power of ten), thinned to at most seven over
/// the SDs' range (with one beyond each end), and coefficients at familiar values.
fn spread_ticks(sds: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let (lo, hi) = sds
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let mut sd_ticks = Vec::new();
    if lo.is_finite() && lo > 0.0 && hi >= lo {
        // The coarsest set of round values that puts at least three ticks inside the
        // data's range (the ends of the drawn range fall just outside it).
        let coarse: &[f64] = &[1.0, 2.0, 5.0];
        let medium: &[f64] = &[1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0];
        let fine: Vec<f64> = (10..100).map(|m| f64::from(m) / 10.0).collect();
        let finer: Vec<f64> = (100..1000).map(|m| f64::from(m) / 100.0).collect();
        for mantissas in [coarse, medium, &fine[..], &finer[..]] {
            sd_ticks = round_values_within(lo, hi, mantissas);
            if sd_ticks.len() >= 3 {
                break;
            }
        }
        let step = sd_ticks.len().div_ceil(SPREAD_TICKS_MAX).max(1);
        sd_ticks = sd_ticks.into_iter().step_by(step).collect();
    }
    let coefficient_ticks = vec![
        0.0, 0.3, 0.5, 0.6, 0.7, 0.75, 0.8, 0.85, 0.9, 0.93, 0.95, 0.97, 0.98, 0.99, 0.995,
    ];
    (sd_ticks, coefficient_ticks)
}

/// The values m × 10^d (m from `mantissas`) between `lo` and `hi`.
fn round_values_within(lo: f64, hi: f64, mantissas: &[f64]) -> Vec<f64> {
    let mut out = Vec::new();
    let mut decade = 10f64.powf(lo.log10().floor());
    while decade <= hi && out.len() < 4000 {
        for m in mantissas {
            // Rounded so that 1.2 × 10 prints as 12, not 12.000000000000002.
            let v = (m * decade * 1e9).round() / 1e9;
            if v >= lo && v <= hi {
                out.push(v);
            }
        }
        decade *= 10.0;
    }
    out
}

/// The score-spread model on readable axes (score SD on a log scale, the coefficient on
/// the −ln(1 − coefficient) scale, labelled as coefficients, higher up for a higher
/// coefficient): the fitted line of the analysis's model at the other terms' weighted
/// means, and each study's coefficient adjusted to those means by the same model, so that
/// points and line come from one model.
pub fn score_spread(p: &Prepared, s: &ScoreSpread) -> Figure {
    let means = other_term_means(s);
    let points = adjusted_points(p, s, &means);
    let (lo, hi) = points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), q| {
            (a.min(q.x), b.max(q.x))
        });
    let row = |l: f64| {
        let mut x0 = means.clone();
        x0[0] = 1.0;
        x0[1] = l;
        x0
    };
    let fit = bands(&s.fit, grid(lo, hi, 60), row, |t| -t);
    // Slope −2 (on ln(1 − coefficient)) through the fitted value at the weighted mean
    // ln(SD), drawn upside down like everything else.
    let mean_l = points.iter().map(|q| q.x * q.weight).sum::<f64>()
        / points.iter().map(|q| q.weight).sum::<f64>().max(1e-300);
    let at_mean = s.fit.predict(&row(mean_l)).0;
    let reference = vec![
        (lo, -(at_mean - 2.0 * (lo - mean_l))),
        (hi, -(at_mean - 2.0 * (hi - mean_l))),
    ];
    let (sd_ticks, coefficient_ticks) = spread_ticks(&s.sds);
    Figure {
        name: "score-spread".into(),
        title: "Coefficients and the spread of scores".into(),
        description: spread_description(s),
        size: (760, 520),
        kind: Kind::Bubble {
            points,
            fit,
            reference: Some((
                reference,
                "the same error variance everywhere (slope −2)".into(),
            )),
            axes: BubbleAxes::Spread {
                sd_ticks,
                coefficient_ticks,
            },
            x_label: format!("score SD ({} metric)", s.metric.label()),
            y_label: "reliability coefficient".into(),
        },
    }
}

/// The weighted means of the score-spread model's other columns (ln items, other
/// moderators); 0 for the intercept and ln(SD), which the figure sets itself.
fn other_term_means(s: &ScoreSpread) -> Vec<f64> {
    let weights = &s.fit.weights;
    let sum_w: f64 = weights.iter().sum();
    (0..s.fit.p)
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
        .collect()
}

/// Each study at its ln(SD), its value adjusted to the other terms' means by the same
/// model, drawn upside down (−ln(1 − coefficient) rises with the coefficient).
fn adjusted_points(p: &Prepared, s: &ScoreSpread, means: &[f64]) -> Vec<BubblePoint> {
    let by_row: std::collections::HashMap<usize, &crate::sheet::StudyRecord> =
        p.records.iter().map(|r| (r.row, r)).collect();
    s.rows
        .iter()
        .enumerate()
        .zip(&s.sds)
        .zip(&s.fit.weights)
        .filter_map(|(((i, row), sd), &w)| {
            let r = by_row.get(row)?;
            let (y, _) = bonett_scale(r).ok()?;
            let adjust: f64 = (2..s.fit.p)
                .map(|j| s.fit.beta[j] * (s.x[(i, j)] - means[j]))
                .sum();
            Some(BubblePoint {
                x: sd.ln(),
                y: -(y - adjust),
                weight: w,
            })
        })
        .collect()
}

/// The score-spread figure's description: what is drawn, from which model.
fn spread_description(s: &ScoreSpread) -> String {
    let mut means: Vec<String> = Vec::new();
    let mut mixes: Vec<String> = Vec::new();
    if s.log_items_column {
        means.push("ln(items)".to_string());
    }
    for m in &s.others.moderators {
        match m {
            crate::metareg::Moderator::Numeric { name, .. } => means.push(name.clone()),
            crate::metareg::Moderator::Categorical { name, .. } => mixes.push(name.clone()),
        }
    }
    let mut to = Vec::new();
    if !means.is_empty() {
        to.push(format!("the means of {}", crate::format::and_list(&means)));
    }
    if !mixes.is_empty() {
        to.push(format!(
            "the benchmark's mix of {}",
            crate::format::and_list(&mixes)
        ));
    }
    let others = if to.is_empty() {
        String::new()
    } else {
        format!(
            "; studies adjusted to {} by the same model",
            to.join(" and ")
        )
    };
    format!(
        "Each study's coefficient against its score SD ({} metric, log scale), marker area by \
         weight, with the score-spread model's fitted line (slope {} of ln(1 − coefficient) on \
         ln(SD), {} CI {} to {}) and its bands{others}; the orange line has slope −2, what the \
         same error variance in every sample implies.",
        s.metric.label(),
        fixed(s.slope.estimate, 2),
        s.fit.options.level.percent(),
        fixed(s.slope.ci.lower, 2),
        fixed(s.slope.ci.upper, 2),
    )
}

/// Where the new study falls: the distribution of an observed coefficient in a new
/// setting like its own, with the expected range and the study's value.
pub fn placement(pl: &Placement) -> Figure {
    let tr = pl.transform.get();
    let level = pl.fit.options.level;
    let dist = pl.observed_distribution;
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
        let dens = if t0.is_finite() && d.is_finite() {
            dist.density(t0) * d
        } else {
            0.0
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
             error), the expected range {} to {} shaded ({}), the expected value {}, and the \
             new study's {} (percentile {:.0}).",
            fixed(a, 3),
            fixed(b, 3),
            level.percent(),
            fixed(pl.expected, 3),
            fixed(pl.study.coef, 3),
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
            "The observed correlation {} corrected for unreliability, over a range of \
             reliabilities of x (horizontal) and of y (one line each); gaps mark impossible \
             corrections (beyond ±1). The point marks the reliabilities used ({} and {}).",
            fixed(c.observed, 3),
            fixed(rel_x, 2),
            fixed(rel_y, 2)
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
    use crate::level::Level;
    use crate::metareg::Centring;
    use crate::placement::{Conditions, NewStudy, place};
    use crate::pool::FitOptions;
    use crate::sheet::{CoefType, read_coding_sheet};

    /// The score SD axis has at least three round ticks inside the data, whatever its
    /// range (12 to 19 had only 12 and 15 before).
    #[test]
    fn spread_ticks_cover_the_data() {
        for (lo, hi) in [
            (12.0, 19.0),
            (0.45, 0.9),
            (8.0, 95.0),
            (1.02, 1.08),
            (150.0, 420.0),
        ] {
            let (ticks, _) = spread_ticks(&[lo, (lo + hi) / 2.0, hi]);
            assert!(ticks.len() >= 3, "{lo}..{hi}: {ticks:?}");
            assert!(ticks.len() <= SPREAD_TICKS_MAX, "{lo}..{hi}: {ticks:?}");
            assert!(ticks.iter().all(|t| *t >= lo && *t <= hi), "{ticks:?}");
        }
        let (t, _) = spread_ticks(&[12.0, 19.0]);
        assert_eq!(t, [12.0, 14.0, 16.0, 18.0]);
    }

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
            level: Level::new(0.9).unwrap(),
            tau2_interval: false,
            dependence: Default::default(),
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
        let at = Default::default();
        let cond = Conditions {
            moderators: &[],
            at: &at,
            centring: Centring::Means,
            spread_metric: None,
            in_cluster: None,
        };
        let pl = place(&p, &study, &cond, &fit).unwrap();
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
