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

const Y_GROUPS: [&str; 6] = [
    "--y-factor",
    "calm=c1,c2,c3,c4",
    "--y-factor",
    "focus=f1,f2,f3,f4",
    "--y-factor",
    "drive=d1,d2,d3,d4",
];

/// Issue 14 item 5: `correct --items-x/--items-y` corrects the correlation with every
/// coefficient the item data give. Each row's reliabilities are those `relyard items`
/// reports for the same data (omega total against the scipy reference of
/// multidimensional_reference.py), each corrected r is r/√(r_xx r_yy), alpha and the glb
/// are marked as lower bounds, the value given has its own row, and without a value the
/// main correction takes the coefficient the items' reading recommends.
#[test]
fn item_data_give_the_correction_under_each_coefficient() {
    let dir = scratch("correct-by-coefficient");
    let y_file = subscale_items_csv(&dir);
    let demo = demo_file("candor-items.csv");
    let mut args = vec![
        "correct",
        "--r",
        "0.32",
        "--n",
        "250",
        "--items-x",
        &demo,
        "--x-reverse",
        "btci_04,btci_09",
        "--items-scale-min",
        "1",
        "--items-scale-max",
        "5",
        "--items-y",
        &y_file,
        "--rel-x",
        "0.81,kind=retest",
        "--draws",
        "500",
        "--json",
    ];
    args.extend(Y_GROUPS);
    let j = json_ok(&args);
    let rows = j["by_coefficient"].as_array().unwrap();
    let names: Vec<&str> = rows
        .iter()
        .map(|r| r["coefficient"].as_str().unwrap())
        .collect();
    assert_eq!(
        names,
        [
            "alpha",
            "omega",
            "omega_total",
            "omega_hierarchical",
            "glb",
            "given"
        ]
    );
    let x_items = json_ok(&[
        "items",
        &demo,
        "--reverse",
        "btci_04,btci_09",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--json",
    ]);
    let groups: Vec<String> = Y_GROUPS.iter().map(|a| a.replace("--y-", "--")).collect();
    let mut y_args = vec!["items", y_file.as_str(), "--json"];
    y_args.extend(groups.iter().map(String::as_str));
    let y_items = json_ok(&y_args);
    let reference = &fixture("multidimensional.json")["data"]["bifactor"]["coefficients"];
    let want_x = [
        x_items["alpha"].as_f64().unwrap(),
        x_items["omega"].as_f64().unwrap(),
        x_items["omega"].as_f64().unwrap(),
        x_items["omega"].as_f64().unwrap(),
        x_items["glb"]["value"].as_f64().unwrap(),
        0.81,
    ];
    let md = &y_items["multidimensional"];
    let want_y = [
        y_items["alpha"].as_f64().unwrap(),
        y_items["omega"].as_f64().unwrap(),
        md["omega_total"].as_f64().unwrap(),
        md["omega_hierarchical"].as_f64().unwrap(),
        y_items["glb"]["value"].as_f64().unwrap(),
        md["omega_total"].as_f64().unwrap(),
    ];
    assert_close(
        want_y[2],
        reference["omega_total"].as_f64().unwrap(),
        1e-6,
        1e-8,
        "ω_t",
    );
    for (i, r) in rows.iter().enumerate() {
        let (rx, ry) = (
            r["reliability_x"].as_f64().unwrap(),
            r["reliability_y"].as_f64().unwrap(),
        );
        assert_close(rx, want_x[i], 1e-12, 1e-14, names[i]);
        assert_close(ry, want_y[i], 1e-12, 1e-14, names[i]);
        let corrected = r["corrected"].as_f64().unwrap();
        assert_close(corrected, 0.32 / (rx * ry).sqrt(), 1e-12, 1e-14, names[i]);
        let ci = floats(&r["ci"]);
        assert!(ci[0] < corrected && corrected < ci[1], "{r}");
        let bound = matches!(names[i], "alpha" | "glb");
        assert_eq!(r["lower_bound"], bound, "{}", names[i]);
    }
    // The given row is the main correction: same reliabilities, same classical interval.
    assert_eq!(rows[5]["ci"], j["ci"]);
    assert_eq!(j["item_data"][0]["used"], serde_json::Value::Null);
    assert_eq!(j["item_data"][1]["used"], "omega_total");
    assert_close(
        j["reliabilities"][1]["value"].as_f64().unwrap(),
        want_y[2],
        1e-12,
        1e-14,
        "main y",
    );
    // The readable table.
    let args: Vec<&str> = args.into_iter().filter(|a| *a != "--json").collect();
    let out = run_ok(&args);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("The choice of coefficient"), "{text}");
    assert!(text.contains("greatest lower bound"), "{text}");
    assert!(text.contains("omega total of the bifactor model"), "{text}");
}

/// Without a value or item data the correction is refused; reverse keying needs the scale.
#[test]
fn item_data_options_are_checked() {
    let demo = demo_file("candor-items.csv");
    let out = relyard(&["correct", "--r", "0.3", "--n", "100", "--rel-y", "0.8"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--items-x"));
    let out = relyard(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "100",
        "--rel-y",
        "0.8",
        "--items-x",
        &demo,
        "--x-reverse",
        "btci_04",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--items-scale-min"));
    // Without subscales there are no bifactor rows.
    let j = json_ok(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "100",
        "--rel-y",
        "0.8",
        "--items-x",
        &demo,
        "--json",
        "--draws",
        "200",
    ]);
    let names: Vec<&str> = j["by_coefficient"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["coefficient"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["alpha", "omega", "glb"]);
}

/// Issue 14 item 5 for a regression with one predictor: each row's slope is the ordinary
/// slope over the row's reliability of the predictor (the errors-in-variables slope with one
/// predictor, b/ρ; Fuller 1987, section 1.1), the row with the values given is the main
/// correction (same slope and interval, same draws and seed), and lower bounds are marked.
#[test]
fn item_data_give_a_regression_slope_under_each_coefficient() {
    let dir = scratch("correct-slope-choice");
    let items = demo_file("candor-items.csv");
    let text = std::fs::read_to_string(&items).unwrap();
    // One score per respondent with every answer: the mean of the ten items, and an invented
    // outcome that depends on it.
    let mut data = String::from("respondent,candor,engagement\n");
    for (i, line) in text.lines().skip(1).enumerate() {
        let cells: Vec<&str> = line.split(',').collect();
        let values: Vec<f64> = cells[1..].iter().filter_map(|c| c.parse().ok()).collect();
        if values.len() == 10 {
            let x = values.iter().sum::<f64>() / 10.0;
            let noise = ((i * 7919) % 101) as f64 / 50.0 - 1.0;
            data.push_str(&format!("{},{x:.3},{:.3}\n", cells[0], 0.4 * x + noise));
        }
    }
    let file = write_file(&dir, "regression.csv", data.as_bytes());
    let j = json_ok(&[
        "correct",
        "--data",
        &file,
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--rel",
        "candor=0.8",
        "--items-x",
        &items,
        "--draws",
        "400",
        "--json",
    ]);
    let rows = j["by_coefficient"].as_array().unwrap();
    let names: Vec<&str> = rows
        .iter()
        .map(|r| r["coefficient"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["alpha", "omega", "glb", "given"]);
    let ols = j["coefficients"][0]["ols"].as_f64().unwrap();
    for r in rows {
        let rx = r["reliability_x"].as_f64().unwrap();
        assert_close(
            r["corrected"].as_f64().unwrap(),
            ols / rx,
            1e-10,
            1e-12,
            "b/ρ",
        );
        assert_eq!(r["reliability_y"].as_f64().unwrap(), 1.0);
        let bound = matches!(r["coefficient"].as_str().unwrap(), "alpha" | "glb");
        assert_eq!(r["lower_bound"], bound);
    }
    let given = &rows[3];
    assert_eq!(given["corrected"], j["coefficients"][0]["corrected"]);
    assert_eq!(given["ci"], j["coefficients"][0]["ci"]);
    // Two predictors with item data are refused.
    let out = relyard(&[
        "correct",
        "--data",
        &file,
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--predictor",
        "respondent",
        "--rel",
        "candor=0.8",
        "--rel",
        "respondent=1",
        "--items-x",
        &items,
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("one predictor"));
}

/// Review fixes: a regression given the outcome's item data but no outcome reliability says
/// the main correction took nothing from them (its given row keeps r_yy = 1); an error in a
/// score's item data names that score and file.
#[test]
fn item_data_without_a_value_and_their_errors_are_reported_truly() {
    let study = demo_file("candor-study.csv");
    let items = demo_file("candor-items.csv");
    let j = json_ok(&[
        "correct",
        "--data",
        &study,
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--rel",
        "candor=0.8",
        "--items-y",
        &items,
        "--draws",
        "200",
        "--json",
    ]);
    assert_eq!(j["item_data"][0]["variable"], "y");
    assert!(j["item_data"][0]["used"].is_null());
    let rows = j["by_coefficient"].as_array().unwrap();
    assert!(
        rows.iter()
            .all(|r| r["reliability_x"].as_f64() == Some(0.8))
    );
    let out = relyard(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "100",
        "--rel-x",
        "0.8",
        "--items-y",
        &items,
        "--y-columns",
        "btci_01,btci_99",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("btci_99"), "{err}");
}
