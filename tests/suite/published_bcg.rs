//! Outside check 1: the 13 BCG vaccine trials.
//!
//! Data: Colditz, G. A., et al. (1994). Efficacy of BCG vaccine in the prevention of
//! tuberculosis. JAMA, 271(9), 698–702; the 2×2 tables as printed in van Houwelingen,
//! H. C., Arends, L. R., & Stijnen, T. (2002). Advanced methods in meta-analysis:
//! multivariate approach and meta-regression. Statistics in Medicine, 21(4), 589–624,
//! Table I (tests/data/bcg-trials.csv).

use crate::common::*;
use relyard::pool::{CiMethod, Model, PoolOptions, Tau2Estimator, pool};

fn opts(est: Tau2Estimator, ci: CiMethod) -> PoolOptions {
    PoolOptions {
        model: Model::Random(est),
        ci,
        level: relyard::Level::NINETY_FIVE,
    }
}

/// Log odds ratios pooled by ML: μ̂ = −0.742, SE 0.178, τ² = 0.302 as reported by van
/// Houwelingen, Arends & Stijnen (2002) — values from memory of that paper, confirmed by
/// the independent scipy computation in tests/reference/fixtures/pool.json
/// (case bcg_log_or, which gives τ² = 0.30246, μ̂ = −0.7420).
#[test]
fn log_odds_ratios_by_ml_match_van_houwelingen_2002() {
    let (y, v) = bcg_log_or();
    let r = pool(&y, &v, &opts(Tau2Estimator::Ml, CiMethod::Wald)).unwrap();
    assert_close(r.estimate, -0.742, 0.0, PRINTED_3DP, "ML log OR mean");
    assert_close(r.se, 0.178, 0.0, PRINTED_3DP, "ML log OR SE");
    assert_close(r.tau2.tau2, 0.302, 0.0, PRINTED_3DP, "ML log OR tau2");
}

/// Log risk ratios: values computed independently with numpy/scipy when the pooling
/// engine was specified (REML μ̂ = −0.714532, Wald SE 0.179782, τ² = 0.313243, Q-profile
/// CI [0.119718, 1.111479], I² = 92.22%, H² = 12.86, Q(12) = 152.2330; DL, ML, PM, HE
/// and SJ τ² as below; REML with Knapp–Hartung SE 0.180792).
#[test]
fn log_risk_ratios_match_independent_computation() {
    let (y, v) = bcg_log_rr();
    let r = pool(&y, &v, &opts(Tau2Estimator::Reml, CiMethod::Wald)).unwrap();
    let six = 5e-7;
    assert_close(r.estimate, -0.714532, 0.0, six, "REML mean");
    assert_close(r.se, 0.179782, 0.0, six, "REML Wald SE");
    assert_close(r.tau2.tau2, 0.313243, 0.0, six, "REML tau2");
    let ci = r.tau2_ci.unwrap();
    assert_close(ci.lower, 0.119718, 0.0, six, "Q-profile lower");
    assert_close(ci.upper, 1.111479, 0.0, six, "Q-profile upper");
    assert_close(r.i2, 92.22, 0.0, 0.005, "I2");
    assert_close(r.h2, 12.86, 0.0, 0.005, "H2");
    assert_close(r.heterogeneity.q, 152.2330, 0.0, 5e-5, "Q");
    assert_eq!(r.heterogeneity.df, 12.0);

    for (est, tau2) in [
        (Tau2Estimator::Dl, 0.308760),
        (Tau2Estimator::Ml, 0.280028),
        (Tau2Estimator::Pm, 0.318068),
        (Tau2Estimator::He, 0.328564),
        (Tau2Estimator::Sj, 0.345516),
    ] {
        let r = pool(&y, &v, &opts(est, CiMethod::Wald)).unwrap();
        assert_close(r.tau2.tau2, tau2, 0.0, six, est.name());
    }
    let dl = pool(&y, &v, &opts(Tau2Estimator::Dl, CiMethod::Wald)).unwrap();
    assert_close(dl.estimate, -0.714117, 0.0, six, "DL mean");

    let kh = pool(&y, &v, &opts(Tau2Estimator::Reml, CiMethod::KnappHartung)).unwrap();
    assert_close(kh.se, 0.180792, 0.0, six, "REML Knapp–Hartung SE");
    assert_eq!(kh.test.df, Some(12.0));
}

/// The same data through the command line with `--transform none`.
#[test]
fn bcg_through_the_command_line() {
    let dir = scratch("bcg-cli");
    let (y, v) = bcg_log_rr();
    let mut text = String::from("study,coef,var\n");
    for (i, (yi, vi)) in y.iter().zip(&v).enumerate() {
        text.push_str(&format!("trial {},{yi:.17e},{vi:.17e}\n", i + 1));
    }
    let path = write_file(&dir, "bcg.csv", text.as_bytes());
    let j = json_ok(&[
        "pool",
        &path,
        "--transform",
        "none",
        "--ci",
        "wald",
        "--json",
    ]);
    assert_close(
        j["estimate"].as_f64().unwrap(),
        -0.714532,
        0.0,
        5e-7,
        "cli mean",
    );
    assert_close(j["tau2"].as_f64().unwrap(), 0.313243, 0.0, 5e-7, "cli tau2");
    assert_eq!(j["k"], 13);
    assert!(j["reliability"].is_null());
}

fn latitude_design(k: usize) -> nalgebra::DMatrix<f64> {
    let trials = bcg_trials();
    nalgebra::DMatrix::from_fn(k, 2, |i, j| if j == 0 { 1.0 } else { trials[i][4] })
}

/// Meta-regression on absolute latitude (issue 3). Log odds ratios by ML against van
/// Houwelingen, Arends & Stijnen (2002) — from memory of that paper, confirmed by the
/// independent numpy computation in tests/reference/fixtures/metareg.json
/// (case bcg_or_latitude): intercept 0.371, latitude −0.033, residual τ² = 0.004.
#[test]
fn latitude_meta_regression_of_log_odds_ratios_by_ml() {
    use relyard::pool::{FitOptions, MetaData, fit_model};
    let (y, v) = bcg_log_or();
    let d = MetaData::with_design(y, v, latitude_design(13)).unwrap();
    let opts = FitOptions {
        model: Model::Random(Tau2Estimator::Ml),
        ci: CiMethod::Wald,
        level: relyard::Level::NINETY_FIVE,
        tau2_interval: false,
        dependence: Default::default(),
    };
    let f = fit_model(&d, &opts).unwrap();
    assert_close(f.beta[0], 0.371, 0.0, PRINTED_3DP, "intercept");
    assert_close(f.beta[1], -0.033, 0.0, PRINTED_3DP, "latitude");
    assert_close(f.tau2.tau2, 0.004, 0.0, PRINTED_3DP, "residual tau2");
}

/// Log risk ratios on latitude by REML with Wald tests, values computed independently
/// with numpy/scipy for this issue: intercept 0.251468 (SE 0.249095), latitude −0.029102
/// (SE 0.007195), residual τ² = 0.076348, Q_E(11) = 30.7331, QM = 16.358, R² = 75.63%;
/// with Knapp–Hartung the latitude SE is 0.008201. Run through the command line.
#[test]
fn latitude_meta_regression_of_log_risk_ratios_by_reml() {
    let dir = scratch("bcg-latitude");
    let (y, v) = bcg_log_rr();
    let trials = bcg_trials();
    let mut text = String::from("study,coef,var,ablat\n");
    for i in 0..13 {
        text.push_str(&format!(
            "trial {},{:.17e},{:.17e},{}\n",
            i + 1,
            y[i],
            v[i],
            trials[i][4]
        ));
    }
    let path = write_file(&dir, "bcg.csv", text.as_bytes());
    let run = |ci: &str| {
        json_ok(&[
            "explain",
            &path,
            "--transform",
            "none",
            // The published intercept is at latitude 0 (issue 10: centring is the default).
            "--uncentred",
            "--moderator",
            "ablat",
            "--ci",
            ci,
            "--json",
        ])
    };
    let j = run("wald");
    let six = 5e-7;
    let c = &j["coefficients"];
    assert_eq!(c[1]["name"], "ablat");
    assert_close(
        c[0]["estimate"].as_f64().unwrap(),
        0.251468,
        0.0,
        six,
        "intercept",
    );
    assert_close(
        c[0]["se"].as_f64().unwrap(),
        0.249095,
        0.0,
        six,
        "intercept SE",
    );
    assert_close(
        c[1]["estimate"].as_f64().unwrap(),
        -0.029102,
        0.0,
        six,
        "latitude",
    );
    assert_close(
        c[1]["se"].as_f64().unwrap(),
        0.007195,
        0.0,
        six,
        "latitude SE",
    );
    assert_close(
        j["tau2"].as_f64().unwrap(),
        0.076348,
        0.0,
        six,
        "residual tau2",
    );
    assert_close(j["qe"].as_f64().unwrap(), 30.7331, 0.0, 5e-5, "Q_E");
    assert_eq!(j["qe_df"], 11.0);
    assert_close(
        j["omnibus"]["statistic"].as_f64().unwrap(),
        16.358,
        0.0,
        5e-4,
        "QM",
    );
    assert_eq!(j["omnibus"]["df"], 1.0);
    assert_close(j["r2"].as_f64().unwrap(), 75.63, 0.0, 5e-3, "R2");
    let kh = run("knapp-hartung");
    assert_close(
        kh["coefficients"][1]["se"].as_f64().unwrap(),
        0.008201,
        0.0,
        six,
        "KH latitude SE",
    );
    assert_eq!(kh["omnibus"]["df2"], 11.0);
}
