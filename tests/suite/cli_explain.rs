//! `relyard explain` and `relyard check` run as a user runs them: the demo, and the
//! errors of issue 3 (singular designs, too few studies, unknown levels, missing values).

use crate::common::*;

fn demo() -> String {
    demo_file("candor-benchmark.csv")
}

fn fails_with(args: &[&str], fragments: &[&str]) {
    let out = relyard(args);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
    assert!(!err.contains("panicked"), "{err}");
    for f in fragments {
        assert!(err.contains(f), "{args:?}: missing {f:?} in {err}");
    }
}

#[test]
fn explain_on_the_demo_reads_well() {
    let out = relyard(&[
        "explain",
        &demo(),
        "--moderator",
        "population",
        "--moderator",
        "language",
        "--score-spread",
        "--by",
        "field_maturity",
        "--influence",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    for frag in [
        "What the moderators explain (36 studies in the model)",
        "compared with",
        "all moderators together",
        "(R²",
        "remaining differences   Q = ",
        "always on the Bonett scale",
        "slope of ln(SD)",
        "test of slope −2",
        "Reading: Score spread",
        "A benchmark per field_maturity",
        "groups differ (own τ²)",
        "Each study left out in turn",
        "row 16: column sd: no SD is reported",
    ] {
        assert!(text.contains(frag), "missing {frag:?} in\n{text}");
    }
}

#[test]
fn explain_json_has_the_contracted_keys() {
    let j = json_ok(&[
        "explain",
        &demo(),
        "--moderator",
        "language",
        "--score-spread",
        "--json",
    ]);
    for c in j["coefficients"].as_array().unwrap() {
        for key in ["name", "estimate", "se", "ci", "p"] {
            assert!(!c[key].is_null(), "coefficient key {key}");
        }
    }
    for key in ["tau2", "r2", "qe", "qe_df", "qe_p"] {
        assert!(j[key].is_number(), "{key}");
    }
    assert_eq!(floats(&j["tau2_ci"]).len(), 2);
    for key in ["statistic", "df", "p"] {
        assert!(j["omnibus"][key].is_number(), "omnibus {key}");
    }
    let s = &j["score_spread"];
    for key in ["slope", "se", "p_zero", "p_minus_two", "tau2_share"] {
        assert!(s[key].is_number(), "score_spread {key}");
    }
    assert_eq!(floats(&s["ci"]).len(), 2);
    // Six rows without an SD are listed, not dropped in silence.
    assert_eq!(s["excluded_rows"].as_array().unwrap().len(), 6);
    assert!(
        warning_codes(&j)
            .iter()
            .any(|c| c == "rows_left_out_of_model")
    );
}

/// The score-spread test works on the Bonett scale whatever --transform says.
#[test]
fn score_spread_ignores_the_transform() {
    let a = json_ok(&["explain", &demo(), "--score-spread", "--json"]);
    let b = json_ok(&[
        "explain",
        &demo(),
        "--score-spread",
        "--json",
        "--transform",
        "hakstian-whalen",
    ]);
    assert_eq!(a["score_spread"]["slope"], b["score_spread"]["slope"]);
    assert_ne!(
        a["coefficients"][0]["estimate"],
        b["coefficients"][0]["estimate"]
    );
}

#[test]
fn model_errors_are_clear() {
    let dir = scratch("explain-errors");
    let collinear = write_file(
        &dir,
        "collinear.csv",
        b"coef,n,items,x,x2\n0.8,100,6,1,2\n0.7,90,6,2,4\n0.75,80,6,3,6\n0.85,120,6,4,8\n0.78,60,6,5,10\n",
    );
    fails_with(
        &[
            "explain",
            &collinear,
            "--moderator",
            "x",
            "--moderator",
            "x2",
        ],
        &["collinear", "x", "x2"],
    );
    let constant = write_file(
        &dir,
        "constant.csv",
        b"coef,n,items,x\n0.8,100,6,1\n0.7,90,6,1\n0.75,80,6,1\n0.85,120,6,1\n",
    );
    fails_with(&["explain", &constant, "--moderator", "x"], &["same value"]);
    let few = write_file(
        &dir,
        "few.csv",
        b"coef,n,items,x\n0.8,100,6,1\n0.7,90,6,2\n0.75,80,6,3\n",
    );
    fails_with(
        &["explain", &few, "--moderator", "x"],
        &["3 studies", "at least 4"],
    );
    fails_with(
        &["explain", &few, "--moderator", "nosuch"],
        &["nosuch", "columns available"],
    );
    let texty = write_file(
        &dir,
        "texty.csv",
        b"coef,n,items,year\n0.8,100,6,2001\n0.7,90,6,2003\n0.75,80,6,n/r\n0.85,120,6,2010\n0.8,70,6,2012\n",
    );
    fails_with(
        &["explain", &texty, "--moderator", "year"],
        &["row 4, column year:", "--categorical year"],
    );
    fails_with(
        &[
            "explain",
            &demo(),
            "--moderator",
            "population",
            "--reference",
            "population=pilots",
        ],
        &["pilots", "no study"],
    );
    fails_with(&["explain", &demo()], &["nothing to explain"]);
    fails_with(
        &["explain", &demo(), "--permutations", "10"],
        &["--moderator"],
    );
    fails_with(&["explain", &demo(), "--by", "nosuch"], &["nosuch"]);
}

/// Rows without a moderator value leave the model and are listed.
#[test]
fn missing_moderator_values_are_listed() {
    let dir = scratch("missing-mod");
    let path = write_file(
        &dir,
        "m.csv",
        b"study,coef,n,items,x\nA,0.8,100,6,1\nB,0.7,90,6,\nC,0.75,80,6,3\nD,0.85,120,6,4\nE,0.78,60,6,5\nF,0.72,70,6,NA\n",
    );
    let j = json_ok(&["explain", &path, "--moderator", "x", "--json"]);
    assert_eq!(j["k"], 4);
    let rows: Vec<u64> = j["excluded_rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["row"].as_u64().unwrap())
        .collect();
    assert_eq!(rows, vec![3, 7]);
}

#[test]
fn check_on_the_demo() {
    let j = json_ok(&[
        "check",
        &demo(),
        "--coef",
        "0.62",
        "--n",
        "150",
        "--items",
        "10",
        "--json",
    ]);
    for key in ["expected", "percentile"] {
        assert!(j[key].is_number(), "{key}");
    }
    for key in ["ci", "pi", "pi_observed"] {
        let pair = floats(&j[key]);
        assert!(pair[0] < pair[1], "{key}");
    }
    let (pi, po) = (floats(&j["pi"]), floats(&j["pi_observed"]));
    assert!(
        po[0] < pi[0] && pi[1] < po[1],
        "the observed range is wider"
    );
    assert!(["below", "within", "above"].contains(&j["verdict"].as_str().unwrap()));
    // Orientation: a higher coefficient has a higher percentile.
    let hi = json_ok(&[
        "check",
        &demo(),
        "--coef",
        "0.95",
        "--n",
        "150",
        "--items",
        "10",
        "--json",
    ]);
    assert!(hi["percentile"].as_f64().unwrap() > j["percentile"].as_f64().unwrap());
    assert_eq!(hi["verdict"], "above");
    let lo = json_ok(&[
        "check",
        &demo(),
        "--coef",
        "0.2",
        "--n",
        "150",
        "--items",
        "10",
        "--json",
    ]);
    assert_eq!(lo["verdict"], "below");
    assert!(lo["percentile"].as_f64().unwrap() < 2.5);
    // Conditional on a moderator, and with the new study's SD.
    let c = json_ok(&[
        "check",
        &demo(),
        "--coef",
        "0.62",
        "--n",
        "150",
        "--items",
        "10",
        "--moderator",
        "language",
        "--at",
        "language=translated",
        "--sd",
        "0.5",
        "--sd-metric",
        "mean",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--json",
    ]);
    assert_eq!(c["at"]["language"], "translated");
    let s = &c["score_spread"];
    assert!(s["explained_shortfall"].is_number() && s["expected_at_own_sd"].is_number());
    let text = String::from_utf8_lossy(
        &relyard(&[
            "check",
            &demo(),
            "--coef",
            "0.62",
            "--n",
            "150",
            "--items",
            "10",
        ])
        .stdout,
    )
    .into_owned();
    for frag in [
        "expected coefficient",
        "observed range",
        "verdict",
        "For your paper",
        "professional testing standards",
    ] {
        assert!(text.contains(frag), "missing {frag:?}");
    }
}

#[test]
fn check_errors_are_clear() {
    let base = [
        "check", "SHEET", "--coef", "0.7", "--n", "150", "--items", "10",
    ];
    let with = |extra: &[&str]| {
        let d = demo();
        let mut v: Vec<String> = base.iter().map(|s| s.to_string()).collect();
        v[1] = d;
        v.extend(extra.iter().map(|s| s.to_string()));
        v
    };
    let run = |extra: &[&str], frags: &[&str]| {
        let v = with(extra);
        let args: Vec<&str> = v.iter().map(String::as_str).collect();
        fails_with(&args, frags);
    };
    run(&["--moderator", "language"], &["--at", "language"]);
    run(
        &["--moderator", "language", "--at", "language=klingon"],
        &["klingon", "levels"],
    );
    run(&["--at", "language=original"], &["no --moderator"]);
    run(
        &[
            "--moderator",
            "language",
            "--at",
            "language=original",
            "--at",
            "year=2020",
        ],
        &["year"],
    );
    run(&["--coef-type", "retest"], &["compare like with like"]);
    run(&["--sd", "0.5"], &["--sd-metric"]);
    run(&["--sd-metric", "mean"], &["give --sd too"]);
    let v = vec![
        "check", "x.csv", "--coef", "1.2", "--n", "150", "--items", "10",
    ];
    let out = relyard(&v);
    assert_eq!(out.status.code(), Some(2));
    let d = demo();
    fails_with(
        &["check", &d, "--coef", "1.2", "--n", "150", "--items", "10"],
        &["--coef", "below 1"],
    );
    fails_with(&["check", &d, "--coef", "0.7", "--n", "150"], &["--items"]);
}

/// A progress bar appears only on a terminal: piped runs keep stderr clean.
#[test]
fn no_progress_bar_when_piped() {
    let out = relyard(&[
        "explain",
        &demo(),
        "--moderator",
        "language",
        "--permutations",
        "200",
    ]);
    assert_eq!(out.status.code(), Some(0));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!err.contains("permutations ["), "{err}");
}

/// Regressions from the issue 3 review.
mod review {
    use super::*;

    /// A positive slope is not read as "between 0 and −2".
    #[test]
    fn readings_follow_the_slope_and_the_share() {
        use relyard::metareg::spread::{SpreadReading::*, read_slope};
        assert_eq!(read_slope(1.2, 1.6, 1.4, Some(40.0)), OppositeDirection);
        assert_eq!(read_slope(-2.7, -1.2, -1.9, Some(30.0)), ConsistentButMinor);
        assert_eq!(read_slope(-2.7, -1.2, -1.9, Some(60.0)), AccountsForMost);
        assert_eq!(read_slope(-1.5, -0.5, -1.0, Some(60.0)), AccountsForPart);
        assert_eq!(
            read_slope(-3.5, -2.5, -3.0, Some(60.0)),
            SteeperThanExpected
        );
        assert_eq!(read_slope(-0.5, 0.5, 0.0, Some(10.0)), DoesNotAccount);
        assert_eq!(read_slope(-2.5, 0.5, -1.0, Some(10.0)), Undecided);
        assert_eq!(read_slope(-2.5, -1.5, -2.0, None), NothingToExplain);
    }

    /// The range for an observed coefficient does not depend on the coefficient judged,
    /// even on scales whose variance depends on the coefficient.
    #[test]
    fn observed_range_does_not_depend_on_the_coefficient() {
        for tr in ["raw", "hakstian-whalen", "bonett"] {
            let a = json_ok(&[
                "check",
                &demo(),
                "--coef",
                "0.55",
                "--n",
                "60",
                "--items",
                "10",
                "--transform",
                tr,
                "--json",
            ]);
            let b = json_ok(&[
                "check",
                &demo(),
                "--coef",
                "0.95",
                "--n",
                "60",
                "--items",
                "10",
                "--transform",
                tr,
                "--json",
            ]);
            assert_eq!(a["pi_observed"], b["pi_observed"], "{tr}");
        }
    }

    /// An SD larger than a bounded scale allows is listed, not used; a new study's impossible
    /// SD is refused; a value outside the benchmark's range draws a warning.
    #[test]
    fn impossible_and_extreme_values() {
        let dir = scratch("review3");
        let mut text = std::fs::read_to_string(demo()).unwrap();
        text = text.replacen(
            "Sample 01,2009,0.85,alpha,572,10,0.76,mean",
            "Sample 01,2009,0.85,alpha,572,10,7.6,mean",
            1,
        );
        let path = write_file(&dir, "bad-sd.csv", text.as_bytes());
        let j = json_ok(&["explain", &path, "--score-spread", "--json"]);
        let excluded = j["score_spread"]["excluded_rows"].as_array().unwrap();
        let row2 = excluded
            .iter()
            .find(|e| e["row"] == 2)
            .expect("row 2 listed");
        assert!(
            row2["reasons"][0]
                .as_str()
                .unwrap()
                .contains("exceeds the largest possible")
        );
        fails_with(
            &[
                "check",
                &demo(),
                "--coef",
                "0.7",
                "--n",
                "150",
                "--items",
                "10",
                "--sd",
                "3",
                "--sd-metric",
                "mean",
                "--scale-min",
                "1",
                "--scale-max",
                "5",
            ],
            &["--sd 3", "exceeds the largest possible"],
        );
        let out = relyard(&[
            "check",
            &demo(),
            "--coef",
            "0.7",
            "--n",
            "150",
            "--items",
            "10",
            "--moderator",
            "year",
            "--at",
            "year=1900",
        ]);
        assert_eq!(out.status.code(), Some(0));
        assert!(
            String::from_utf8_lossy(&out.stderr).contains("year = 1900 lies outside the range")
        );
        let out = relyard(&[
            "check",
            &demo(),
            "--coef",
            "0.1",
            "--n",
            "150",
            "--items",
            "10",
        ]);
        assert!(String::from_utf8_lossy(&out.stdout).contains("below the 1st"));
    }

    /// A score-spread model that cannot be fitted leaves the main results standing.
    #[test]
    fn a_failing_spread_model_is_not_fatal() {
        let dir = scratch("review3-site");
        let path = write_file(
            &dir,
            "site.csv",
            b"study,coef,n,items,site,sd,sd_metric,scale_min,scale_max\n\
A,0.80,100,6,a,0.6,mean,1,5\nB,0.70,90,6,b,0.5,mean,1,5\nC,0.75,80,6,a,0.55,mean,1,5\n\
D,0.85,120,6,b,0.7,mean,1,5\nE,0.78,60,6,a,0.62,mean,1,5\nF,0.72,70,6,c,,,1,5\nG,0.74,75,6,c,,,1,5\n",
        );
        let out = relyard(&[
            "explain",
            &path,
            "--moderator",
            "site",
            "--reference",
            "site=c",
            "--score-spread",
            "--json",
        ]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let j: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        assert!(j["score_spread"].is_null());
        assert!(warning_codes(&j).iter().any(|c| c == "part_failed"));
        assert_eq!(j["coefficients"].as_array().unwrap().len(), 3);
    }

    #[test]
    fn other_errors() {
        let dir = scratch("review3-errors");
        let path = write_file(
            &dir,
            "empty-by.csv",
            b"coef,n,items,g\n0.8,100,6,\n0.7,90,6,\n0.75,80,6,\n",
        );
        fails_with(&["explain", &path, "--by", "g"], &["no values"]);
        fails_with(
            &["explain", &demo(), "--moderator", "sd"],
            &["not all on one metric", "--score-spread"],
        );
    }
}
