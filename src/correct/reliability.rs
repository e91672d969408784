//! A reliability as the correction uses it: a point value, an estimate with its sampling
//! distribution, or a benchmark's predictive distribution for a new setting.

use crate::benchmark::{BenchmarkOptions, Prepared, prepare};
use crate::dist::t_quantile;
use crate::error::{Error, Result};
use crate::level::Level;
use crate::metareg::at::{FitAt, fit_at};
use crate::metareg::{Centring, ModeratorSpec};
use crate::pool::{FitOptions, Predictive};
use crate::random::draw;
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::sheet::{CoefType, SheetOptions, read_coding_sheet};
use crate::transform::{TransformKind, Transformed};
use rand::Rng;
use std::collections::BTreeMap;
use std::path::PathBuf;

/// How a reliability was given.
#[derive(Debug, Clone, PartialEq)]
pub enum ReliabilitySpec {
    /// A fixed value.
    Point {
        /// The value.
        value: f64,
        /// Its kind, when stated (e.g. alpha).
        kind: Option<CoefType>,
    },
    /// An estimate from n respondents and k items (sampling distribution on the Bonett scale).
    Estimate {
        /// The estimate.
        value: f64,
        /// Respondents.
        n: u64,
        /// Items.
        items: u32,
        /// Its kind, when stated.
        kind: Option<CoefType>,
    },
    /// A benchmark from another coding sheet, optionally at moderator values.
    Benchmark {
        /// The sheet.
        path: PathBuf,
        /// Moderator values (`NAME` → `VALUE`).
        at: BTreeMap<String, String>,
    },
    /// The run's own benchmark (its sheet, model and moderators), at moderator values.
    ThisBenchmark {
        /// Moderator values (`NAME` → `VALUE`).
        at: BTreeMap<String, String>,
    },
}

impl ReliabilitySpec {
    /// Parse `0.78`, `0.78,n=180,items=10`, `0.78,kind=alpha`, or
    /// `sheet=PATH[,at=NAME=VALUE…]` (`at=NAME:VALUE` is read too).
    pub fn parse(spec: &str) -> std::result::Result<Self, String> {
        let parts: Vec<&str> = spec.split(',').map(str::trim).collect();
        let usage = || {
            format!(
                "\"{spec}\" is not a reliability: write a value (0.78), an estimate with its sample \
                 (0.78,n=180,items=10), or a benchmark (sheet=PATH, optionally ,at=NAME=VALUE)"
            )
        };
        if let Some(path) = parts[0].strip_prefix("sheet=") {
            let mut at = BTreeMap::new();
            for p in &parts[1..] {
                let (name, value) = p
                    .strip_prefix("at=")
                    .and_then(|r| r.split_once('=').or_else(|| r.split_once(':')))
                    .ok_or_else(usage)?;
                if at
                    .insert(name.trim().to_string(), value.trim().to_string())
                    .is_some()
                {
                    return Err(format!("at={}: the moderator is given twice", name.trim()));
                }
            }
            return Ok(ReliabilitySpec::Benchmark {
                path: PathBuf::from(path),
                at,
            });
        }
        let value: f64 = parts[0].parse().map_err(|_| usage())?;
        let (mut n, mut items, mut kind) = (None, None, None);
        for p in &parts[1..] {
            let (key, v) = p.split_once('=').ok_or_else(usage)?;
            match key.trim() {
                "n" => n = Some(v.trim().parse::<u64>().map_err(|_| usage())?),
                "items" | "k" => items = Some(v.trim().parse::<u32>().map_err(|_| usage())?),
                "kind" => {
                    let t = CoefType::parse_cell(v).ok_or_else(|| {
                        let names: Vec<&str> = CoefType::ALL.iter().map(|t| t.name()).collect();
                        format!(
                            "kind={}: not a coefficient type ({})",
                            v.trim(),
                            names.join(", ")
                        )
                    })?;
                    kind = Some(t);
                }
                _ => return Err(usage()),
            }
        }
        // 1 is allowed for a fixed value: a variable measured without error.
        if !(value.is_finite() && value > 0.0 && value <= 1.0) {
            return Err(format!(
                "a reliability must lie above 0 and at most 1 (got {value})"
            ));
        }
        if (n.is_some() || items.is_some()) && value >= 1.0 {
            return Err("an estimate with its sample must lie below 1".into());
        }
        match (n, items) {
            (None, None) => Ok(ReliabilitySpec::Point { value, kind }),
            (Some(n), Some(items)) if n >= 3 && items >= 2 => Ok(ReliabilitySpec::Estimate {
                value,
                n,
                items,
                kind,
            }),
            (Some(_), Some(_)) => Err("an estimate needs n ≥ 3 and at least 2 items".into()),
            _ => Err(format!("\"{spec}\": give both n= and items= (or neither)")),
        }
    }
}

/// A reliability resolved into something that can be drawn from.
#[derive(Debug, Clone, PartialEq)]
pub enum ReliabilitySource {
    /// Fixed.
    Point {
        /// Value.
        value: f64,
        /// Kind, when stated.
        kind: Option<CoefType>,
    },
    /// ln(1 − ρ) ~ N(ln(1 − ρ̂), 2k/((k − 1)(n − 2))) (Bonett 2002).
    Estimate {
        /// Estimate.
        value: f64,
        /// Respondents.
        n: u64,
        /// Items.
        items: u32,
        /// Kind, when stated.
        kind: Option<CoefType>,
    },
    /// The predictive distribution of the true coefficient in a new setting: on the
    /// benchmark's scale, mean + scale × t(df).
    Benchmark {
        /// Where it came from (file and moderator values).
        label: String,
        /// The benchmark's transform.
        transform: TransformKind,
        /// Expected value on the transformed scale.
        mean: f64,
        /// √(τ² + SE²).
        scale: f64,
        /// Degrees of freedom.
        df: f64,
        /// Studies behind it.
        k: usize,
        /// Share of the pooled coefficients that are lower bounds (alpha and its kin).
        lower_bound_share: f64,
    },
}

/// A reliability's distribution, ready for drawing (see [`ReliabilitySource::sampler`]).
#[derive(Debug, Clone, Copy)]
pub enum Sampler {
    /// Always the same value.
    Fixed(f64),
    /// 1 − exp(centre + sd·Z) with Z standard normal.
    Bonett {
        /// Centre on the ln(1 − ρ) scale.
        centre: f64,
        /// SD on that scale.
        sd: f64,
    },
    /// The benchmark's transform undone at mean + scale·t(df).
    Predictive {
        /// The benchmark's transform.
        transform: TransformKind,
        /// Mean on the transformed scale.
        mean: f64,
        /// Scale of the t distribution.
        scale: f64,
        /// Its degrees of freedom.
        df: f64,
    },
}

impl Sampler {
    /// One draw.
    #[inline]
    pub fn draw<R: Rng>(&self, rng: &mut R) -> f64 {
        match *self {
            Sampler::Fixed(v) => v,
            // exp(x) − 1 directly: x is ln(1 − ρ) well away from 0 for any reliability a
            // correction would use, so nothing is lost to cancellation.
            Sampler::Bonett { centre, sd } => 1.0 - (centre + sd * draw::normal(rng)).exp(),
            Sampler::Predictive {
                transform,
                mean,
                scale,
                df,
            } => back(transform, mean + scale * draw::student_t(rng, df)),
        }
    }
}

impl ReliabilitySource {
    /// The value used for the point correction.
    pub fn point(&self) -> f64 {
        match self {
            ReliabilitySource::Point { value, .. } | ReliabilitySource::Estimate { value, .. } => {
                *value
            }
            ReliabilitySource::Benchmark {
                transform, mean, ..
            } => back(*transform, *mean),
        }
    }

    /// One draw from the reliability's distribution.
    pub fn draw<R: Rng>(&self, rng: &mut R) -> f64 {
        self.sampler().draw(rng)
    }

    /// The distribution's constants worked out once, for drawing many times.
    pub fn sampler(&self) -> Sampler {
        match self {
            ReliabilitySource::Point { value, .. } => Sampler::Fixed(*value),
            ReliabilitySource::Estimate {
                value, n, items, ..
            } => {
                let (centre, sd) = bonett_centre(*value, *n, *items);
                Sampler::Bonett { centre, sd }
            }
            ReliabilitySource::Benchmark {
                transform,
                mean,
                scale,
                df,
                ..
            } => Sampler::Predictive {
                transform: *transform,
                mean: *mean,
                scale: *scale,
                df: *df,
            },
        }
    }

    /// The central interval of the distribution at `level` (a point has none).
    pub fn interval(&self, level: Level) -> Option<(f64, f64)> {
        match self {
            ReliabilitySource::Point { .. } => None,
            ReliabilitySource::Estimate {
                value, n, items, ..
            } => {
                let (t, sd) = bonett_centre(*value, *n, *items);
                let z = crate::dist::normal_quantile(level.upper());
                Some(ordered(-(t + z * sd).exp_m1(), -(t - z * sd).exp_m1()))
            }
            ReliabilitySource::Benchmark {
                transform,
                mean,
                scale,
                df,
                ..
            } => {
                let q = t_quantile(level.upper(), *df);
                Some(ordered(
                    back(*transform, mean - q * scale),
                    back(*transform, mean + q * scale),
                ))
            }
        }
    }

    /// The share (0–1) of the reliability that is coefficient alpha or its kin, a lower
    /// bound to reliability unless the items are tau-equivalent: 1 for a value marked
    /// kind=alpha, the share of such coefficients in a benchmark; `None` when none is.
    pub fn lower_bound_share(&self) -> Option<f64> {
        let share = match self {
            ReliabilitySource::Point { kind, .. } | ReliabilitySource::Estimate { kind, .. } => {
                if kind.is_some_and(CoefType::is_lower_bound) {
                    1.0
                } else {
                    0.0
                }
            }
            ReliabilitySource::Benchmark {
                lower_bound_share, ..
            } => *lower_bound_share,
        };
        (share > 0.0).then_some(share)
    }

    /// A description for reports.
    pub fn describe(&self) -> String {
        let f3 = |x: f64| crate::format::fixed(x, 3);
        let kind = |k: &Option<CoefType>| k.map(|k| format!(", {}", k.name())).unwrap_or_default();
        match self {
            ReliabilitySource::Point { value, kind: k } => {
                format!("{} (fixed{})", f3(*value), kind(k))
            }
            ReliabilitySource::Estimate {
                value,
                n,
                items,
                kind: k,
            } => {
                format!(
                    "{} (estimate from n = {n}, {items} items{})",
                    f3(*value),
                    kind(k)
                )
            }
            ReliabilitySource::Benchmark { label, k, .. } => {
                format!("{} (benchmark of {k} studies, {label})", f3(self.point()))
            }
        }
    }
}

/// Bonett's (2002) centre and SD for the true ln(1 − ρ) given an estimate:
/// ln(1 − ρ̂) − ln(n/(n − 1)) and √(2k/((k − 1)(n − 2))).
fn bonett_centre(value: f64, n: u64, items: u32) -> (f64, f64) {
    let (nf, k) = (n as f64, f64::from(items));
    (
        (-value).ln_1p() - (nf / (nf - 1.0)).ln(),
        (2.0 * k / ((k - 1.0) * (nf - 2.0))).sqrt(),
    )
}

fn ordered(a: f64, b: f64) -> (f64, f64) {
    if a <= b { (a, b) } else { (b, a) }
}

fn back(t: TransformKind, x: f64) -> f64 {
    t.get()
        .back(Transformed(x))
        .map(|c| c.0)
        .unwrap_or(f64::NAN)
        .min(1.0)
}

/// Resolve a spec, reading and pooling a benchmark sheet when one is named. Benchmarks use
/// the transform appropriate to their coefficients and the given fit options; `setting`
/// names where the spec came from in messages. The run's own benchmark is resolved by the
/// analysis, which holds its sheet ([`benchmark_source`]).
pub fn resolve(
    spec: &ReliabilitySpec,
    options: &FitOptions,
    setting: Setting,
) -> Result<ReliabilitySource> {
    match spec {
        ReliabilitySpec::Point { value, kind } => Ok(ReliabilitySource::Point {
            value: *value,
            kind: *kind,
        }),
        ReliabilitySpec::Estimate {
            value,
            n,
            items,
            kind,
        } => Ok(ReliabilitySource::Estimate {
            value: *value,
            n: *n,
            items: *items,
            kind: *kind,
        }),
        ReliabilitySpec::Benchmark { path, at } => {
            let sheet = read_coding_sheet(path, &SheetOptions::default())?;
            let mut bopts = BenchmarkOptions::default();
            bopts.pool.model = options.model;
            bopts.pool.ci = options.ci;
            bopts.pool.level = options.level;
            let p = prepare(sheet, &bopts)?;
            let specs: Vec<ModeratorSpec> = at.keys().map(ModeratorSpec::auto).collect();
            let source = BenchmarkAt {
                moderators: &specs,
                at,
                centring: Centring::Means,
                setting,
            };
            benchmark_source(&p, &source, options, &path.display().to_string())
        }
        ReliabilitySpec::ThisBenchmark { .. } => Err(Error::setting(
            setting,
            msg![
                setting,
                ": the run's own benchmark needs the run's coding sheet; name a sheet (",
                given(setting, "sheet=PATH"),
                ")"
            ],
        )),
    }
}

/// Where on a benchmark a reliability is read: its moderators and the values of them.
#[derive(Debug, Clone, Copy)]
pub struct BenchmarkAt<'a> {
    /// The benchmark's moderators (none: the pooled benchmark).
    pub moderators: &'a [ModeratorSpec],
    /// The moderator values.
    pub at: &'a BTreeMap<String, String>,
    /// Where numeric moderators are measured from.
    pub centring: Centring,
    /// The setting the values came from, for messages.
    pub setting: Setting,
}

/// The predictive distribution of the true coefficient in a new setting, from studies
/// already prepared (with whatever sheet and model options the caller used), at the given
/// moderator values (none: the pooled benchmark). `label` names the sheet in messages.
pub fn benchmark_source(
    p: &Prepared,
    place: &BenchmarkAt,
    options: &FitOptions,
    label: &str,
) -> Result<ReliabilitySource> {
    if p.transform == TransformKind::None {
        return Err(Error::setting(
            place.setting,
            msg![
                place.setting,
                ": a reliability benchmark needs coefficients, not effects (",
                given(Setting::Transform, "none"),
                ")"
            ],
        ));
    }
    let options = FitOptions {
        tau2_interval: false,
        ..*options
    };
    let FitAt {
        fit, x0, dependent, ..
    } = fit_at(
        p,
        place.moderators,
        place.at,
        place.centring,
        &options,
        place.setting,
    )?;
    let (mean, var) = fit.predict(&x0);
    // Under the common-effect model the distribution is that of the one true value.
    let predictive = match Predictive::new_setting(&fit, &x0) {
        Some(d) => d,
        None if matches!(options.model, crate::pool::Model::Common) => {
            match crate::pool::prediction_df(fit.k, fit.p) {
                Some(df) => Predictive {
                    centre: mean,
                    scale: var.sqrt(),
                    df,
                },
                None => return Err(no_df(label, fit.k)),
            }
        }
        None => return Err(no_df(label, fit.k)),
    };
    let at_text: Vec<String> = place.at.iter().map(|(k, v)| format!("{k} = {v}")).collect();
    let label = match &dependent {
        Some(d) => format!(
            "{label}; {} samples in {} clusters, multilevel",
            d.summary.fit.samples, d.summary.fit.clusters
        ),
        None => label.to_string(),
    };
    let label = if at_text.is_empty() {
        label
    } else {
        format!("{label} at {}", at_text.join(", "))
    };
    let lower = p
        .records
        .iter()
        .filter(|r| r.coef_type.is_lower_bound())
        .count();
    let lower_bound_share = lower as f64 / p.records.len().max(1) as f64;
    Ok(ReliabilitySource::Benchmark {
        label,
        transform: p.transform,
        mean: predictive.centre,
        scale: predictive.scale,
        df: predictive.df,
        k: fit.k,
        lower_bound_share,
    })
}

fn no_df(label: &str, k: usize) -> Error {
    Error::cannot(format!(
        "{label}: {k} studies leave no degrees of freedom for a predictive distribution"
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn specs_parse() {
        assert_eq!(
            ReliabilitySpec::parse("0.78").unwrap(),
            ReliabilitySpec::Point {
                value: 0.78,
                kind: None
            }
        );
        assert!(matches!(
            ReliabilitySpec::parse("0.78,n=180,items=10,kind=alpha").unwrap(),
            ReliabilitySpec::Estimate {
                n: 180,
                items: 10,
                ..
            }
        ));
        assert!(matches!(
            ReliabilitySpec::parse("sheet=b.csv,at=lang:original").unwrap(),
            ReliabilitySpec::Benchmark { .. }
        ));
        assert!(ReliabilitySpec::parse("1").is_ok());
        for bad in [
            "1.2",
            "0",
            "x",
            "0.8,n=10",
            "0.8,q=1",
            "0.8,n=2,items=5",
            "1,n=100,items=5",
        ] {
            assert!(ReliabilitySpec::parse(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn estimate_draws_centre_on_the_estimate() {
        let s = ReliabilitySource::Estimate {
            value: 0.8,
            n: 200,
            items: 10,
            kind: None,
        };
        let mut rng = crate::random::stream(3, 0);
        let draws: Vec<f64> = (0..20_000).map(|_| s.draw(&mut rng)).collect();
        let mut sorted = draws.clone();
        sorted.sort_by(|a, b| a.total_cmp(b));
        let median = sorted[10_000];
        assert!((median - 0.8).abs() < 0.003, "{median}");
        let (lo, hi) = s.interval(Level::NINETY_FIVE).unwrap();
        let inside = draws.iter().filter(|d| lo <= **d && **d <= hi).count() as f64 / 20_000.0;
        assert!((inside - 0.95).abs() < 0.01, "{inside}");
    }
}
