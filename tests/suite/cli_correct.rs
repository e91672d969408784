//! The `correct` command as a user meets it: summary files in the shapes people
//! actually paste (one triangle, SDs, mistakes), interval bookkeeping when a correction
//! is impossible, and the warnings that must appear. The numerical checks against
//! numpy live in reference_correct.rs.

use crate::common::*;

fn run_summary(path: &str, extra: &[&str]) -> std::process::Output {
    let mut args = vec![
        "correct",
        "--summary",
        path,
        "--n",
        "200",
        "--outcome",
        "y",
        "--predictor",
        "x1",
        "--rel",
        "x1=0.8",
        "--draws",
        "200",
    ];
    args.extend_from_slice(extra);
    relyard(&args)
}

fn summary_json(path: &str) -> serde_json::Value {
    let out = run_summary(path, &["--json"]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("JSON")
}

fn summary_error(path: &str) -> String {
    let out = run_summary(path, &[]);
    let err = String::from_utf8_lossy(&out.stderr).into_owned();
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    err
}

/// A matrix given as its lower triangle, its upper triangle or in full is the same
/// matrix: the corrected slope is identical.
#[test]
fn either_triangle_of_a_summary_is_enough() {
    let dir = scratch("triangles");
    let full = write_file(
        &dir,
        "full.csv",
        b"variable,x1,x2,y\nx1,1,0.4,0.3\nx2,0.4,1,0.35\ny,0.3,0.35,1\n",
    );
    let lower = write_file(
        &dir,
        "lower.csv",
        b"variable,x1,x2,y\nx1,1,,\nx2,0.4,1,\ny,0.3,0.35,1\n",
    );
    let upper = write_file(
        &dir,
        "upper.csv",
        b"variable,x1,x2,y\nx1,1,0.4,0.3\nx2,NA,1,0.35\ny,NA,NA,1\n",
    );
    let slope = |p: &str| {
        summary_json(p)["coefficients"][0]["corrected"]
            .as_f64()
            .unwrap()
    };
    let a = slope(&full);
    // Spearman's correction for one predictor: 0.3 / 0.8 (observed-SD units).
    assert_close(a, 0.3 / 0.8, 1e-12, 0.0, "one-predictor corrected slope");
    assert_eq!(a, slope(&lower));
    assert_eq!(a, slope(&upper));
}

/// Malformed summaries are refused with the file, row and reason, never a panic.
#[test]
fn malformed_summaries_are_explained() {
    let dir = scratch("bad-summaries");
    for (name, body, fragment) in [
        ("empty.csv", &b"\n"[..], "at least two variable names"),
        ("only-sd.csv", b"sd\n", "at least two variable names"),
        ("one-var.csv", b"variable,y,sd\ny,1,2\n", "at least two"),
        (
            "dup-row.csv",
            b"variable,x1,y\nx1,1,0.3\nx1,1,0.3\ny,0.3,1\n",
            "row 3, column variable: \"x1\" already has a row (row 2)",
        ),
        (
            "dup-header.csv",
            b"variable,x1,x1,y\nx1,1,0.3,0.3\n",
            "appears twice",
        ),
        ("no-row.csv", b"variable,x1,y\nx1,1,0.3\n", "no row for y"),
        (
            "both-missing.csv",
            b"variable,x1,y\nx1,1,\ny,,1\n",
            "missing on both sides",
        ),
        (
            "asym.csv",
            b"variable,x1,y\nx1,1,0.3\ny,0.4,1\n",
            "not symmetric",
        ),
        (
            "sd-contradicts.csv",
            b"variable,x1,y,sd\nx1,4,0.6,2\ny,0.6,9,2\n",
            "row 3, column sd",
        ),
        (
            "r-above-one.csv",
            b"variable,x1,y\nx1,1,1.2\ny,1.2,1\n",
            "strictly between -1 and 1",
        ),
        (
            "zero-diag.csv",
            b"variable,x1,y\nx1,0,0.3\ny,0.3,1\n",
            "must be above 0",
        ),
        (
            "text.csv",
            b"variable,x1,y\nx1,1,abc\ny,abc,1\n",
            "row 2, column y: \"abc\" is not a number",
        ),
        (
            "unknown-label.csv",
            b"variable,x1,y\nx1,1,0.3\nz,0.3,1\n",
            "\"z\" is not one of the variables",
        ),
    ] {
        let path = write_file(&dir, name, body);
        let err = summary_error(&path);
        assert!(err.contains(name), "{name}: the file is named: {err}");
        assert!(
            err.contains(fragment),
            "{name}: expected {fragment:?} in {err}"
        );
    }
}

/// A covariance matrix whose sd column agrees with its diagonal is accepted, and gives
/// the same standardized slope as the correlation matrix with those SDs.
#[test]
fn covariance_and_correlation_with_sds_agree() {
    let dir = scratch("cov-sd");
    let cov = write_file(
        &dir,
        "cov.csv",
        b"variable,x1,y,sd\nx1,4,1.8,2\ny,1.8,9,3\n",
    );
    let cor = write_file(
        &dir,
        "cor.csv",
        b"variable,x1,y,sd\nx1,1,0.3,2\ny,0.3,1,3\n",
    );
    let a = summary_json(&cov);
    let b = summary_json(&cor);
    let raw_a = a["coefficients"][0]["corrected"].as_f64().unwrap();
    let raw_b = b["coefficients"][0]["corrected"].as_f64().unwrap();
    // Slope 1.8/4 = 0.45 observed; corrected for reliability 0.8: 0.5625.
    assert_close(raw_a, 0.45 / 0.8, 1e-12, 0.0, "covariance input");
    assert_close(raw_b, raw_a, 1e-12, 0.0, "correlation + SD input");
}

/// A correlation whose correction is impossible keeps an interval only when it is
/// marked as capped at ±1, and the Monte Carlo interval says which end hit the bound.
#[test]
fn capped_correlation_intervals_are_marked() {
    let j = json_ok(&[
        "correct", "--r", "0.6", "--n", "100", "--rel-x", "0.5", "--rel-y", "0.5", "--draws",
        "500", "--json",
    ]);
    assert!(j["corrected"].is_null());
    assert_eq!(j["ci_capped"], serde_json::Value::Bool(true));
    let ci = floats(&j["ci"]);
    assert_eq!(ci[1], 1.0);
    assert!(ci[0] < 1.0);
    assert_eq!(j["mc_ci_at_bound"][1], serde_json::Value::Bool(true));
    // An admissible case: nothing capped.
    let j = json_ok(&[
        "correct", "--r", "0.3", "--n", "100", "--rel-x", "0.8", "--rel-y", "0.8", "--draws",
        "500", "--json",
    ]);
    assert_eq!(j["ci_capped"], serde_json::Value::Bool(false));
    assert_close(
        j["corrected"].as_f64().unwrap(),
        0.3 / 0.8,
        1e-12,
        0.0,
        "0.3 / √(0.8·0.8)",
    );
}

/// The sensitivity table contains the reliabilities actually used, so the headline
/// value can be found in it.
#[test]
fn sensitivity_grid_contains_the_point() {
    let j = json_ok(&[
        "correct", "--r", "0.3", "--n", "100", "--rel-x", "0.73", "--rel-y", "0.81", "--draws",
        "200", "--json",
    ]);
    let hit = j["sensitivity"].as_array().unwrap().iter().any(|c| {
        (c["rel_x"].as_f64().unwrap() - 0.73).abs() < 1e-12
            && (c["rel_y"].as_f64().unwrap() - 0.81).abs() < 1e-12
            && (c["corrected"].as_f64().unwrap() - j["corrected"].as_f64().unwrap()).abs() < 1e-12
    });
    assert!(hit, "{}", j["sensitivity"]);
}

/// Coefficient alpha as a reliability draws the over-correction warning.
#[test]
fn alpha_as_reliability_warns_of_over_correction() {
    let j = json_ok(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "100",
        "--rel-x",
        "0.7,kind=alpha",
        "--rel-y",
        "0.8",
        "--draws",
        "200",
        "--json",
    ]);
    assert!(
        warning_codes(&j)
            .iter()
            .any(|c| c == "lower_bound_reliability")
    );
    let out = relyard(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "100",
        "--rel-x",
        "0.7,kind=alphabet",
        "--rel-y",
        "0.8",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--rel-x"));
}

/// Raw data: rows with a missing value are counted and said; misspelt columns are
/// reported in the correct command's own terms.
#[test]
fn raw_data_problems_are_reported() {
    let dir = scratch("raw-missing");
    let path = write_file(
        &dir,
        "d.csv",
        b"a,b,y\n1,2,3\n2,,4\n3,1,2\n4,5,1\n2,2,2\n3,3,3\n1,4,2\n5,1,2\n2,3,4\n4,4,3\n",
    );
    let base = [
        "correct",
        "--data",
        &path,
        "--outcome",
        "y",
        "--predictor",
        "a",
        "--rel",
        "a=0.9",
        "--draws",
        "100",
    ];
    let mut args = base.to_vec();
    args.push("--json");
    let j = json_ok(&args);
    assert_eq!(
        j["n"].as_u64(),
        Some(10),
        "column b is not used: no row lost"
    );
    let mut args = base.to_vec();
    args.extend_from_slice(&["--predictor", "b", "--rel", "b=0.9", "--json"]);
    let j = json_ok(&args);
    assert_eq!(j["n"].as_u64(), Some(9));
    assert!(
        warning_codes(&j)
            .iter()
            .any(|c| c == "rows_with_missing_values")
    );
    let mut args = base.to_vec();
    args.extend_from_slice(&["--predictor", "bee", "--rel", "bee=0.9"]);
    let out = relyard(&args);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        err.contains("--predictor/--outcome") && err.contains("bee"),
        "{err}"
    );
    assert!(!err.contains("--items"), "{err}");
}

/// Options that contradict each other are refused.
#[test]
fn contradictory_regression_options_are_refused() {
    let dir = scratch("contradictions");
    let path = write_file(
        &dir,
        "s.csv",
        b"variable,x1,x2,y\nx1,1,0.4,0.3\nx2,0.4,1,0.35\ny,0.3,0.35,1\n",
    );
    for (extra, fragment) in [
        (vec!["--predictor", "x1"], "twice"),
        (vec!["--predictor", "y", "--rel", "y=0.9"], "outcome"),
        (vec!["--draws", "10"], "--draws"),
    ] {
        let out = run_summary(&path, &extra);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{extra:?}: {err}");
        assert!(
            err.contains(fragment),
            "{extra:?}: expected {fragment} in {err}"
        );
    }
    let out = relyard(&[
        "correct",
        "--summary",
        &path,
        "--n",
        "4",
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
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--n"));
}
