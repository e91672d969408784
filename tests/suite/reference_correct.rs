//! `relyard correct` against numpy (tests/reference/make_fixtures.py → inference.json),
//! a formula check of Spearman's correction, a seeded simulation with known true scores,
//! and the contract of issue 5.

use crate::common::*;
use relyard::correct::regression::eiv;
use relyard::random::{draw, stream};
use std::process::Command;

fn demo(name: &str) -> String {
    demo_file(name)
}

#[test]
fn corrected_correlations_match_numpy() {
    let f = fixture("inference.json");
    for c in f["correction"]["correlation"].as_array().unwrap() {
        let (r, n, rx, ry, level) = (
            c["r"].to_string(),
            c["n"].to_string(),
            c["rel_x"].to_string(),
            c["rel_y"].to_string(),
            c["level"].to_string(),
        );
        let j = json_ok(&[
            "correct", "--r", &r, "--n", &n, "--rel-x", &rx, "--rel-y", &ry, "--level", &level,
            "--draws", "2000", "--json",
        ]);
        assert_json_close(&j["corrected"], &c["corrected"], 1e-12, 0.0, "corrected");
        let (g, w) = (floats(&j["ci"]), floats(&c["ci"]));
        assert_close(g[0], w[0], 1e-10, 0.0, "ci lower");
        assert_close(g[1], w[1], 1e-10, 0.0, "ci upper");
        for key in ["observed", "corrected", "inadmissible_share"] {
            assert!(j[key].is_number(), "{key}");
        }
        assert_eq!(floats(&j["mc_ci"]).len(), 2);
    }
}

/// Formula check (no published worked example could be confirmed here): r = 0.30 with
/// reliabilities 0.70 and 0.80 corrects to 0.30/√0.56 = 0.400892.
#[test]
fn spearman_formula_check() {
    let j = json_ok(&[
        "correct", "--r", "0.30", "--n", "100", "--rel-x", "0.70", "--rel-y", "0.80", "--draws",
        "100", "--json",
    ]);
    assert_close(
        j["corrected"].as_f64().unwrap(),
        0.400892,
        0.0,
        5e-7,
        "Spearman",
    );
}

#[test]
fn errors_in_variables_matches_numpy() {
    let f = fixture("inference.json");
    let r = &f["correction"]["regression"];
    let names: Vec<String> = r["names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|n| n.as_str().unwrap().to_string())
        .collect();
    let cov = r["cov"].as_array().unwrap();
    let mut text = format!("variable,{}\n", names.join(","));
    for (i, row) in cov.iter().enumerate() {
        let cells: Vec<String> = floats(row).iter().map(|x| x.to_string()).collect();
        text.push_str(&format!("{},{}\n", names[i], cells.join(",")));
    }
    let dir = scratch("eiv");
    let path = write_file(&dir, "summary.csv", text.as_bytes());
    let rel = floats(&r["rel"]);
    let (r1, r2, ry) = (
        format!("x1={}", rel[0]),
        format!("x2={}", rel[1]),
        format!("y={}", r["rel_y"]),
    );
    let j = json_ok(&[
        "correct",
        "--summary",
        &path,
        "--n",
        "250",
        "--outcome",
        "y",
        "--predictor",
        "x1",
        "--predictor",
        "x2",
        "--rel",
        &r1,
        "--rel",
        &r2,
        "--rel",
        &ry,
        "--draws",
        "2000",
        "--json",
    ]);
    let coefs = j["coefficients"].as_array().unwrap();
    for (i, c) in coefs.iter().enumerate() {
        assert_eq!(c["name"], names[i].as_str());
        assert_close(
            c["ols"].as_f64().unwrap(),
            floats(&r["ols"])[i],
            1e-12,
            0.0,
            "ols",
        );
        assert_close(
            c["corrected"].as_f64().unwrap(),
            floats(&r["corrected"])[i],
            1e-12,
            0.0,
            "corrected",
        );
        assert_close(
            c["corrected_standardized"].as_f64().unwrap(),
            floats(&r["corrected_standardized"])[i],
            1e-12,
            0.0,
            "standardized",
        );
        assert_eq!(floats(&c["ci"]).len(), 2);
    }
    assert_json_close(
        &j["r2"]["observed"],
        &r["r2_observed"],
        1e-12,
        0.0,
        "r2 observed",
    );
    assert_json_close(
        &j["r2"]["corrected"],
        &r["r2_corrected"],
        1e-12,
        0.0,
        "r2 corrected",
    );
    assert_eq!(j["method"], "monte-carlo");
    assert!(
        j["note"]
            .as_str()
            .unwrap()
            .contains("structural equation model")
    );
}

/// True scores T with unit variance, X = T + error with reliability ρ, y = β T + e:
/// at n = 5,000 the EIV slope recovers β (mean bias below 0.02 over 50 replications),
/// while OLS is attenuated by the reliability ratio (to βρ for one predictor).
#[test]
fn eiv_recovers_the_true_slope() {
    let (beta, rho, n, reps) = (0.5f64, 0.7f64, 5000usize, 50u64);
    let err_sd = ((1.0 - rho) / rho).sqrt();
    let (mut eiv_sum, mut ols_sum) = (0.0, 0.0);
    for r in 0..reps {
        let mut rng = stream(77, r);
        let mut acc = relyard::items::moments::Listwise::new(2);
        for _ in 0..n {
            let t = draw::normal(&mut rng);
            let x = t + err_sd * draw::normal(&mut rng);
            let y = beta * t + 0.8 * draw::normal(&mut rng);
            acc.add(&[x, y]);
        }
        let cov = acc.finish().unwrap().cov;
        let e = eiv(&cov, &[rho], 1.0).unwrap();
        eiv_sum += e.corrected.unwrap().slopes[0];
        ols_sum += e.ols[0];
    }
    let (eiv_mean, ols_mean) = (eiv_sum / reps as f64, ols_sum / reps as f64);
    assert!((eiv_mean - beta).abs() < 0.02, "EIV mean slope {eiv_mean}");
    assert!(
        (ols_mean - beta * rho).abs() < 0.02,
        "OLS mean slope {ols_mean}, expected {}",
        beta * rho
    );
}

/// Two correlated predictors with reliabilities 0.8 and 0.6: EIV recovers both slopes.
#[test]
fn eiv_recovers_two_slopes() {
    let (b1, b2, n, reps) = (0.4, 0.3, 5000usize, 40u64);
    let (rho1, rho2) = (0.8f64, 0.6f64);
    let (mut s1, mut s2) = (0.0, 0.0);
    for r in 0..reps {
        let mut rng = stream(78, r);
        let mut acc = relyard::items::moments::Listwise::new(3);
        for _ in 0..n {
            let t1 = draw::normal(&mut rng);
            let t2 = 0.5 * t1 + 0.75f64.sqrt() * draw::normal(&mut rng);
            let x1 = t1 + ((1.0 - rho1) / rho1).sqrt() * draw::normal(&mut rng);
            let x2 = t2 + ((1.0 - rho2) / rho2).sqrt() * draw::normal(&mut rng);
            let y = b1 * t1 + b2 * t2 + 0.7 * draw::normal(&mut rng);
            acc.add(&[x1, x2, y]);
        }
        let e = eiv(&acc.finish().unwrap().cov, &[rho1, rho2], 1.0).unwrap();
        let c = e.corrected.unwrap();
        s1 += c.slopes[0];
        s2 += c.slopes[1];
    }
    assert!((s1 / reps as f64 - b1).abs() < 0.02, "{}", s1 / reps as f64);
    assert!((s2 / reps as f64 - b2).abs() < 0.02, "{}", s2 / reps as f64);
}

/// Impossible corrections are said plainly: no number presented as if it were fine.
#[test]
fn inadmissible_corrections_are_flagged() {
    let out = relyard(&[
        "correct", "--r", "0.6", "--n", "100", "--rel-x", "0.5", "--rel-y", "0.5", "--draws",
        "500", "--json",
    ]);
    assert_eq!(out.status.code(), Some(0));
    let j: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(j["corrected"].is_null());
    assert!(j["corrected_value"].as_f64().unwrap() > 1.0);
    assert!(j["inadmissible_share"].as_f64().unwrap() > 0.5);
    let codes = warning_codes(&j);
    assert!(codes.iter().any(|c| c == "inadmissible"), "{codes:?}");
    let text = String::from_utf8_lossy(
        &relyard(&[
            "correct", "--r", "0.6", "--n", "100", "--rel-x", "0.5", "--rel-y", "0.5", "--draws",
            "100",
        ])
        .stdout,
    )
    .into_owned();
    assert!(text.contains("IMPOSSIBLE"), "{text}");
    let dir = scratch("inadmissible");
    let path = write_file(
        &dir,
        "s.csv",
        b"variable,x1,x2,y\nx1,1,0.9,0.3\nx2,0.9,1,0.3\ny,0.3,0.3,1\n",
    );
    let j = json_ok(&[
        "correct",
        "--summary",
        &path,
        "--n",
        "200",
        "--outcome",
        "y",
        "--predictor",
        "x1",
        "--predictor",
        "x2",
        "--rel",
        "x1=0.8",
        "--rel",
        "x2=0.8",
        "--draws",
        "200",
        "--json",
    ]);
    // No number and no interval around an impossible point correction.
    for c in j["coefficients"].as_array().unwrap() {
        for key in [
            "corrected",
            "corrected_standardized",
            "se",
            "ci",
            "ci_standardized",
        ] {
            assert!(c[key].is_null(), "{key}: {c}");
        }
    }
    assert!(j["r2"]["corrected"].is_null());
    assert!(j["r2"]["corrected_ci"].is_null());
    assert!(
        j["inadmissible_reason"]
            .as_str()
            .unwrap()
            .contains("positive definite")
    );
}

/// Draws are identical for a seed whatever the number of threads.
#[test]
fn draws_do_not_depend_on_threads() {
    let args = [
        "correct",
        "--data",
        &demo("candor-study.csv"),
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--predictor",
        "safety",
        "--rel",
        "candor=0.8,n=250,items=8",
        "--rel",
        "safety=0.7",
        "--draws",
        "1500",
        "--seed",
        "5",
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
    assert_eq!(run("1")["coefficients"], run("2")["coefficients"]);
}

/// A benchmark's reliability: the sensitivity grid spans its prediction interval.
#[test]
fn sensitivity_spans_the_benchmark() {
    let bench = demo("candor-benchmark.csv");
    let pool = json_ok(&["pool", &bench, "--json"]);
    let pi = floats(&pool["reliability"]["pi"]);
    let spec = format!("sheet={bench}");
    let j = json_ok(&[
        "correct", "--r", "0.3", "--n", "200", "--rel-x", &spec, "--rel-y", "0.9", "--draws",
        "500", "--json",
    ]);
    let cells = j["sensitivity"].as_array().unwrap();
    let xs: Vec<f64> = cells.iter().map(|c| c["rel_x"].as_f64().unwrap()).collect();
    let lo = xs.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    assert_close(lo, pi[0].max(0.05), 1e-9, 0.0, "grid lower");
    assert_close(hi, pi[1].min(0.99), 1e-9, 0.0, "grid upper");
    assert_close(
        j["reliabilities"][0]["value"].as_f64().unwrap(),
        pool["reliability"]["estimate"].as_f64().unwrap(),
        1e-12,
        0.0,
        "benchmark point",
    );
}

#[test]
fn usage_errors() {
    for (args, frag) in [
        (vec!["correct"], "say what to correct"),
        (
            vec!["correct", "--r", "0.3", "--n", "100", "--rel-x", "0.8"],
            "--rel-y",
        ),
        (
            vec![
                "correct", "--r", "1.3", "--n", "100", "--rel-x", "0.8", "--rel-y", "0.8",
            ],
            "--r",
        ),
        (
            vec![
                "correct", "--r", "0.3", "--n", "100", "--rel-x", "1.4", "--rel-y", "0.8",
            ],
            "--rel-x",
        ),
        (
            vec![
                "correct",
                "--r",
                "0.3",
                "--n",
                "100",
                "--rel-x",
                "sheet=nope.csv",
                "--rel-y",
                "0.8",
            ],
            "no such file",
        ),
        (
            vec![
                "correct",
                "--summary",
                "x.csv",
                "--outcome",
                "y",
                "--predictor",
                "x1",
                "--rel",
                "x1=0.8",
            ],
            "--n",
        ),
    ] {
        let out = relyard(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(frag), "{args:?}: missing {frag} in {err}");
    }
    let study = demo("candor-study.csv");
    let out = relyard(&[
        "correct",
        "--data",
        &study,
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--predictor",
        "safety",
        "--rel",
        "candor=0.8",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--rel safety"));
}

/// A benchmark at moderator values is the conditional expectation `relyard check` gives.
#[test]
fn conditional_benchmark_matches_check() {
    let bench = demo("candor-benchmark.csv");
    let check = json_ok(&[
        "check",
        &bench,
        "--coef",
        "0.8",
        "--n",
        "100",
        "--items",
        "10",
        "--moderator",
        "language",
        "--at",
        "language=original",
        "--json",
    ]);
    let spec = format!("sheet={bench},at=language:original");
    let j = json_ok(&[
        "correct", "--r", "0.3", "--n", "200", "--rel-x", &spec, "--rel-y", "0.9", "--draws",
        "500", "--json",
    ]);
    assert_close(
        j["reliabilities"][0]["value"].as_f64().unwrap(),
        check["expected"].as_f64().unwrap(),
        1e-12,
        0.0,
        "conditional benchmark",
    );
    let (g, w) = (
        floats(&j["reliabilities"][0]["interval"]),
        floats(&check["pi"]),
    );
    assert_close(g[0], w[0], 1e-9, 0.0, "pi lower");
    assert_close(g[1], w[1], 1e-9, 0.0, "pi upper");
}
