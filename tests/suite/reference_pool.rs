//! Pooling against reference values computed with general-purpose Python libraries
//! (tests/reference/make_fixtures.py → tests/reference/fixtures/pool.json):
//! REML and ML from their score equations solved by scipy.optimize.brentq; DL and PM
//! from statsmodels' combine_effects (PM cross-checked by brentq); SJ and HE closed
//! forms in numpy; Q-profile limits by brentq against scipy.stats.chi2 quantiles.

use crate::common::*;
use relyard::pool::{CiMethod, Model, PoolOptions, Prediction, Tau2Estimator, pool};

fn case_data(c: &serde_json::Value) -> (Vec<f64>, Vec<f64>, f64, String) {
    (
        floats(&c["y"]),
        floats(&c["v"]),
        c["level"].as_f64().unwrap(),
        c["name"].as_str().unwrap().to_string(),
    )
}

#[test]
fn every_estimator_matches_the_reference_fits() {
    let f = fixture("pool.json");
    let cases = f["cases"].as_array().unwrap();
    assert!(cases.len() >= 8);
    for c in cases {
        let (y, v, level, name) = case_data(c);
        for est in Tau2Estimator::ALL {
            let r = &c["estimators"][est.name()];
            for ci in [
                CiMethod::Wald,
                CiMethod::KnappHartung,
                CiMethod::KnappHartungFloor,
            ] {
                let opts = PoolOptions {
                    model: Model::Random(est),
                    ci,
                    level: relyard::Level::new(level).unwrap(),
                };
                let got = pool(&y, &v, &opts).unwrap();
                let what = |k: &str| format!("{name} {} {} {k}", est.name(), ci.name());
                let tau2 = r["tau2"].as_f64().unwrap();
                assert_close(got.tau2.tau2, tau2, FIXTURE_REL, FIXTURE_ABS, &what("tau2"));
                assert!(got.tau2.converged(), "{}", what("converged"));
                assert_close(
                    got.estimate,
                    r["estimate"].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("estimate"),
                );
                assert_close(
                    got.se_wald,
                    r["se_wald"].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("se_wald"),
                );
                let (se_key, ci_key, pi_key) = match ci {
                    CiMethod::Wald => ("se_wald", "ci_wald", "pi_wald"),
                    CiMethod::KnappHartung => ("se_kh", "ci_kh", "pi_kh"),
                    CiMethod::KnappHartungFloor => ("se_khf", "ci_khf", "pi_khf"),
                };
                assert_close(
                    got.se,
                    r[se_key].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what(se_key),
                );
                let ci_ref = floats(&r[ci_key]);
                assert_close(
                    got.ci.lower,
                    ci_ref[0],
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("ci lower"),
                );
                assert_close(
                    got.ci.upper,
                    ci_ref[1],
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("ci upper"),
                );
                assert_close(
                    got.heterogeneity.q,
                    r["q"].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("q"),
                );
                assert_close(
                    got.heterogeneity.p,
                    r["q_p"].as_f64().unwrap(),
                    1e-7,
                    1e-300,
                    &what("q_p"),
                );
                assert_close(
                    got.i2,
                    r["i2"].as_f64().unwrap(),
                    FIXTURE_REL,
                    1e-8,
                    &what("i2"),
                );
                assert_close(
                    got.h2,
                    r["h2"].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("h2"),
                );
                match got.prediction {
                    Prediction::Available { interval, df } => {
                        let pi = floats(&r[pi_key]);
                        assert_eq!(df, (y.len() - 2) as f64);
                        assert_close(
                            interval.lower,
                            pi[0],
                            FIXTURE_REL,
                            FIXTURE_ABS,
                            &what("pi lower"),
                        );
                        assert_close(
                            interval.upper,
                            pi[1],
                            FIXTURE_REL,
                            FIXTURE_ABS,
                            &what("pi upper"),
                        );
                    }
                    Prediction::TooFewStudies | Prediction::CommonEffect => {
                        panic!("{}: no prediction interval", what("pi"))
                    }
                }
                let qp = floats(&c["tau2_ci"]);
                let t = got.tau2_ci.unwrap();
                assert_close(
                    t.lower,
                    qp[0],
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("tau2 ci lower"),
                );
                assert_close(
                    t.upper,
                    qp[1],
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("tau2 ci upper"),
                );
            }
        }
    }
}

/// statsmodels' own DL and PM random-effects summaries, as it reports them.
#[test]
fn dl_and_pm_agree_with_statsmodels_combine_effects() {
    let f = fixture("pool.json");
    let mut compared = 0;
    for c in f["cases"].as_array().unwrap() {
        let (y, v, level, name) = case_data(c);
        for (est, key) in [(Tau2Estimator::Dl, "dl"), (Tau2Estimator::Pm, "pm")] {
            let sm = &c["statsmodels"][key];
            if key == "pm" && !sm["reached_root"].as_bool().unwrap() {
                continue; // statsmodels stopped early; the brentq value is checked above.
            }
            if key == "dl" && sm["tau2_untruncated"].as_f64().unwrap() < 0.0 {
                continue; // statsmodels does not truncate DL at zero; relyard does.
            }
            let opts = PoolOptions {
                model: Model::Random(est),
                ci: CiMethod::KnappHartung,
                level: relyard::Level::new(level).unwrap(),
            };
            let got = pool(&y, &v, &opts).unwrap();
            let what = |k: &str| format!("{name} statsmodels {key} {k}");
            assert_close(
                got.estimate,
                sm["estimate"].as_f64().unwrap(),
                1e-7,
                1e-10,
                &what("estimate"),
            );
            assert_close(
                got.se_wald,
                sm["se"].as_f64().unwrap(),
                1e-7,
                1e-10,
                &what("se"),
            );
            assert_close(
                got.se,
                sm["se_kh"].as_f64().unwrap(),
                1e-7,
                1e-10,
                &what("se_kh"),
            );
            compared += 1;
        }
    }
    assert!(compared >= 12, "only {compared} comparisons made");
}

#[test]
fn common_effect_matches_the_reference() {
    let f = fixture("pool.json");
    for c in f["cases"].as_array().unwrap() {
        let (y, v, level, name) = case_data(c);
        let r = &c["common"];
        let opts = PoolOptions {
            model: Model::Common,
            ci: CiMethod::Wald,
            level: relyard::Level::new(level).unwrap(),
        };
        let got = pool(&y, &v, &opts).unwrap();
        assert_eq!(got.tau2.tau2, 0.0);
        assert!(got.tau2_ci.is_none());
        assert_close(
            got.estimate,
            r["estimate"].as_f64().unwrap(),
            1e-12,
            1e-14,
            &format!("{name} common estimate"),
        );
        assert_close(
            got.se,
            r["se_wald"].as_f64().unwrap(),
            1e-12,
            1e-14,
            &format!("{name} common se"),
        );
    }
}
