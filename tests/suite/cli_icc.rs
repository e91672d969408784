//! `relyard icc`: the command line's reading of a table of scores and its document — the
//! forms of the reference fixture (icc.json, statsmodels/scipy) reproduced through the
//! command, rows with a missing cell left out and counted, columns chosen by name,
//! workbooks read, and too little data refused.

use crate::common::*;
use crate::workbooks::{Cell, write_xlsx};

/// The Shrout & Fleiss (1979) table (as recalled), with an identifier column.
fn shrout_fleiss_csv(dir: &std::path::Path, extra: &str) -> String {
    let f = fixture("icc.json");
    let case = &f["cases"][0];
    assert_eq!(case["name"], "shrout_fleiss");
    let mut text = String::from("target,j1,j2,j3,j4\n");
    for (i, row) in case["table"].as_array().unwrap().iter().enumerate() {
        let cells: Vec<String> = floats(row).iter().map(|x| x.to_string()).collect();
        text.push_str(&format!("T{},{}\n", i + 1, cells.join(",")));
    }
    text.push_str(extra);
    write_file(dir, "sf.csv", text.as_bytes())
}

#[test]
fn the_command_prints_the_reference_forms() {
    let dir = scratch("icc-cli");
    let path = shrout_fleiss_csv(&dir, "");
    let got = json_ok(&["icc", &path, "--json"]);
    let want = &fixture("icc.json")["cases"][0];
    assert_eq!(got["n"], 6);
    assert_eq!(got["k"], 4);
    assert_eq!(got["columns"], serde_json::json!(["j1", "j2", "j3", "j4"]));
    for (g, w) in got["forms"]
        .as_array()
        .unwrap()
        .iter()
        .zip(want["forms"].as_array().unwrap())
    {
        for key in ["model", "type", "unit"] {
            assert_eq!(g[key], w[key]);
        }
        assert_json_close(&g["value"], &w["value"], 1e-9, 1e-12, "value");
        assert_json_close(&g["ci"][0], &w["ci"][0], 1e-9, 1e-12, "lower");
        assert_json_close(&g["ci"][1], &w["ci"][1], 1e-9, 1e-12, "upper");
        assert_json_close(&g["p"], &w["p"], 1e-9, 1e-15, "p");
    }
    assert_json_close(&got["sem"], &want["sem"], 1e-9, 1e-12, "sem");
    assert_json_close(&got["sdc"], &want["sdc"], 1e-9, 1e-12, "sdc");
    // The readable summary names every form and the guidance.
    let out = relyard(&["icc", &path]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("two-way-mixed   agreement    single     0.290"),
        "{text}"
    );
    assert!(text.contains("test–retest") && text.contains("smallest detectable change"));
}

#[test]
fn rows_with_a_missing_cell_are_left_out_and_counted() {
    let dir = scratch("icc-missing");
    let path = shrout_fleiss_csv(&dir, "T7,5,,4,6\nT8,NA,3,3,5\n");
    let got = json_ok(&["icc", &path, "--json"]);
    assert_eq!(got["n"], 6, "the two incomplete rows are left out");
    assert_eq!(got["rows_left_out"], 2);
    assert_eq!(got["input"]["missing_cells"], 2);
    let codes: Vec<String> = got["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| w["code"].as_str().unwrap().to_string())
        .collect();
    assert!(
        codes.contains(&"rows_with_missing_values".to_string()),
        "{codes:?}"
    );
    // The same values as without the incomplete rows.
    let complete = json_ok(&[
        "icc",
        &shrout_fleiss_csv(&scratch("icc-complete"), ""),
        "--json",
    ]);
    assert_eq!(got["forms"], complete["forms"]);
}

#[test]
fn columns_are_chosen_by_name_and_workbooks_are_read() {
    let dir = scratch("icc-columns");
    let path = shrout_fleiss_csv(&dir, "");
    let two = json_ok(&["icc", &path, "--columns", "j1,j4", "--json"]);
    assert_eq!(two["k"], 2);
    assert_eq!(two["columns"], serde_json::json!(["j1", "j4"]));
    let out = relyard(&["icc", &path, "--columns", "j1,j9"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("j9"), "{err}");
    // A workbook of the same table gives the same forms.
    let f = fixture("icc.json");
    let mut rows = vec![vec![
        Cell::Text("j1"),
        Cell::Text("j2"),
        Cell::Text("j3"),
        Cell::Text("j4"),
    ]];
    for row in f["cases"][0]["table"].as_array().unwrap() {
        rows.push(floats(row).into_iter().map(Cell::Num).collect());
    }
    let xlsx = dir.join("sf.xlsx");
    write_xlsx(&xlsx, &[("Ratings", 1, rows)]);
    let from_book = json_ok(&["icc", xlsx.to_str().unwrap(), "--json"]);
    let from_text = json_ok(&["icc", &path, "--json"]);
    assert_eq!(from_book["forms"], from_text["forms"]);
    assert_eq!(from_book["input"]["sheet_name"], "Ratings");
}

#[test]
fn too_little_data_is_refused_with_a_reason() {
    let dir = scratch("icc-little");
    let one = write_file(&dir, "one.csv", b"t1\n3\n4\n5\n");
    let out = relyard(&["icc", &one]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("at least two columns"));
    let short = write_file(&dir, "short.csv", b"t1,t2\n3,4\n5,5\n");
    let out = relyard(&["icc", &short]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("at least three rows"));
}
