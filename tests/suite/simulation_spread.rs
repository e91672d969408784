//! A seeded simulation of the score-variance test (issue 3): coefficients generated with
//! a constant error variance and varying score SDs, so that 1 − α = σ²_E / σ²_X exactly.
//! The slope of ln(1 − α) on ln(SD) is then −2: its interval must cover −2 in at least
//! 90% of replications, and the test of slope = 0 must reject.
//!
//! Design: 200 replications of k = 40 samples, n uniform on 80–400, 8 items, true SD
//! (POMP units) 20·exp(0.35 z), error variance 36 (α from about 0.3 to 0.99), alpha
//! drawn on the Bonett scale, observed SD with its sampling error. That sampling error
//! attenuates the slope slightly (to about −1.97 here; the output reports the attenuation).

use rand::RngExt;
use relyard::benchmark::{BenchmarkOptions, prepare};
use relyard::metareg::spread::{SpreadReading, score_spread};
use relyard::pool::{CiMethod, FitOptions, Model, Tau2Estimator};
use relyard::random::stream;
use relyard::sheet::{SheetOptions, parse_coding_sheet};

fn normal(rng: &mut impl rand::Rng) -> f64 {
    // Box–Muller.
    let u1: f64 = 1.0 - rng.random::<f64>();
    let u2: f64 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

fn replication(seed: u64, r: u64, sd_error: bool) -> String {
    let mut rng = stream(seed, r);
    let k = 40;
    let items = 8.0f64;
    let error_var = 36.0; // POMP units²: α = 0.91 at an SD of 20, 0.27 at an SD of 7
    let mut text = String::from("study,coef,n,items,sd,sd_metric,scale_min,scale_max\n");
    for i in 0..k {
        let n = 80 + (rng.random::<f64>() * 320.0) as u64;
        let sd_true = 20.0 * (0.35 * normal(&mut rng)).exp();
        let alpha = 1.0 - error_var / (sd_true * sd_true);
        let se = (2.0 * items / ((items - 1.0) * (n as f64 - 2.0))).sqrt();
        let observed = 1.0 - ((1.0 - alpha).ln() + se * normal(&mut rng)).exp();
        let noise = normal(&mut rng) / (2.0 * n as f64).sqrt();
        let sd_obs = if sd_error {
            sd_true * (1.0 + noise)
        } else {
            sd_true
        };
        // Reported as the SD of the mean score on a 1–5 scale.
        let sd_mean = sd_obs * 4.0 / 100.0;
        text.push_str(&format!("s{i},{observed},{n},8,{sd_mean},mean,1,5\n"));
    }
    text
}

struct Summary {
    coverage: f64,
    rejects_zero: f64,
    mean_slope: f64,
    most: f64,
}

fn simulate(sd_error: bool) -> Summary {
    let reps = 200;
    let mut covers = 0;
    let mut rejects_zero = 0;
    let mut most = 0;
    let opts = FitOptions {
        model: Model::Random(Tau2Estimator::Reml),
        ci: CiMethod::KnappHartung,
        level: relyard::Level::NINETY_FIVE,
        tau2_interval: false,
        dependence: Default::default(),
    };
    let mut slopes = Vec::new();
    for r in 0..reps {
        let text = replication(2026, r, sd_error);
        let sheet =
            parse_coding_sheet("sim.csv", text.as_bytes(), &SheetOptions::default()).unwrap();
        let p = prepare(sheet, &BenchmarkOptions::default()).unwrap();
        let s = score_spread(&p, None, &[], relyard::metareg::Centring::None, &opts).unwrap();
        slopes.push(s.slope.estimate);
        if s.slope.ci.lower <= -2.0 && -2.0 <= s.slope.ci.upper {
            covers += 1;
        }
        if s.p_zero < 0.05 {
            rejects_zero += 1;
        }
        if s.reading == SpreadReading::AccountsForMost {
            most += 1;
        }
    }
    let mean_slope = slopes.iter().sum::<f64>() / reps as f64;
    let coverage = covers as f64 / reps as f64;
    eprintln!(
        "SD sampling error {sd_error}: coverage of −2: {coverage}; slope = 0 rejected: \
         {rejects_zero}/{reps}; mean slope {mean_slope:.4}; reading 'accounts for most': \
         {most}/{reps}"
    );
    Summary {
        coverage,
        rejects_zero: rejects_zero as f64 / reps as f64,
        mean_slope,
        most: most as f64 / reps as f64,
    }
}

/// With the SDs as reported (they carry sampling error): coverage ≥ 90% (measured 0.905),
/// slope = 0 rejected (measured 200/200).
#[test]
fn score_variance_test_recovers_minus_two() {
    let s = simulate(true);
    assert!(
        s.coverage >= 0.90,
        "coverage of −2: {} (mean slope {})",
        s.coverage,
        s.mean_slope
    );
    assert!(
        s.rejects_zero >= 0.95,
        "slope = 0 rejected in {}",
        s.rejects_zero
    );
    assert!(
        (s.mean_slope + 2.0).abs() < 0.1,
        "mean slope {}",
        s.mean_slope
    );
    assert!(s.most >= 0.85, "reading 'accounts for most' in {}", s.most);
}

/// With error-free SDs the interval is calibrated (measured 0.955): the shortfall above
/// comes from the SDs' sampling error, which attenuates the slope.
#[test]
fn without_sd_error_the_interval_is_calibrated() {
    let s = simulate(false);
    assert!(s.coverage >= 0.93, "coverage of −2: {}", s.coverage);
    assert!(
        (s.mean_slope + 2.0).abs() < 0.02,
        "mean slope {}",
        s.mean_slope
    );
}
