//! Meta-regression, permutation tests, influence, subgroups, placement and the
//! score-variance test against reference values made by general-purpose Python libraries
//! (tests/reference/make_fixtures.py → tests/reference/fixtures/metareg.json): explicit
//! k × k matrix computations in numpy with the score equations solved by scipy's brentq,
//! statsmodels WLS (coefficients, Knapp–Hartung SEs, F test, predictions) at the fitted
//! τ², scipy.stats tail areas, and an exact permutation distribution.

use crate::common::*;
use nalgebra::DMatrix;
use relyard::metareg::omnibus;
use relyard::pool::{CiMethod, FitOptions, MetaData, Model, Tau2Estimator, fit_model};
use std::process::Command;

fn matrix(v: &serde_json::Value) -> DMatrix<f64> {
    let rows: Vec<Vec<f64>> = v.as_array().unwrap().iter().map(floats).collect();
    DMatrix::from_fn(rows.len(), rows[0].len(), |i, j| rows[i][j])
}

#[test]
fn every_estimator_matches_the_reference_meta_regressions() {
    let f = fixture("metareg.json");
    for c in f["cases"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let (y, v, x) = (floats(&c["y"]), floats(&c["v"]), matrix(&c["x"]));
        let level = c["level"].as_f64().unwrap();
        let p = x.ncols();
        let data = MetaData::with_design(y, v, x).unwrap();
        for est in Tau2Estimator::ALL {
            let r = &c["estimators"][est.name()];
            for ci in [CiMethod::Wald, CiMethod::KnappHartung] {
                let opts = FitOptions {
                    model: Model::Random(est),
                    ci,
                    level: relyard::Level::new(level).unwrap(),
                    tau2_interval: true,
                    dependence: Default::default(),
                };
                let fit = fit_model(&data, &opts).unwrap();
                let what = |k: &str| format!("{name} {} {} {k}", est.name(), ci.name());
                assert_close(
                    fit.tau2.tau2,
                    r["tau2"].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("tau2"),
                );
                let (se_key, ci_key, p_key, om_key) = match ci {
                    CiMethod::Wald => ("se_wald", "ci_wald", "p_wald", "omnibus_wald"),
                    _ => ("se_kh", "ci_kh", "p_kh", "omnibus_kh"),
                };
                let beta = floats(&r["beta"]);
                let se = floats(&r[se_key]);
                let pv = floats(&r[p_key]);
                let cis = r[ci_key].as_array().unwrap();
                for j in 0..p {
                    let c = fit.coefficients[j];
                    assert_close(
                        c.estimate,
                        beta[j],
                        FIXTURE_REL,
                        FIXTURE_ABS,
                        &what(&format!("beta {j}")),
                    );
                    assert_close(
                        c.se,
                        se[j],
                        FIXTURE_REL,
                        FIXTURE_ABS,
                        &what(&format!("se {j}")),
                    );
                    assert_close(c.p, pv[j], 1e-6, 1e-12, &what(&format!("p {j}")));
                    let cj = floats(&cis[j]);
                    assert_close(
                        c.ci.lower,
                        cj[0],
                        FIXTURE_REL,
                        FIXTURE_ABS,
                        &what("ci lower"),
                    );
                    assert_close(
                        c.ci.upper,
                        cj[1],
                        FIXTURE_REL,
                        FIXTURE_ABS,
                        &what("ci upper"),
                    );
                }
                let columns: Vec<usize> = (1..p).collect();
                let om = omnibus(&fit, &columns).unwrap();
                let om_ref = &r[om_key];
                assert_close(
                    om.statistic,
                    om_ref["statistic"].as_f64().unwrap(),
                    1e-7,
                    1e-10,
                    &what("omnibus"),
                );
                assert_close(
                    om.p,
                    om_ref["p"].as_f64().unwrap(),
                    1e-6,
                    1e-14,
                    &what("omnibus p"),
                );
                assert_eq!(om.df, om_ref["df"].as_f64().unwrap());
                assert_close(
                    fit.heterogeneity.q,
                    r["qe"].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("qe"),
                );
                assert_close(
                    fit.heterogeneity.p,
                    r["qe_p"].as_f64().unwrap(),
                    1e-6,
                    1e-14,
                    &what("qe p"),
                );
                assert_close(
                    fit.i2,
                    r["i2"].as_f64().unwrap(),
                    FIXTURE_REL,
                    1e-8,
                    &what("i2"),
                );
                assert_close(
                    fit.h2,
                    r["h2"].as_f64().unwrap(),
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("h2"),
                );
                let t = fit.tau2_ci.unwrap();
                let t_ref = floats(&c["tau2_ci"]);
                assert_close(
                    t.lower,
                    t_ref[0],
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("tau2 ci lower"),
                );
                assert_close(
                    t.upper,
                    t_ref[1],
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("tau2 ci upper"),
                );
            }
        }
    }
}

/// A sheet of already-transformed effects with moderator columns, for the CLI.
fn effects_sheet(dir: &std::path::Path, name: &str, c: &serde_json::Value) -> String {
    let (y, v, x) = (floats(&c["y"]), floats(&c["v"]), matrix(&c["x"]));
    let names: Vec<String> = c["names"].as_array().unwrap()[1..]
        .iter()
        .map(|n| n.as_str().unwrap().replace('=', "_"))
        .collect();
    let mut text = format!("study,coef,var,{}\n", names.join(","));
    for i in 0..y.len() {
        let mods: Vec<String> = (1..x.ncols())
            .map(|j| format!("{:.17e}", x[(i, j)]))
            .collect();
        text.push_str(&format!(
            "s{i},{:.17e},{:.17e},{}\n",
            y[i],
            v[i],
            mods.join(",")
        ));
    }
    write_file(dir, name, text.as_bytes())
}

/// `relyard explain --json` reproduces the reference, R² included (R² is computed against
/// the intercept-only model fitted with the same estimator).
#[test]
fn explain_reports_the_reference_values() {
    let f = fixture("metareg.json");
    let dir = scratch("explain-ref");
    for c in f["cases"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let path = effects_sheet(&dir, &format!("{name}.csv"), c);
        let mods: Vec<String> = c["names"].as_array().unwrap()[1..]
            .iter()
            .map(|n| n.as_str().unwrap().replace('=', "_"))
            .collect();
        for (est, ci) in [
            ("reml", "knapp-hartung"),
            ("ml", "wald"),
            ("pm", "knapp-hartung"),
        ] {
            let mut args = vec![
                "explain",
                path.as_str(),
                "--transform",
                "none",
                // The reference intercepts are at the moderators' zero.
                "--uncentred",
                "--json",
                "--tau2",
                est,
                "--ci",
                ci,
            ];
            let level = c["level"].as_f64().unwrap().to_string();
            args.extend(["--level", level.as_str()]);
            for m in &mods {
                args.extend(["--moderator", m.as_str()]);
            }
            let out = relyard(&args);
            assert_eq!(
                out.status.code(),
                Some(0),
                "{}",
                String::from_utf8_lossy(&out.stderr)
            );
            let j: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
            let r = &c["estimators"][est];
            let what = |k: &str| format!("{name} {est} {ci} {k}");
            assert_json_close(
                &j["tau2"],
                &r["tau2"],
                FIXTURE_REL,
                FIXTURE_ABS,
                &what("tau2"),
            );
            match r["r2"].as_f64() {
                Some(r2) => assert_close(j["r2"].as_f64().unwrap(), r2, 1e-7, 1e-9, &what("r2")),
                None => assert!(j["r2"].is_null(), "{}", what("r2 null")),
            }
            let key = if ci == "wald" {
                "omnibus_wald"
            } else {
                "omnibus_kh"
            };
            assert_json_close(
                &j["omnibus"]["statistic"],
                &r[key]["statistic"],
                1e-7,
                1e-10,
                &what("omnibus"),
            );
            assert_json_close(&j["qe"], &r["qe"], FIXTURE_REL, FIXTURE_ABS, &what("qe"));
            assert_eq!(j["qe_df"].as_f64().unwrap(), r["qe_df"].as_f64().unwrap());
            let beta = floats(&r["beta"]);
            for (b, coef) in beta.iter().zip(j["coefficients"].as_array().unwrap()) {
                assert_close(
                    coef["estimate"].as_f64().unwrap(),
                    *b,
                    FIXTURE_REL,
                    FIXTURE_ABS,
                    &what("coefficient"),
                );
                assert!(
                    coef["name"].is_string() && coef["se"].is_number() && coef["p"].is_number()
                );
                assert_eq!(floats(&coef["ci"]).len(), 2);
            }
        }
    }
}

/// The permutation p value against the exact permutation distribution (all 720 orderings
/// of one moderator over six studies, enumerated with numpy): within Monte Carlo error.
/// The same seed gives the same result with one thread or several.
#[test]
fn permutation_p_matches_the_exact_distribution() {
    let f = fixture("metareg.json");
    let e = &f["exact_permutation"];
    let dir = scratch("perm");
    let (y, v, x) = (floats(&e["y"]), floats(&e["v"]), floats(&e["x"]));
    let mut text = String::from("study,coef,var,x\n");
    for i in 0..y.len() {
        text.push_str(&format!("s{i},{},{},{}\n", y[i], v[i], x[i]));
    }
    let path = write_file(&dir, "perm.csv", text.as_bytes());
    let n = 20_000usize;
    let args = [
        "explain",
        path.as_str(),
        "--transform",
        "none",
        "--tau2",
        "dl",
        "--ci",
        "wald",
        "--moderator",
        "x",
        "--permutations",
        "20000",
        "--seed",
        "7",
        "--json",
    ];
    let run = |threads: &str| {
        let out = Command::new(env!("CARGO_BIN_EXE_relyard"))
            .args(args)
            .env("RAYON_NUM_THREADS", threads)
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        serde_json::from_slice::<serde_json::Value>(&out.stdout).unwrap()
    };
    let one = run("1");
    let two = run("2");
    assert_eq!(
        one["coefficients"], two["coefficients"],
        "thread count changed the result"
    );
    assert_eq!(one["omnibus"], two["omnibus"]);
    let exact = e["exact_p"].as_f64().unwrap();
    let got = one["coefficients"][1]["permutation_p"].as_f64().unwrap();
    let tol = 4.0 * (exact * (1.0 - exact) / n as f64).sqrt() + 2.0 / n as f64;
    assert!(
        (got - exact).abs() < tol,
        "permutation p {got}, exact {exact}, tolerance {tol}"
    );
    assert_close(
        one["coefficients"][1]["statistic"].as_f64().unwrap().abs(),
        e["observed_z"].as_f64().unwrap(),
        1e-9,
        0.0,
        "observed z",
    );
    // With one moderator the omnibus test is the coefficient's test.
    assert_eq!(
        one["omnibus"]["permutation_p"],
        one["coefficients"][1]["permutation_p"]
    );
    assert!(one["coefficients"][0]["permutation_p"].is_null());
}

/// Leave-one-out refits of the BCG log risk ratios (REML) against numpy.
#[test]
fn influence_matches_leave_one_out_refits() {
    let f = fixture("metareg.json");
    let r = &f["influence"];
    let dir = scratch("influence");
    let (y, v) = (floats(&r["y"]), floats(&r["v"]));
    let mut text = String::from("study,coef,var\n");
    for i in 0..y.len() {
        text.push_str(&format!("s{i},{:.17e},{:.17e}\n", y[i], v[i]));
    }
    let path = write_file(&dir, "inf.csv", text.as_bytes());
    let j = json_ok(&[
        "explain",
        &path,
        "--transform",
        "none",
        "--influence",
        "--json",
        "--ci",
        "wald",
    ]);
    let got = j["influence"].as_array().unwrap();
    let want = r["leave_one_out"].as_array().unwrap();
    assert_eq!(got.len(), want.len());
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        let what = |k: &str| format!("study {i} {k}");
        assert_json_close(
            &g["rstudent"],
            &w["rstudent"],
            1e-7,
            1e-9,
            &what("rstudent"),
        );
        assert_json_close(
            &g["cooks_distance"],
            &w["cooks_distance"],
            1e-6,
            1e-10,
            &what("cook"),
        );
        assert_json_close(
            &g["without_tau2"],
            &w["tau2"],
            FIXTURE_REL,
            FIXTURE_ABS,
            &what("tau2"),
        );
        assert_close(
            floats(&g["without_coefficients"])[0],
            w["estimate"].as_f64().unwrap(),
            FIXTURE_REL,
            FIXTURE_ABS,
            &what("estimate"),
        );
        let flagged = w["rstudent"].as_f64().unwrap().abs() > 1.959963984540054;
        assert_eq!(
            g["outlier"].as_bool().unwrap(),
            flagged,
            "{}",
            what("outlier flag")
        );
    }
}

/// Subgroup benchmarks of the BCG log risk ratios by latitude band, and Q_between.
#[test]
fn subgroups_match_separate_fits() {
    let f = fixture("metareg.json");
    let r = &f["subgroups"];
    let dir = scratch("subgroups");
    let (y, v) = (floats(&r["y"]), floats(&r["v"]));
    let groups: Vec<&str> = r["groups"]
        .as_array()
        .unwrap()
        .iter()
        .map(|g| g.as_str().unwrap())
        .collect();
    let mut text = String::from("study,coef,var,band\n");
    for i in 0..y.len() {
        text.push_str(&format!("s{i},{:.17e},{:.17e},{}\n", y[i], v[i], groups[i]));
    }
    let path = write_file(&dir, "sub.csv", text.as_bytes());
    let j = json_ok(&[
        "explain",
        &path,
        "--transform",
        "none",
        "--by",
        "band",
        "--json",
    ]);
    let got = j["subgroups"]["groups"].as_array().unwrap();
    for want in r["levels"].as_array().unwrap() {
        let level = want["level"].as_str().unwrap();
        let g = got.iter().find(|g| g["level"] == level).unwrap();
        assert_eq!(g["k"], want["k"]);
        assert_json_close(
            &g["estimate"],
            &want["estimate"],
            FIXTURE_REL,
            FIXTURE_ABS,
            level,
        );
        assert_json_close(&g["tau2"], &want["tau2"], FIXTURE_REL, FIXTURE_ABS, level);
    }
    let qb = &j["subgroups"]["q_between"];
    assert_json_close(&qb["statistic"], &r["q_between"], 1e-7, 1e-10, "Q between");
    assert_json_close(&qb["p"], &r["p"], 1e-6, 1e-12, "Q between p");
    assert!(j["subgroups"]["moderator_test"]["statistic"].is_number());
}

fn alpha_sheet(dir: &std::path::Path, rows: &serde_json::Value) -> String {
    let mut text = String::from("study,coef,n,items,x,sd,sd_metric,scale_min,scale_max\n");
    for r in rows.as_array().unwrap() {
        text.push_str(&format!(
            "{},{},{},{},{},{},{},{},{}\n",
            r["study"].as_str().unwrap(),
            r["coef"],
            r["n"],
            r["items"],
            r["x"],
            r["sd"],
            r["sd_metric"].as_str().unwrap(),
            r["scale_min"],
            r["scale_max"]
        ));
    }
    write_file(dir, "alphas.csv", text.as_bytes())
}

/// `relyard check`: expected coefficient, its CI, the ranges for the true and an observed
/// coefficient, and the percentile, with and without a moderator (statsmodels
/// predictions; scipy t quantiles).
#[test]
fn check_matches_the_reference_placement() {
    let f = fixture("metareg.json");
    let dir = scratch("check-ref");
    let path = alpha_sheet(&dir, &f["alpha_sheet"]);
    for case in f["placement"].as_array().unwrap() {
        let new = &case["new"];
        let (coef, n, items) = (
            new["coef"].to_string(),
            new["n"].to_string(),
            new["items"].to_string(),
        );
        let mut args = vec![
            "check",
            path.as_str(),
            "--coef",
            &coef,
            "--n",
            &n,
            "--items",
            &items,
            "--json",
        ];
        let at;
        if let Some(x0) = case["x0"].as_f64() {
            at = format!("x={x0}");
            args.extend(["--moderator", "x", "--at", at.as_str()]);
        }
        let out = relyard(&args);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let j: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        let what = |k: &str| format!("x0 {} {k}", case["x0"]);
        assert_json_close(
            &j["expected"],
            &case["expected"],
            1e-8,
            1e-10,
            &what("expected"),
        );
        for key in ["ci", "pi", "pi_observed"] {
            let (g, w) = (floats(&j[key]), floats(&case[key]));
            assert_close(g[0], w[0], 1e-7, 1e-10, &what(key));
            assert_close(g[1], w[1], 1e-7, 1e-10, &what(key));
        }
        assert_json_close(
            &j["percentile"],
            &case["percentile"],
            1e-6,
            1e-8,
            &what("percentile"),
        );
        let verdict = j["verdict"].as_str().unwrap();
        let po = floats(&case["pi_observed"]);
        let c = new["coef"].as_f64().unwrap();
        let want = if c < po[0] {
            "below"
        } else if c > po[1] {
            "above"
        } else {
            "within"
        };
        assert_eq!(verdict, want);
        assert!(j["paragraph"].as_str().unwrap().contains("percentile"));
        assert!(
            j["caution"]
                .as_str()
                .unwrap()
                .contains("professional testing standards")
        );
    }
}

/// The score-variance test on a sheet with sum- and mean-score SDs (POMP metric).
#[test]
fn score_spread_matches_the_reference() {
    let f = fixture("metareg.json");
    let dir = scratch("spread-ref");
    let path = alpha_sheet(&dir, &f["alpha_sheet"]);
    let j = json_ok(&["explain", &path, "--score-spread", "--json"]);
    let s = &j["score_spread"];
    let r = &f["score_spread"];
    assert_eq!(s["metric"], "pomp");
    assert_eq!(s["scale"], "bonett");
    for key in [
        "slope",
        "se",
        "p_zero",
        "p_minus_two",
        "tau2_share",
        "typical_sd",
    ] {
        assert_json_close(&s[key], &r[key], 1e-6, 1e-12, key);
    }
    let (g, w) = (floats(&s["ci"]), floats(&r["ci"]));
    assert_close(g[0], w[0], 1e-7, 1e-10, "ci lower");
    assert_close(g[1], w[1], 1e-7, 1e-10, "ci upper");
}

/// The score-variance test on test–retest correlations: ln(1 − r) with the delta-method
/// variance (1 + r)²/(n − 3) (numpy/statsmodels reference).
#[test]
fn score_spread_on_retest_correlations() {
    let f = fixture("metareg.json");
    let r = &f["retest_spread"];
    let dir = scratch("retest-spread");
    let mut text = String::from("study,coef,n,coef_type,sd,sd_metric,scale_min,scale_max\n");
    for row in r["rows"].as_array().unwrap() {
        text.push_str(&format!(
            "{},{},{},retest,{},{},{},{}\n",
            row["study"].as_str().unwrap(),
            row["coef"],
            row["n"],
            row["sd"],
            row["sd_metric"].as_str().unwrap(),
            row["scale_min"],
            row["scale_max"]
        ));
    }
    let path = write_file(&dir, "retest.csv", text.as_bytes());
    let j = json_ok(&["explain", &path, "--score-spread", "--json"]);
    let s = &j["score_spread"];
    assert_eq!(
        j["transform"], "fisher-z",
        "the main model keeps its own transform"
    );
    assert_json_close(&s["slope"], &r["slope"], 1e-6, 1e-10, "slope");
    assert_json_close(&s["se"], &r["se"], 1e-6, 1e-10, "se");
    assert_json_close(&s["tau2"], &r["tau2"], 1e-6, 1e-10, "tau2");
}
