//! Seeded simulations of the multilevel model of dependent coefficients (issue 12),
//! generated from the model itself: y = μ + u(cluster) + w(row) + e, with the sampling
//! errors of one sample's rows correlated at r.
//!
//! 1. The prediction interval for the true value in a new sample of a new cluster covers
//!    that value at its level within ±2 points, for 20, 40 and 60 clusters of 1 to 6 rows
//!    (in 1 to 3 samples each).
//! 2. CR2 is unbiased under its working model: with the weights held at the true
//!    variances, the mean CR2 variance of the pooled value equals its true sampling
//!    variance (XᵀV⁻¹X)⁻¹ (Bell & McCaffrey 2002; Tipton 2015).

use nalgebra::DMatrix;
use rand::RngExt;
use relyard::Level;
use relyard::pool::dependence::{new_cluster_interval, robust_test};
use relyard::pool::multilevel::{Grouping, MultilevelFit, MultilevelOptions, NestedData, cr2, fit};
use relyard::random::{draw::normal, stream};

const MU: f64 = -1.6;
const TAU2_CLUSTER: f64 = 0.04;
const TAU2_WITHIN: f64 = 0.02;
const R: f64 = 0.6;

/// One invented sheet of `clusters` clusters: effects, variances and grouping.
fn sheet(seed: u64, index: u64, clusters: usize) -> (Vec<f64>, Vec<f64>, Grouping) {
    let mut rng = stream(seed, index);
    let (mut y, mut v) = (Vec::new(), Vec::new());
    let (mut cl, mut sa) = (Vec::new(), Vec::new());
    let mut sample = 0;
    for c in 0..clusters {
        let u = TAU2_CLUSTER.sqrt() * normal(&mut rng);
        let rows = 1 + (rng.random::<f64>() * 6.0) as usize;
        let samples = 1 + (rng.random::<f64>() * 3.0).min(rows as f64 - 1e-9) as usize;
        for s in 0..samples {
            // The sample's rows share a common part of their sampling error (√r of it).
            let in_sample = (rows / samples) + usize::from(s < rows % samples);
            let vs: Vec<f64> = (0..in_sample)
                .map(|_| 0.005 + 0.045 * rng.random::<f64>())
                .collect();
            let shared = normal(&mut rng);
            for &vi in &vs {
                let e = vi.sqrt() * (R.sqrt() * shared + (1.0 - R).sqrt() * normal(&mut rng));
                y.push(MU + u + TAU2_WITHIN.sqrt() * normal(&mut rng) + e);
                v.push(vi);
                cl.push(c);
                sa.push(sample);
            }
            sample += 1;
        }
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

fn data(y: &[f64], v: &[f64], g: &Grouping) -> NestedData {
    let x = DMatrix::from_element(y.len(), 1, 1.0);
    NestedData::new(y, v, &x, g).unwrap()
}

const OPTIONS: MultilevelOptions = MultilevelOptions {
    restricted: true,
    sampling_correlation: R,
};

#[test]
fn the_new_cluster_interval_covers_at_its_level() {
    let level = Level::NINETY_FIVE;
    let reps = 1000;
    for (k, clusters) in [20usize, 40, 60].into_iter().enumerate() {
        let mut covered = 0;
        for rep in 0..reps {
            let index = (k * reps + rep) as u64;
            let (y, v, g) = sheet(12, index, clusters);
            let d = data(&y, &v, &g);
            let f = fit(&d, &OPTIONS).unwrap();
            let se = robust_test(&d, &f, level).unwrap().se;
            let (pi, _) = new_cluster_interval(&f, se, level).unwrap();
            let mut rng = stream(13, index);
            let truth =
                MU + TAU2_CLUSTER.sqrt() * normal(&mut rng) + TAU2_WITHIN.sqrt() * normal(&mut rng);
            if pi.lower <= truth && truth <= pi.upper {
                covered += 1;
            }
        }
        let coverage = 100.0 * covered as f64 / reps as f64;
        println!("{clusters} clusters: coverage {coverage:.1}% of {reps}");
        assert!(
            (coverage - 95.0).abs() <= 2.0,
            "{clusters} clusters: the 95% interval covered {coverage:.1}%"
        );
    }
}

#[test]
fn cr2_is_unbiased_under_its_working_model() {
    let (y0, v, g) = sheet(21, 0, 15);
    let d0 = data(&y0, &v, &g);
    let truth = fit(&d0, &OPTIONS).unwrap();
    let reps = 4000;
    let mut sum = 0.0;
    let mut model = 0.0;
    for rep in 0..reps {
        // New effects for the same design, the weights held at the true variances.
        let y = effects_for(&v, &g, rep);
        let d = data(&y, &v, &g);
        let at_truth = held_at_truth(&d, &truth);
        sum += cr2(&d, &at_truth).unwrap().cov[(0, 0)];
        model = at_truth.cov[(0, 0)];
    }
    let mean = sum / reps as f64;
    // The CR2 variance is a quadratic form in normal errors: its Monte Carlo SE is about
    // √(2/df)·mean/√reps with df ≈ 8 here, i.e. 0.8% of the mean; allow 3%.
    println!("mean CR2 variance {mean:.6e}, true variance {model:.6e}");
    assert!((mean / model - 1.0).abs() < 0.03, "{mean} vs {model}");
}

/// Effects drawn from the model for the rows of `g` with variances `v`.
fn effects_for(v: &[f64], g: &Grouping, rep: usize) -> Vec<f64> {
    let mut rng = stream(22, rep as u64);
    let u: Vec<f64> = (0..g.clusters())
        .map(|_| TAU2_CLUSTER.sqrt() * normal(&mut rng))
        .collect();
    let shared: Vec<f64> = (0..g.samples()).map(|_| normal(&mut rng)).collect();
    v.iter()
        .enumerate()
        .map(|(i, vi)| {
            let e =
                vi.sqrt() * (R.sqrt() * shared[g.sample[i]] + (1.0 - R).sqrt() * normal(&mut rng));
            MU + u[g.cluster[i]] + TAU2_WITHIN.sqrt() * normal(&mut rng) + e
        })
        .collect()
}

/// The fit of `d` with the variance components held at their true values.
fn held_at_truth(d: &NestedData, template: &MultilevelFit) -> MultilevelFit {
    relyard::pool::multilevel::fit_with_components(d, &OPTIONS, TAU2_CLUSTER, TAU2_WITHIN)
        .map(|f| MultilevelFit {
            options: template.options,
            ..f
        })
        .unwrap()
}
