//! Outside check 1: the 13 BCG vaccine trials.
//!
//! Data: Colditz, G. A., et al. (1994). Efficacy of BCG vaccine in the prevention of
//! tuberculosis. JAMA, 271(9), 698–702; the 2×2 tables as printed in van Houwelingen,
//! H. C., Arends, L. R., & Stijnen, T. (2002). Advanced methods in meta-analysis:
//! multivariate approach and meta-regression. Statistics in Medicine, 21(4), 589–624,
//! Table I (tests/data/bcg-trials.csv).

mod common;
use common::*;
use relyard::pool::{CiMethod, Model, PoolOptions, Tau2Estimator, pool};

fn opts(est: Tau2Estimator, ci: CiMethod) -> PoolOptions {
    PoolOptions {
        model: Model::Random(est),
        ci,
        level: 0.95,
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
    let out = relyard(&[
        "pool",
        &path,
        "--transform",
        "none",
        "--ci",
        "wald",
        "--json",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let j: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
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
