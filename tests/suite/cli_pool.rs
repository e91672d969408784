//! `relyard pool` and `relyard template` run as a user runs them.

use crate::common::*;
use std::io::Read;
use std::process::{Command, Stdio};

fn demo() -> String {
    demo_file("candor-benchmark.csv")
}

fn json_of(out: &std::process::Output) -> serde_json::Value {
    assert_eq!(
        out.status.code(),
        Some(0),
        "stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("stdout is one JSON object")
}

#[test]
fn demo_sheet_gives_a_readable_benchmark() {
    let out = relyard(&["pool", &demo(), "--measure", "the demo inventory"]);
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8_lossy(&out.stdout);
    for frag in [
        "What a new study of the demo inventory should expect",
        "95% expected range",
        "Q-profile",
        "For your paper",
        "the demo inventory",
        "Bonett, D. G. (2002)",
        "professional testing standards",
    ] {
        assert!(text.contains(frag), "missing {frag:?} in\n{text}");
    }
}

/// The keys named in issue 2 are present with the stated types, and the coefficient-scale
/// results are the back-transformed transformed-scale results.
#[test]
fn json_output_has_the_contracted_keys() {
    let j = json_ok(&["pool", &demo(), "--json"]);
    for key in [
        "k", "estimate", "se", "tau2", "i2", "h2", "q", "q_df", "q_p",
    ] {
        assert!(j[key].is_number(), "{key} is not a number: {}", j[key]);
    }
    for key in ["ci", "tau2_ci", "pi"] {
        let pair = floats(&j[key]);
        assert_eq!(pair.len(), 2, "{key}");
        assert!(pair[0] <= pair[1], "{key} not ordered");
    }
    assert_eq!(j["schema_version"], "1.0");
    assert_eq!(j["k"], 36);
    assert_eq!(j["transform"], "bonett");
    let rel = &j["reliability"];
    let est = rel["estimate"].as_f64().unwrap();
    let ci = floats(&rel["ci"]);
    let pi = floats(&rel["pi"]);
    assert!(pi[0] <= ci[0] && ci[0] <= est && est <= ci[1] && ci[1] <= pi[1]);
    // Bonett: coefficient = 1 − exp(T), decreasing, so the transformed upper end is the
    // coefficient's lower end.
    let t = floats(&j["pi"]);
    assert_close(
        pi[0],
        1.0 - t[1].exp(),
        1e-12,
        1e-14,
        "pi lower back-transformed",
    );
    assert_close(
        pi[1],
        1.0 - t[0].exp(),
        1e-12,
        1e-14,
        "pi upper back-transformed",
    );
    assert_close(
        est,
        1.0 - j["estimate"].as_f64().unwrap().exp(),
        1e-12,
        1e-14,
        "estimate",
    );
    assert_eq!(j["studies"].as_array().unwrap().len(), 36);
    let wsum: f64 = j["studies"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["weight_percent"].as_f64().unwrap())
        .sum();
    assert_close(wsum, 100.0, 1e-12, 1e-9, "weights sum to 100%");
    assert!(
        j["paragraph"]
            .as_str()
            .unwrap()
            .contains("prediction interval")
    );
}

/// The same sheet saved with semicolons and decimal commas, or with tabs, gives the same
/// benchmark; so does an explicit --delimiter.
#[test]
fn delimiters_and_decimal_commas_are_read_alike() {
    let dir = scratch("delims");
    let text = std::fs::read_to_string(demo()).unwrap();
    let semi: String = text
        .lines()
        .map(|l| {
            let cells: Vec<String> = l.split(',').map(|c| c.replace('.', ",")).collect();
            cells.join(";") + "\n"
        })
        .collect();
    let tab = text.replace(',', "\t");
    let p_semi = write_file(&dir, "semi.csv", semi.as_bytes());
    let p_tab = write_file(&dir, "tab.tsv", tab.as_bytes());
    let base = json_ok(&["pool", &demo(), "--json"]);
    for (path, extra) in [
        (&p_semi, None),
        (&p_tab, None),
        (&p_semi, Some(";")),
        (&p_tab, Some("tab")),
    ] {
        let mut args = vec!["pool", path.as_str(), "--json"];
        if let Some(d) = extra {
            args.extend(["--delimiter", d]);
        }
        let j = json_of(&relyard(&args));
        assert_json_close(&j["estimate"], &base["estimate"], 1e-12, 0.0, path);
        assert_json_close(&j["tau2"], &base["tau2"], 1e-10, 0.0, path);
    }
}

#[test]
fn columns_can_be_mapped_from_the_sheets_own_names() {
    let dir = scratch("mapping");
    let path = write_file(
        &dir,
        "m.csv",
        b"Label,Reported alpha,Sample,Item count\nA,0.81,120,8\nB,0.77,95,8\nC,0.85,300,8\nD,0.72,60,8\n",
    );
    let j = json_ok(&[
        "pool",
        &path,
        "--json",
        "--column",
        "study=Label",
        "--column",
        "coef=Reported alpha",
        "--column",
        "n=Sample",
        "--column",
        "items=Item count",
    ]);
    assert_eq!(j["k"], 4);
    assert_eq!(j["studies"][0]["study"], "A");
}

#[test]
fn one_study_is_refused_and_two_give_no_prediction_interval() {
    let dir = scratch("small-k");
    let one = write_file(&dir, "one.csv", b"coef,n,items\n0.8,100,6\n");
    let out = relyard(&["pool", &one]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("only one study"));

    let two = write_file(&dir, "two.csv", b"coef,n,items\n0.8,100,6\n0.7,80,6\n");
    let out = relyard(&["pool", &two, "--json"]);
    let j = json_of(&out);
    assert!(j["pi"].is_null());
    assert!(j["reliability"]["pi"].is_null());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("no prediction interval"), "{err}");
    let codes = warning_codes(&j);
    assert!(
        codes.iter().any(|c| c == "no_prediction_interval"),
        "{codes:?}"
    );
    let text = String::from_utf8_lossy(&relyard(&["pool", &two]).stdout).into_owned();
    assert!(
        text.contains("k = 2 leaves the t quantile no degrees of freedom"),
        "{text}"
    );
}

#[test]
fn mixing_coefficient_families_needs_consent_and_a_transform() {
    let dir = scratch("mixed");
    let path = write_file(
        &dir,
        "mixed.csv",
        b"coef,n,items,coef_type\n0.8,100,6,alpha\n0.7,80,6,retest\n0.75,90,6,alpha\n",
    );
    let out = relyard(&["pool", &path]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("mixes internal-consistency") && err.contains("row 3"),
        "{err}"
    );
    let out = relyard(&["pool", &path, "--allow-mixed-types"]);
    assert_eq!(out.status.code(), Some(2));
    let out = relyard(&[
        "pool",
        &path,
        "--allow-mixed-types",
        "--transform",
        "bonett",
        "--json",
    ]);
    let j = json_of(&out);
    assert_eq!(j["k"], 3);
    let codes = warning_codes(&j);
    assert!(
        codes.iter().any(|c| c == "mixed_families_pooled"),
        "{codes:?}"
    );
}

#[test]
fn skip_invalid_pools_the_rest_and_lists_each_row() {
    let dir = scratch("skip");
    let path = write_file(
        &dir,
        "s.csv",
        b"study,coef,n,items\nA,0.81,120,8\nB,1.3,95,8\nC,0.85,300,8\nD,0.72,x,8\nE,0.79,150,8\n",
    );
    let out = relyard(&["pool", &path, "--skip-invalid", "--json"]);
    let j = json_of(&out);
    assert_eq!(j["k"], 3);
    let skipped = j["skipped_rows"].as_array().unwrap();
    assert_eq!(skipped.len(), 2);
    assert_eq!(skipped[0]["row"], 3);
    assert!(
        skipped[0]["reasons"][0]
            .as_str()
            .unwrap()
            .starts_with("column coef:")
    );
    assert_eq!(skipped[1]["row"], 5);
    assert_eq!(j["input"]["rows_skipped"], 2);
    let text =
        String::from_utf8_lossy(&relyard(&["pool", &path, "--skip-invalid"]).stdout).into_owned();
    assert!(
        text.contains("row 3: column coef: 1.3 is not a reliability coefficient"),
        "{text}"
    );
    assert!(text.contains("row 5: column n:"), "{text}");
}

#[test]
fn duplicated_labels_and_negative_alpha_are_warned_about() {
    let dir = scratch("dups");
    let path = write_file(
        &dir,
        "d.csv",
        b"study,coef,n,items\nA,0.81,120,8\nA,0.79,95,8\nC,-0.15,300,8\nD,0.72,80,8\n",
    );
    let out = relyard(&["pool", &path, "--json"]);
    let j = json_of(&out);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("\"A\" appears on rows 2 and 3"), "{err}");
    assert!(err.contains("negative coefficients on row 4"), "{err}");
    assert_eq!(j["k"], 4, "warnings must not drop rows");
}

#[test]
fn bad_options_give_status_2() {
    for args in [
        vec!["pool", "x.csv", "--tau2", "hs"],
        vec!["pool", "x.csv", "--ci", "profile"],
        vec!["pool", "x.csv", "--level", "95"],
        vec!["pool", "x.csv", "--level", "0"],
        vec!["pool", "x.csv", "--transform", "logit"],
        vec!["pool", "x.csv", "--column", "alpha=x"],
        vec!["pool", "x.csv", "--delimiter", "|"],
        vec!["pool"],
        vec!["unknown-command"],
    ] {
        let out = relyard(&args);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let out = relyard(&["pool", &demo(), "--level", "95"]);
    assert!(String::from_utf8_lossy(&out.stderr).contains("write 0.95"));
}

#[test]
fn every_estimator_and_interval_runs_on_the_demo() {
    for tau2 in ["reml", "ml", "dl", "pm", "sj", "he", "common"] {
        for ci in ["wald", "knapp-hartung", "knapp-hartung-floor"] {
            for tr in ["bonett", "hakstian-whalen", "raw"] {
                let j = json_ok(&[
                    "pool",
                    &demo(),
                    "--json",
                    "--tau2",
                    tau2,
                    "--ci",
                    ci,
                    "--transform",
                    tr,
                ]);
                assert_eq!(j["tau2_method"], tau2);
                let rel = &j["reliability"];
                let est = rel["estimate"].as_f64().unwrap();
                let cint = floats(&rel["ci"]);
                assert!(
                    cint[0] <= est && est <= cint[1],
                    "{tau2} {ci} {tr}: estimate in CI"
                );
                if tau2 == "common" {
                    // The common-effect model states no range for a new setting.
                    assert!(j["pi"].is_null() && rel["pi"].is_null(), "{tau2} {ci} {tr}");
                    continue;
                }
                let pi = floats(&rel["pi"]);
                assert!(
                    pi[0] <= cint[0] && cint[1] <= pi[1],
                    "{tau2} {ci} {tr}: CI inside PI"
                );
                assert!(pi[1] <= 1.0, "{tau2} {ci} {tr}: PI above 1");
            }
        }
    }
}

#[test]
fn template_writes_a_sheet_and_dictionary_and_does_not_overwrite() {
    let dir = scratch("template");
    let path = dir.join("my-sheet.csv");
    let p = path.to_string_lossy().into_owned();
    let out = relyard(&["template", &p, "--extra-column", "field_maturity"]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let sheet = std::fs::read_to_string(&path).unwrap();
    assert!(sheet.starts_with(
        "study,sample,cluster,coef,n,items,coef_type,sd,sd_metric,scale_min,scale_max,var,\
         field_maturity"
    ));
    let dict = std::fs::read_to_string(dir.join("my-sheet-dictionary.csv")).unwrap();
    assert!(dict.contains("coef_type") && dict.contains("field_maturity"));
    // A second run refuses; --force replaces.
    let again = relyard(&["template", &p]);
    assert_eq!(again.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&again.stderr).contains("--force"));
    assert_eq!(
        std::fs::read_to_string(&path).unwrap(),
        sheet,
        "refusal must leave the file alone"
    );
    let forced = relyard(&["template", &p, "--force"]);
    assert_eq!(forced.status.code(), Some(0));
    // The template, once filled in, is a valid sheet.
    let mut filled = std::fs::read_to_string(&path).unwrap();
    filled.push_str("A,,,0.8,100,6,,,,,,\nB,,,0.75,90,6,,,,,,\nC,,,0.85,150,6,,,,,,\n");
    std::fs::write(&path, filled).unwrap();
    let j = json_ok(&["pool", &p, "--json"]);
    assert_eq!(j["k"], 3);
    // Empty sample and cluster cells: every row is independent, pooled as always.
    assert!(j.get("dependence").is_none());
}

/// A reader that goes away early (`relyard pool … | head -1`) is not an error.
#[test]
fn a_closed_pipe_is_not_an_error() {
    let dir = scratch("pipe");
    let mut text = String::from("study,coef,n,items\n");
    for i in 0..6000 {
        text.push_str(&format!(
            "S{i},{:.3},{},8\n",
            0.7 + 0.2 * ((i * 7919) % 100) as f64 / 100.0,
            50 + i % 400
        ));
    }
    let path = write_file(&dir, "big.csv", text.as_bytes());
    let mut child = Command::new(env!("CARGO_BIN_EXE_relyard"))
        .args(["pool", &path, "--studies"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdout = child.stdout.take().unwrap();
    let mut buf = [0u8; 64];
    let _ = stdout.read(&mut buf).unwrap();
    drop(stdout);
    let status = child.wait().unwrap();
    assert_eq!(status.code(), Some(0));
}

#[test]
fn help_and_version_exit_0() {
    for args in [
        vec!["--help"],
        vec!["--version"],
        vec!["pool", "--help"],
        vec!["template", "--help"],
    ] {
        let out = relyard(&args);
        assert_eq!(out.status.code(), Some(0), "{args:?}");
        assert!(!out.stdout.is_empty());
    }
}

/// The paragraph says what the data show about heterogeneity: τ² at 0 (with the range at
/// the upper end of its interval), τ² above 0 but not clearly, and rows left out.
#[test]
fn paragraph_wording_follows_the_evidence() {
    let dir = scratch("wording");
    let flat = write_file(
        &dir,
        "flat.csv",
        b"study,coef,n,items\nA,0.80,100,6\nB,0.82,120,6\nC,0.79,90,6\nD,0.81,150,6\nE,0.80,110,6\n",
    );
    let j = json_ok(&["pool", &flat, "--json"]);
    let text = j["paragraph"].as_str().unwrap();
    assert!(text.contains("no more than sampling error"), "{text}");
    assert!(
        text.contains("at the upper end of τ²'s interval it would be"),
        "{text}"
    );
    assert!(!j["reliability"]["pi_at_tau2_upper"].is_null());

    let mild = write_file(
        &dir,
        "mild.csv",
        b"study,coef,n,items\nA,0.78,60,6\nB,0.84,70,6\nC,0.74,65,6\nD,0.83,80,6\nE,0.77,75,6\nF,0.86,50,6\n",
    );
    let j = json_ok(&["pool", &mild, "--json"]);
    let text = j["paragraph"].as_str().unwrap();
    let t = floats(&j["tau2_ci"]);
    assert!(
        j["tau2"].as_f64().unwrap() > 0.0 && t[0] == 0.0,
        "the sheet no longer tests the case"
    );
    assert!(text.contains("not clearly beyond sampling error"), "{text}");

    let skipped = write_file(
        &dir,
        "skipped.csv",
        b"study,coef,n,items\nA,0.81,120,8\nB,1.3,95,8\nC,0.85,300,8\nE,0.79,150,8\n",
    );
    let j = json_ok(&["pool", &skipped, "--json", "--skip-invalid"]);
    let text = j["paragraph"].as_str().unwrap();
    assert!(
        text.contains("one further coded row was left out"),
        "{text}"
    );
}
