//! Dependent coefficients on the command line (issue 12): the sample and cluster columns,
//! their checks, the three ways of pooling, the counts in every output, and the special
//! case in which the multilevel model is the two-level one.

use crate::common::*;

/// An invented sheet: 14 rows from 11 samples in 8 clusters (two rows of one sample with
/// different n, a sample without a cluster, a row without a sample).
const SHEET: &str = "study,sample,cluster,coef,coef_type,n,items
Arden 2011a,A1,Arden 2011,0.82,alpha,265,8
Arden 2011a omega,A1,Arden 2011,0.84,omega,265,8
Arden 2011b,A2,Arden 2011,0.78,alpha,190,8
Brisk 2013,B1,Brisk 2013,0.88,alpha,410,8
Brisk 2013 t2,B1,Brisk 2013,0.86,alpha,398,8
Coyle 2014,C1,,0.74,alpha,120,8
Dunmore 2015,D1,Dunmore 2015,0.81,alpha,300,8
Dunmore 2015b,D2,Dunmore 2015,0.79,alpha,210,8
Dunmore 2015c,D3,Dunmore 2015,0.83,alpha,180,8
Ellery 2016,,Ellery 2016,0.69,alpha,95,8
Fenwick 2017,F1,Fenwick 2017,0.85,alpha,520,8
Garnet 2018,G1,Garnet 2018,0.77,alpha,150,8
Garnet 2018 omega,G1,Garnet 2018,0.80,omega,150,8
Hollis 2019,H1,Hollis 2019,0.90,alpha,640,8
";

fn sheet(name: &str, text: &str) -> String {
    write_file(&scratch(name), "sheet.csv", text.as_bytes())
}

#[test]
fn rows_samples_and_clusters_are_counted_once_everywhere() {
    let p = sheet("dep-count", SHEET);
    let j = json_ok(&["pool", &p, "--json"]);
    let d = &j["dependence"];
    assert_eq!(d["method"], "multilevel");
    assert_eq!(d["k_rows"], 14);
    assert_eq!(d["k_samples"], 11);
    assert_eq!(d["k_clusters"], 8);
    // Respondents once per sample, each at its largest n: 265 + 190 + 410 + 120 + 300 +
    // 210 + 180 + 95 + 520 + 150 + 640.
    assert_eq!(j["n_total"], 3080);
    assert_eq!(j["total_n"], 3080);
    assert_eq!(j["inference"], "robust");
    assert!(warning_codes(&j).contains(&"sample_sizes_differ".to_string()));
    let paragraph = j["paragraph"].as_str().unwrap();
    assert!(
        paragraph.contains("k = 14 coefficients reported for 11 samples in 8 clusters")
            && paragraph.contains("total N = 3,080, each sample counted once"),
        "{paragraph}"
    );
    // The prediction interval has clusters − 2 df and the CI is the robust one.
    assert_eq!(j["pi_df"], 6.0);
    assert_json_close(
        &j["ci"][0],
        &j["robust"]["ci"][0],
        1e-15,
        0.0,
        "ci = robust ci",
    );
    assert_eq!(d["sensitivity"].as_array().unwrap().len(), 4);
    let out = run_ok(&["pool", &p]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("14 rows from 11 samples in 8 clusters"),
        "{text}"
    );
    assert!(text.contains("3,080 (each sample counted once)"), "{text}");
    assert!(
        text.contains("What the assumed sampling correlation changes"),
        "{text}"
    );
}

#[test]
fn a_sample_split_across_clusters_is_an_error_naming_its_rows() {
    let text = SHEET.replace("Arden 2011b,A2,Arden 2011", "Arden 2011b,A1,Arden 2012");
    let p = sheet("dep-split", &text);
    let out = relyard(&["pool", &p]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("row 4, column cluster: sample \"A1\" is in cluster \"Arden 2012\"")
            && err.contains("rows 2, 3 and 4"),
        "{err}"
    );
}

#[test]
fn aggregate_pools_one_composite_per_sample_and_ignore_says_the_intervals_are_too_narrow() {
    let p = sheet("dep-ways", SHEET);
    let agg = json_ok(&["pool", &p, "--dependence", "aggregate", "--json"]);
    assert_eq!(agg["k"], 11);
    assert_eq!(agg["dependence"]["method"], "aggregate");
    assert!(agg["inference"].is_null());
    assert!(warning_codes(&agg).contains(&"cluster_dependence_remains".to_string()));
    // The composite of sample A1 (rows 2 and 3): the mean of its two Bonett values, with
    // the variance of a mean of two estimates correlated at 0.6 (equal variances v:
    // (2v + 2·0.6·v)/4 = 0.8v).
    let rows = agg["studies"].as_array().unwrap();
    let a1 = rows.iter().find(|s| s["study"] == "A1").unwrap();
    let (y2, y3) = ((1.0f64 - 0.82).ln(), (1.0f64 - 0.84).ln());
    assert_close(
        a1["effect"].as_f64().unwrap(),
        (y2 + y3) / 2.0,
        1e-12,
        0.0,
        "A1 effect",
    );
    let v = 2.0 * 8.0 / (7.0 * 263.0); // Bonett's variance 2k/((k − 1)(n − 2))
    assert_close(
        a1["variance"].as_f64().unwrap(),
        0.8 * v,
        1e-12,
        0.0,
        "A1 variance",
    );
    let ign = json_ok(&["pool", &p, "--dependence", "ignore", "--json"]);
    assert_eq!(ign["k"], 14);
    assert_eq!(ign["dependence"]["method"], "ignore");
    assert_eq!(ign["n_total"], 3080);
    assert!(warning_codes(&ign).contains(&"dependence_ignored".to_string()));
    let text = String::from_utf8_lossy(&run_ok(&["pool", &p, "--dependence", "ignore"]).stderr)
        .into_owned();
    assert!(text.contains("TOO NARROW"), "{text}");
}

#[test]
fn model_inference_and_the_sampling_correlation_are_settings() {
    let p = sheet("dep-settings", SHEET);
    let robust = json_ok(&["pool", &p, "--json"]);
    let model = json_ok(&["pool", &p, "--inference", "model", "--json"]);
    assert_eq!(model["inference"], "model");
    assert_json_close(&model["se"], &model["se_wald"], 1e-15, 0.0, "model se");
    assert_json_close(
        &model["estimate"],
        &robust["estimate"],
        1e-15,
        0.0,
        "estimate",
    );
    let r9 = json_ok(&["pool", &p, "--sampling-correlation", "0.9", "--json"]);
    assert_eq!(r9["dependence"]["sampling_correlation"], 0.9);
    // The sensitivity row at 0.9 is the run at 0.9.
    assert_json_close(
        &robust["dependence"]["sensitivity"][3]["estimate"],
        &r9["estimate"],
        1e-12,
        0.0,
        "sensitivity at 0.9",
    );
    for bad in ["1", "-0.1", "1.5"] {
        let arg = format!("--sampling-correlation={bad}");
        let out = relyard(&["pool", &p, &arg]);
        assert_eq!(out.status.code(), Some(2), "{bad}");
        assert!(String::from_utf8_lossy(&out.stderr).contains("--sampling-correlation"));
    }
    // The multilevel model is fitted by REML or ML only.
    let out = relyard(&["pool", &p, "--tau2", "dl"]);
    assert_eq!(out.status.code(), Some(2));
}

/// A sheet whose sample and cluster cells share nothing is pooled exactly as one without
/// those columns (the library's fit of one row per cluster is the two-level model: see
/// the unit tests of pool::multilevel).
#[test]
fn one_row_per_cluster_gives_the_two_level_model() {
    let text = "study,sample,cluster,coef,n,items
A,a,p1,0.82,265,8
B,b,p2,0.78,190,8
C,c,p3,0.88,410,8
D,d,p3,0.74,120,8
E,e,p4,0.81,300,8
F,f,p5,0.69,95,8
G,g,p6,0.85,520,8
H,h,p7,0.90,640,8
";
    // p3 holds two rows: drop it to one row per cluster.
    let one = text.replace("D,d,p3", "D,d,p8");
    let p = sheet("dep-two-level", &one);
    let ml = json_ok(&["pool", &p, "--inference", "model", "--ci", "wald", "--json"]);
    let plain = sheet(
        "dep-two-level-plain",
        &one.lines()
            .map(|l| {
                let c: Vec<&str> = l.split(',').collect();
                format!("{},{}", c[0], c[3..].join(","))
            })
            .collect::<Vec<_>>()
            .join("\n"),
    );
    let two = json_ok(&["pool", &plain, "--ci", "wald", "--json"]);
    assert!(
        two.get("dependence").is_none(),
        "no columns, no dependence keys"
    );
    // Each row is its own sample and cluster: nothing is shared, so the sheet is pooled as
    // one of independent rows.
    assert!(ml.get("dependence").is_none());
    assert_json_close(&ml["estimate"], &two["estimate"], 1e-12, 0.0, "estimate");
    // One cluster with two samples makes the sheet multilevel.
    let p2 = sheet("dep-two-level-b", text);
    let j = json_ok(&["pool", &p2, "--json"]);
    assert_eq!(j["dependence"]["k_clusters"], 7);
    assert_eq!(j["dependence"]["k_samples"], 8);
}

/// The invented sheet with two moderators (a year and a setting).
fn sheet_with_moderators(name: &str) -> String {
    let settings = [
        "clinic", "school", "clinic", "firm", "firm", "school", "clinic", "clinic", "school",
        "firm", "clinic", "school", "school", "firm",
    ];
    let mut lines = SHEET.lines();
    let mut text = format!("{},setting,year\n", lines.next().unwrap());
    for (line, setting) in lines.zip(settings) {
        let year = &line.split(',').next().unwrap().split(' ').nth(1).unwrap()[..4];
        text.push_str(&format!("{line},{setting},{year}\n"));
    }
    sheet(name, &text)
}

#[test]
fn explain_fits_the_multilevel_model_with_robust_tests_of_every_coefficient() {
    let p = sheet_with_moderators("dep-explain");
    let j = json_ok(&[
        "explain",
        &p,
        "--moderator",
        "year",
        "--moderator",
        "setting",
        "--influence",
        "--json",
    ]);
    assert_eq!(j["dependence"]["method"], "multilevel");
    assert_eq!(j["dependence"]["k_clusters"], 8);
    assert_eq!(j["inference"], "robust");
    let coefs = j["coefficients"].as_array().unwrap();
    assert_eq!(coefs.len(), 4);
    for c in coefs {
        // The coefficient's own se and p are the robust ones (the inference in force).
        assert_json_close(&c["se"], &c["robust_se"], 1e-15, 0.0, "se = robust_se");
        assert_json_close(&c["p"], &c["robust_p"], 1e-15, 0.0, "p = robust_p");
        assert!(c["robust_df"].as_f64().unwrap() > 0.0);
    }
    let h = &j["robust_omnibus"];
    assert_eq!(h["df_num"], 3.0);
    assert_json_close(
        &j["omnibus"]["p"],
        &h["p"],
        1e-15,
        0.0,
        "omnibus = Hotelling",
    );
    // Each row left out of the multilevel model in turn (checked against the dense
    // reference in reference_multilevel.rs).
    assert_eq!(j["influence"].as_array().unwrap().len(), 14);
    assert!(!warning_codes(&j).contains(&"part_failed".to_string()));
    // The permutation test permutes whole clusters: run for a moderator that takes one
    // value per cluster (the year of a paper; checked against its exact distribution in
    // reference_multilevel.rs) ...
    let perm = json_ok(&[
        "explain",
        &p,
        "--moderator",
        "year",
        "--permutations",
        "200",
        "--json",
    ]);
    assert_eq!(perm["permutations"]["count"], 200);
    let pp = perm["coefficients"][1]["permutation_p"].as_f64().unwrap();
    assert!(pp > 0.0 && pp <= 1.0, "{pp}");
    assert!(!warning_codes(&perm).contains(&"part_failed".to_string()));
    // ... and refused, saying why, for one that varies within a cluster (the setting of
    // Arden 2011's samples).
    let within = json_ok(&[
        "explain",
        &p,
        "--moderator",
        "setting",
        "--permutations",
        "20",
        "--json",
    ]);
    assert!(within["permutations"].is_null());
    let said = within["warnings"].as_array().unwrap().iter().any(|w| {
        w["code"] == "part_failed"
            && w["message"]
                .as_str()
                .unwrap()
                .contains("varies within a cluster")
    });
    assert!(said, "{}", within["warnings"]);
    let model = json_ok(&[
        "explain",
        &p,
        "--moderator",
        "year",
        "--inference",
        "model",
        "--json",
    ]);
    assert_eq!(model["inference"], "model");
    let c = &model["coefficients"][1];
    assert!(c["se"] != c["robust_se"], "model-based se differs from CR2");
}

#[test]
fn check_places_a_study_in_a_new_or_a_known_cluster() {
    let p = sheet("dep-check", SHEET);
    let args = [
        "check",
        p.as_str(),
        "--coef",
        "0.8",
        "--n",
        "200",
        "--items",
        "8",
    ];
    let mut a = args.to_vec();
    a.push("--json");
    let new = json_ok(&a);
    assert!(new["in_cluster"].is_null());
    assert_eq!(new["dependence"]["k_samples"], 11);
    // The true range for a new cluster is the benchmark's prediction interval.
    let pool = json_ok(&["pool", &p, "--json"]);
    assert_json_close(
        &new["pi"][0],
        &pool["reliability"]["pi"][0],
        1e-12,
        0.0,
        "check pi = pool pi",
    );
    let mut a = args.to_vec();
    a.extend(["--in-cluster", " brisk 2013 ", "--json"]);
    let known = json_ok(&a);
    assert_eq!(known["in_cluster"], "Brisk 2013");
    let width = |j: &serde_json::Value| {
        j["transformed"]["pi"][1].as_f64().unwrap() - j["transformed"]["pi"][0].as_f64().unwrap()
    };
    // A known cluster's range is narrower (its own variance is partly known) and centred on
    // its predicted value, above the benchmark for this cluster of high coefficients.
    assert!(
        width(&known) < width(&new),
        "{} vs {}",
        width(&known),
        width(&new)
    );
    assert!(known["expected"].as_f64().unwrap() > new["expected"].as_f64().unwrap());
    let mut a = args.to_vec();
    a.extend(["--in-cluster", "Nowhere 1999"]);
    let out = relyard(&a);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("--in-cluster") && err.contains("Arden 2011"),
        "{err}"
    );
    // Without dependent rows there is no cluster to name.
    let plain = sheet(
        "dep-check-plain",
        "study,coef,n,items\nA,0.8,100,6\nB,0.7,90,6\nC,0.85,120,6\n",
    );
    let out = relyard(&[
        "check",
        &plain,
        "--coef",
        "0.8",
        "--n",
        "100",
        "--items",
        "6",
        "--in-cluster",
        "A",
    ]);
    assert_eq!(out.status.code(), Some(2));
}

/// The score-spread test of dependent rows is the multilevel model too: ln(1 − coefficient)
/// on ln(SD), its slope tested on its own Satterthwaite df.
#[test]
fn the_score_spread_test_models_the_dependence() {
    let sds = [
        "0.62", "0.62", "0.55", "0.80", "0.78", "0.45", "0.66", "0.58", "0.70", "0.40", "0.75",
        "0.52", "0.52", "0.90",
    ];
    let mut lines = SHEET.lines();
    let mut text = format!("{},sd,sd_metric\n", lines.next().unwrap());
    for (line, sd) in lines.zip(sds) {
        text.push_str(&format!("{line},{sd},mean\n"));
    }
    let p = sheet("dep-spread", &text);
    let j = json_ok(&["explain", &p, "--score-spread", "--json"]);
    let s = &j["score_spread"];
    assert_eq!(s["k"], 14);
    // The spread model's slope carries the robust test of the main model's kind.
    assert!(!warning_codes(&j).contains(&"dependence_not_modelled".to_string()));
    let plain = json_ok(&[
        "explain",
        &p,
        "--score-spread",
        "--dependence",
        "ignore",
        "--json",
    ]);
    assert!(
        (s["se"].as_f64().unwrap() - plain["score_spread"]["se"].as_f64().unwrap()).abs() > 1e-6,
        "the multilevel slope's SE differs from the independent one"
    );
}

/// Under --dependence aggregate the explanation and the placement work on one composite
/// per sample; a moderator that varies within a sample, and sample or cluster as a
/// moderator, are refused with the reason.
#[test]
fn composites_reach_every_model_and_their_moderators_are_checked() {
    let p = sheet_with_moderators("dep-aggregate");
    let j = json_ok(&[
        "explain",
        &p,
        "--moderator",
        "year",
        "--dependence",
        "aggregate",
        "--json",
    ]);
    assert_eq!(j["k"], 11, "one composite per sample");
    assert!(j.get("dependence").is_none());
    assert!(warning_codes(&j).contains(&"cluster_dependence_remains".to_string()));
    let out = relyard(&[
        "explain",
        &p,
        "--moderator",
        "setting",
        "--dependence",
        "aggregate",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("sample \"A1\", rows 2 and 3"), "{err}");
    for column in ["sample", "cluster"] {
        let out = relyard(&["explain", &p, "--moderator", column]);
        assert_eq!(out.status.code(), Some(2), "{column}");
    }
    let check = json_ok(&[
        "check",
        &p,
        "--coef",
        "0.8",
        "--n",
        "200",
        "--items",
        "8",
        "--dependence",
        "aggregate",
        "--json",
    ]);
    assert_eq!(check["k"], 11);
    let pool = json_ok(&["pool", &p, "--dependence", "aggregate", "--json"]);
    assert_json_close(
        &check["expected"],
        &pool["reliability"]["estimate"],
        1e-12,
        0.0,
        "check and pool agree on the composites",
    );
}
