//! The multilevel model of dependent coefficients against a dense reference in numpy and
//! scipy (tests/reference/multilevel_reference.py → tests/reference/fixtures/multilevel.json):
//! REML/ML maximized by scipy.optimize and polished on the dense score equations; profile
//! intervals by brentq; the likelihood-ratio test of τ²_cluster = 0; CR2 from the full hat
//! matrix with Cholesky factors of the working covariance, and Satterthwaite degrees of
//! freedom from the explicit vectors pⱼ (Tipton 2015; Pustejovsky & Tipton 2018).

use crate::common::*;
use nalgebra::DMatrix;
use relyard::Level;
use relyard::pool::multilevel::{
    Grouping, MultilevelOptions, NestedData, cluster_test, component_intervals, cr2, fit,
    hotelling, in_cluster,
};

/// Tolerance for values the reference reaches by a library optimizer polished on its score
/// equations (its score is below 1e-13 at the estimate): relative.
const ML_REL: f64 = 1e-7;
/// Absolute tolerance near 0 (a component on its boundary).
const ML_ABS: f64 = 1e-10;
/// Profile-interval ends: the reference's inner maximization is a bounded scalar search.
const PROFILE_REL: f64 = 1e-5;

fn ids(v: &serde_json::Value) -> Vec<usize> {
    let mut seen: Vec<String> = Vec::new();
    v.as_array()
        .unwrap()
        .iter()
        .map(|s| {
            let s = s.as_str().unwrap().to_string();
            match seen.iter().position(|x| *x == s) {
                Some(i) => i,
                None => {
                    seen.push(s);
                    seen.len() - 1
                }
            }
        })
        .collect()
}

fn case_data(c: &serde_json::Value) -> (NestedData, MultilevelOptions) {
    let y = floats(&c["y"]);
    let v = floats(&c["v"]);
    let rows: Vec<Vec<f64>> = c["x"].as_array().unwrap().iter().map(floats).collect();
    let p = rows[0].len();
    let x = DMatrix::from_fn(y.len(), p, |i, j| rows[i][j]);
    let grouping = Grouping {
        cluster: ids(&c["cluster"]),
        sample: ids(&c["sample"]),
    };
    let options = MultilevelOptions {
        restricted: c["restricted"].as_bool().unwrap(),
        sampling_correlation: c["sampling_correlation"].as_f64().unwrap(),
    };
    (NestedData::new(&y, &v, &x, &grouping).unwrap(), options)
}

fn matrix(v: &serde_json::Value) -> Vec<Vec<f64>> {
    v.as_array().unwrap().iter().map(floats).collect()
}

#[test]
fn fits_match_the_dense_reference() {
    let f = fixture("multilevel.json");
    let cases = f["cases"].as_array().unwrap();
    assert!(cases.len() >= 9);
    for c in cases {
        let name = c["name"].as_str().unwrap();
        let (d, options) = case_data(c);
        let got = fit(&d, &options).unwrap();
        assert!(got.converged(), "{name}: converged");
        let close = |a: f64, key: &str| {
            assert_close(
                a,
                c[key].as_f64().unwrap(),
                ML_REL,
                ML_ABS,
                &format!("{name} {key}"),
            )
        };
        close(got.tau2_cluster, "tau2_cluster");
        close(got.tau2_within, "tau2_within");
        close(got.q, "q");
        let beta = floats(&c["beta"]);
        let cov = matrix(&c["cov_model"]);
        for j in 0..got.p {
            assert_close(
                got.beta[j],
                beta[j],
                ML_REL,
                ML_ABS,
                &format!("{name} beta {j}"),
            );
            for (l, &want) in cov[j].iter().enumerate() {
                assert_close(
                    got.cov[(j, l)],
                    want,
                    ML_REL,
                    ML_ABS,
                    &format!("{name} cov"),
                );
            }
        }
    }
}

#[test]
fn cr2_and_its_degrees_of_freedom_match_the_dense_reference() {
    let f = fixture("multilevel.json");
    for c in f["cases"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let (d, options) = case_data(c);
        let got = fit(&d, &options).unwrap();
        let robust = cr2(&d, &got).unwrap();
        let cov = matrix(&c["cov_cr2"]);
        let df = floats(&c["df_cr2"]);
        for j in 0..got.p {
            assert_close(robust.df[j], df[j], 1e-6, 1e-9, &format!("{name} df {j}"));
            for (l, &want) in cov[j].iter().enumerate() {
                assert_close(
                    robust.cov[(j, l)],
                    want,
                    1e-6,
                    1e-12,
                    &format!("{name} cr2 {j},{l}"),
                );
            }
        }
    }
}

#[test]
fn profile_intervals_and_the_cluster_test_match_the_dense_reference() {
    let f = fixture("multilevel.json");
    let level = Level::new(f["level"].as_f64().unwrap()).unwrap();
    for c in f["cases"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let (d, options) = case_data(c);
        let got = fit(&d, &options).unwrap();
        let [ci_c, ci_w] = component_intervals(&d, &got, level).unwrap();
        let want_c = floats(&c["tau2_cluster_ci"]);
        let ci_c = ci_c.unwrap();
        assert!(ci_c.converged, "{name}");
        assert_close(
            ci_c.lower,
            want_c[0],
            PROFILE_REL,
            1e-9,
            &format!("{name} ci_c lower"),
        );
        assert_close(
            ci_c.upper,
            want_c[1],
            PROFILE_REL,
            1e-9,
            &format!("{name} ci_c upper"),
        );
        match (ci_w, c["tau2_within_ci"].as_array()) {
            (Some(ci), Some(_)) => {
                let want = floats(&c["tau2_within_ci"]);
                assert_close(
                    ci.lower,
                    want[0],
                    PROFILE_REL,
                    1e-9,
                    &format!("{name} ci_w lo"),
                );
                assert_close(
                    ci.upper,
                    want[1],
                    PROFILE_REL,
                    1e-9,
                    &format!("{name} ci_w up"),
                );
            }
            (None, None) => {}
            other => panic!("{name}: within interval {other:?}"),
        }
        let lrt = cluster_test(&d, &got).unwrap();
        let want = c["lrt_statistic"].as_f64().unwrap();
        assert_close(lrt.statistic, want, 1e-6, 1e-8, &format!("{name} lrt"));
        assert_close(
            lrt.p,
            c["lrt_p"].as_f64().unwrap(),
            1e-5,
            1e-9,
            &format!("{name} p"),
        );
    }
}

/// The approximate Hotelling T² test of the moderators against the reference's explicit
/// double sum over clusters (Pustejovsky & Tipton 2018, section 3.2).
#[test]
fn the_hotelling_test_matches_the_dense_reference() {
    let f = fixture("multilevel.json");
    let mut checked = 0;
    for c in f["cases"].as_array().unwrap() {
        let want = &c["htz"];
        if want.is_null() {
            continue;
        }
        let name = c["name"].as_str().unwrap();
        let (d, options) = case_data(c);
        let got = fit(&d, &options).unwrap();
        let robust = cr2(&d, &got).unwrap();
        let columns: Vec<usize> = want["columns"]
            .as_array()
            .unwrap()
            .iter()
            .map(|j| j.as_u64().unwrap() as usize)
            .collect();
        let h = hotelling(&d, &got, &robust, &columns).unwrap().unwrap();
        let close = |a: f64, key: &str| {
            assert_close(
                a,
                want[key].as_f64().unwrap(),
                1e-6,
                1e-12,
                &format!("{name} {key}"),
            )
        };
        close(h.statistic, "statistic");
        close(h.df_den, "df_den");
        close(h.df_num, "df_num");
        close(h.p, "p");
        checked += 1;
    }
    assert!(checked >= 2);
}

/// Each row left out of the multilevel meta-regression, through the command line (the
/// fixture's effects as an already-transformed sheet): the refit's coefficients and
/// variance, the externally studentized residual and Cook's distance against the dense
/// reference (refits by scipy; the residual from the row's full conditional distribution).
#[test]
fn leave_one_out_diagnostics_match_the_dense_reference() {
    let f = fixture("multilevel.json");
    let c = f["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| !c["leave_one_out"].is_null())
        .expect("a case with leave-one-out values");
    let y = floats(&c["y"]);
    let v = floats(&c["v"]);
    let x = matrix(&c["x"]);
    let mut text = String::from("study,sample,cluster,coef,var,m1\n");
    for i in 0..y.len() {
        text.push_str(&format!(
            "r{i},{},{},{:.17e},{:.17e},{:.17e}\n",
            c["sample"][i].as_str().unwrap(),
            c["cluster"][i].as_str().unwrap(),
            y[i],
            v[i],
            x[i][1]
        ));
    }
    let sheet = write_file(&scratch("ml-loo"), "loo.csv", text.as_bytes());
    let j = json_ok(&[
        "explain",
        &sheet,
        "--transform",
        "none",
        "--moderator",
        "m1",
        "--uncentred",
        "--influence",
        "--json",
    ]);
    let got = j["influence"].as_array().unwrap();
    let want = c["leave_one_out"].as_array().unwrap();
    assert_eq!(got.len(), want.len());
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        let what = |k: &str| format!("row {i} {k}");
        assert_json_close(&g["without_tau2"], &w["tau2"], 1e-6, 1e-10, &what("tau2"));
        for b in 0..2 {
            assert_json_close(
                &g["without_coefficients"][b],
                &w["beta"][b],
                1e-6,
                1e-10,
                &what("beta"),
            );
        }
        assert_json_close(
            &g["rstudent"],
            &w["rstudent"],
            1e-5,
            1e-8,
            &what("rstudent"),
        );
        assert_json_close(
            &g["cooks_distance"],
            &w["cooks"],
            1e-5,
            1e-10,
            &what("cooks"),
        );
    }
}

/// The prediction for a cluster of the sheet (`check --in-cluster`): the best linear
/// unbiased predictor of x₀ᵀβ + uⱼ and its prediction-error variance against the dense
/// mixed-model expression with the full P matrix (Henderson 1975).
#[test]
fn the_known_cluster_prediction_matches_the_dense_reference() {
    let f = fixture("multilevel.json");
    for c in f["cases"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let want = &c["known_cluster"];
        let (d, options) = case_data(c);
        let got = fit(&d, &options).unwrap();
        // The first row's cluster is cluster 0 (numbered in order of first appearance).
        let x0 = floats(&want["x0"]);
        let (centre, pev) = in_cluster(&d, &got, 0, &x0).unwrap();
        let close = |a: f64, k: &str| {
            assert_close(
                a,
                want[k].as_f64().unwrap(),
                1e-7,
                1e-12,
                &format!("{name} {k}"),
            )
        };
        close(centre, "centre");
        close(pev, "pev");
    }
}

/// The permutation test beside a multilevel fit (whole clusters' moderator values
/// permuted) against its exact distribution: the reference refits the model (REML, CR2)
/// under all 120 orderings of 5 clusters' values. relyard's Monte Carlo p from 20,000
/// permutations lies within 4 standard errors of the exact p, and its observed statistic
/// is the reference's.
#[test]
fn the_cluster_permutation_test_matches_its_exact_distribution() {
    let f = fixture("multilevel.json");
    let c = &f["cluster_permutation"];
    let (y, v, x) = (floats(&c["y"]), floats(&c["v"]), floats(&c["moderator"]));
    let str_of = |key: &str, i: usize| c[key][i].as_str().unwrap().to_string();
    let mut sheet = String::from("study,sample,cluster,coef,var,x\n");
    for i in 0..y.len() {
        sheet.push_str(&format!(
            "r{i},{},{},{},{},{}\n",
            str_of("sample", i),
            str_of("cluster", i),
            y[i],
            v[i],
            x[i]
        ));
    }
    let dir = scratch("cluster-permutation");
    let path = write_file(&dir, "clusters.csv", sheet.as_bytes());
    let r = c["sampling_correlation"].as_f64().unwrap().to_string();
    let b = 20_000;
    let out = relyard(&[
        "explain",
        &path,
        "--transform",
        "none",
        "--moderator",
        "x",
        "--sampling-correlation",
        &r,
        "--permutations",
        &b.to_string(),
        "--json",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(doc["inference"], "robust");
    let slope = &doc["coefficients"][1];
    assert_close(
        slope["statistic"].as_f64().unwrap().abs(),
        c["statistic"].as_f64().unwrap(),
        1e-6,
        1e-9,
        "the observed |b1| / SE_CR2",
    );
    let exact = c["p_exact"].as_f64().unwrap();
    let se = (exact * (1.0 - exact) / b as f64).sqrt();
    for got in [
        slope["permutation_p"].as_f64().unwrap(),
        doc["omnibus"]["permutation_p"].as_f64().unwrap(),
    ] {
        assert!(
            (got - exact).abs() <= 4.0 * se + 1.0 / b as f64,
            "permutation p {got} against the exact {exact} (SE {se})"
        );
    }
}
