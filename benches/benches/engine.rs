//! Criterion benchmarks of the four heavy workloads, in process (no start-up, no file
//! output): pooling 100,000 coefficients, the multilevel fit of 100,000 dependent
//! coefficients, a permutation test, reading item data, and Monte Carlo corrections. Inputs are generated here with a fixed seed (invented
//! values). Whole-process timings against Python baselines: benches/side_by_side.py.
//!
//!     cargo bench -p relyard-benches

use criterion::{Criterion, criterion_group, criterion_main};
use relyard::benchmark::{BenchmarkOptions, from_prepared, prepare};
use relyard::correct::ReliabilitySource;
use relyard::correct::correlation::{CorrelationInput, correct_correlation};
use relyard::items::{ItemReadOptions, read_items};
use relyard::metareg::{ModeratorSpec, build_design, explain, permutation::permutation_test};
use relyard::pool::multilevel::{
    Grouping, MultilevelOptions, NestedData, component_intervals, cr2, fit,
};
use relyard::sheet::parse_coding_sheet;
use std::fmt::Write;
use std::hint::black_box;

/// A small deterministic generator (SplitMix64), so the inputs need no extra crate.
struct Gen(u64);

impl Gen {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (1.0 - self.next(), self.next());
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// A coding sheet of `k` alpha coefficients with `moderators` numeric moderators.
fn sheet(k: usize, moderators: usize) -> String {
    let mut g = Gen(7);
    let mut s = String::from("study,coef,n,items");
    for j in 1..=moderators {
        write!(s, ",m{j}").unwrap();
    }
    s.push('\n');
    for i in 0..k {
        let n = 80 + (g.next() * 1400.0) as u64;
        let items = 4 + (g.next() * 20.0) as u64;
        let mods: Vec<f64> = (0..moderators).map(|_| g.normal()).collect();
        let v = 2.0 * items as f64 / ((items as f64 - 1.0) * (n as f64 - 2.0));
        let t = (0.18f64).ln()
            + 0.1 * mods.first().copied().unwrap_or(0.0)
            + 0.25 * g.normal()
            + v.sqrt() * g.normal();
        write!(s, "s{i},{:.4},{n},{items}", 1.0 - t.exp()).unwrap();
        for m in mods {
            write!(s, ",{m:.4}").unwrap();
        }
        s.push('\n');
    }
    s
}

fn pooling(c: &mut Criterion) {
    let text = sheet(100_000, 0);
    let opts = BenchmarkOptions::default();
    c.bench_function("pool 100,000 coefficients (REML, KH, Q-profile, PI)", |b| {
        b.iter(|| {
            let s = parse_coding_sheet("bench.csv", text.as_bytes(), &Default::default()).unwrap();
            let p = prepare(s, &opts).unwrap();
            black_box(from_prepared(p, &opts.pool, &opts.dependence).unwrap())
        })
    });
}

/// 100,000 rows in 10,000 clusters of 10 rows (each in 1 to 3 samples): effects drawn from
/// the multilevel model (invented values).
fn nested(clusters: usize) -> (Vec<f64>, Vec<f64>, Grouping) {
    let mut g = Gen(17);
    let (mut y, mut v, mut cl, mut sa) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut sample = 0;
    for c in 0..clusters {
        let u = 0.2 * g.normal();
        let samples = 1 + (g.next() * 3.0) as usize;
        for i in 0..10 {
            let vi = 0.005 + 0.045 * g.next();
            y.push(-1.6 + u + 0.1 * g.normal() + vi.sqrt() * g.normal());
            v.push(vi);
            cl.push(c);
            sa.push(sample + i % samples);
        }
        sample += samples;
    }
    (
        y,
        v,
        Grouping {
            cluster: cl,
            sample: sa,
        },
    )
}

fn multilevel(c: &mut Criterion) {
    let (y, v, grouping) = nested(10_000);
    let x = nalgebra::DMatrix::from_element(y.len(), 1, 1.0);
    let d = NestedData::new(&y, &v, &x, &grouping).unwrap();
    let options = MultilevelOptions {
        restricted: true,
        sampling_correlation: 0.6,
    };
    let mut group = c.benchmark_group("multilevel");
    group.sample_size(10);
    group.bench_function("REML fit, 100,000 rows in 10,000 clusters", |b| {
        b.iter(|| black_box(fit(&d, &options).unwrap()))
    });
    let f = fit(&d, &options).unwrap();
    group.bench_function("CR2 and Satterthwaite df, 100,000 rows", |b| {
        b.iter(|| black_box(cr2(&d, &f).unwrap()))
    });
    group.bench_function("profile-likelihood intervals of both variances", |b| {
        b.iter(|| black_box(component_intervals(&d, &f, relyard::Level::NINETY_FIVE).unwrap()))
    });
    group.finish();
}

fn permutations(c: &mut Criterion) {
    let text = sheet(300, 5);
    let opts = BenchmarkOptions::default();
    let s = parse_coding_sheet("bench.csv", text.as_bytes(), &Default::default()).unwrap();
    let p = prepare(s, &opts).unwrap();
    let specs: Vec<ModeratorSpec> = (1..=5)
        .map(|j| ModeratorSpec::auto(format!("m{j}")))
        .collect();
    let design = build_design(&p, &specs, relyard::metareg::Centring::Means).unwrap();
    let fit_options = relyard::pool::FitOptions {
        model: opts.pool.model,
        ci: opts.pool.ci,
        level: relyard::Level::NINETY_FIVE,
        tau2_interval: true,
        dependence: Default::default(),
    };
    let ex = explain(&p, design, &fit_options).unwrap();
    let mut group = c.benchmark_group("explain");
    group.sample_size(10);
    group.bench_function("1,000 permutations, k = 300, 5 moderators", |b| {
        b.iter(|| black_box(permutation_test(&p, &ex, 1000, 1, &|_| {}, &|| false).unwrap()))
    });
    group.finish();
}

fn item_data(c: &mut Criterion) {
    let mut g = Gen(11);
    let mut text = String::new();
    let k = 40;
    text.push_str(
        &(1..=k)
            .map(|j| format!("q{j}"))
            .collect::<Vec<_>>()
            .join(","),
    );
    text.push('\n');
    for _ in 0..100_000 {
        let eta = g.normal();
        let row: Vec<String> = (0..k)
            .map(|j| {
                let l = 0.4 + 0.4 * j as f64 / k as f64;
                let x = l * eta + (1.0 - l * l).sqrt() * g.normal();
                (((x + 2.5).floor()).clamp(0.0, 4.0) as u8 + 1).to_string()
            })
            .collect();
        text.push_str(&row.join(","));
        text.push('\n');
    }
    let path = std::env::temp_dir().join(format!("relyard-bench-items-{}.csv", std::process::id()));
    std::fs::write(&path, text).unwrap();
    let mut group = c.benchmark_group("items");
    group.sample_size(10);
    group.bench_function("read 100,000 x 40 five-point items", |b| {
        b.iter(|| black_box(read_items(&path, &ItemReadOptions::default()).unwrap()))
    });
    group.finish();
    let _ = std::fs::remove_file(&path);
}

/// Issue 14's own-coefficient workloads: the polychoric matrix of 40 five-point items from
/// 1,000,000 respondents, the intraclass correlations of 1,000,000 × 4 scores, a bifactor
/// fit of 40 items in 8 subscales and a one-factor fit of 300 items (invented data).
fn own_coefficients(c: &mut Criterion) {
    use relyard::items::factor::{FactorModel, fit_one_factor};
    use relyard::items::multidimensional::{FactorGroups, Structure, fit_structure};
    let mut g = Gen(13);
    let (n, k) = (1_000_000, 40);
    let mut rows = Vec::with_capacity(n * k);
    for _ in 0..n {
        let eta = g.normal();
        for j in 0..k {
            let l = 0.4 + 0.4 * j as f64 / k as f64;
            let x = l * eta + (1.0 - l * l).sqrt() * g.normal();
            rows.push(((x + 2.5).floor()).clamp(0.0, 4.0) + 1.0);
        }
    }
    let names: Vec<String> = (1..=k).map(|j| format!("q{j}")).collect();
    let mut group = c.benchmark_group("own coefficients");
    group.sample_size(10);
    group.bench_function("polychoric matrix, 40 items x 1,000,000", |b| {
        b.iter(|| black_box(relyard::items::polychoric::ordinal_items(&rows, k, &names).unwrap()))
    });
    drop(rows);
    let mut scores = Vec::with_capacity(4_000_000);
    for _ in 0..1_000_000 {
        let t = g.normal();
        for j in 0..4 {
            scores.push(t + 0.1 * j as f64 + 0.5 * g.normal());
        }
    }
    group.bench_function("icc, 1,000,000 x 4", |b| {
        b.iter(|| {
            black_box(
                relyard::icc::icc(&scores, 1_000_000, 4, relyard::Level::NINETY_FIVE).unwrap(),
            )
        })
    });
    let covariance = |k: usize, n: usize, groups: usize, g: &mut Gen| {
        let mut data = vec![0.0; n * k];
        for r in 0..n {
            let general = g.normal();
            let own: Vec<f64> = (0..groups.max(1)).map(|_| g.normal()).collect();
            for j in 0..k {
                let (lg, ls) = (
                    0.4 + 0.3 * (j % 7) as f64 / 7.0,
                    0.3 + 0.2 * (j % 3) as f64 / 3.0,
                );
                let s = if groups > 0 {
                    ls * own[j % groups]
                } else {
                    0.0
                };
                data[r * k + j] = lg * general + s + (1.0 - lg * lg - ls * ls).sqrt() * g.normal();
            }
        }
        let m = nalgebra::DMatrix::from_row_slice(n, k, &data);
        let centred = &m - nalgebra::DMatrix::from_fn(n, k, |_, j| m.column(j).mean());
        centred.transpose() * &centred / (n as f64 - 1.0)
    };
    let cov40 = covariance(40, 1000, 8, &mut g);
    let groups = FactorGroups {
        names: (0..8).map(|h| format!("g{h}")).collect(),
        of_item: (0..40).map(|j| j % 8).collect(),
    };
    group.bench_function("bifactor fit, 40 items in 8 subscales", |b| {
        b.iter(|| black_box(fit_structure(&cov40, &groups, Structure::Bifactor).unwrap()))
    });
    let cov300 = covariance(300, 1000, 0, &mut g);
    group.bench_function("one-factor fit, 300 items", |b| {
        b.iter(|| black_box(fit_one_factor(&cov300, FactorModel::Congeneric).unwrap()))
    });
    group.finish();
}

fn monte_carlo(c: &mut Criterion) {
    let input = CorrelationInput {
        r: 0.3,
        n: 200,
        rel_x: ReliabilitySource::Estimate {
            value: 0.8,
            n: 200,
            items: 10,
            kind: None,
        },
        rel_y: ReliabilitySource::Estimate {
            value: 0.7,
            n: 200,
            items: 8,
            kind: None,
        },
    };
    let mut group = c.benchmark_group("correct");
    group.sample_size(20);
    group.bench_function("1,000,000 Monte Carlo draws", |b| {
        b.iter(|| {
            black_box(
                correct_correlation(
                    &input,
                    1_000_000,
                    1,
                    relyard::Level::NINETY_FIVE,
                    5,
                    &|_| {},
                )
                .unwrap(),
            )
        })
    });
    group.finish();
}

criterion_group!(
    engine,
    pooling,
    multilevel,
    permutations,
    item_data,
    own_coefficients,
    monte_carlo
);
criterion_main!(engine);
