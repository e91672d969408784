//! Item data from SPSS files (issue 14 item 6): files written by pyreadstat
//! (tests/reference/spss_reference.py → tests/data/spss/), uncompressed and
//! zlib-compressed, give the values numpy gives for the same responses with every declared
//! user-missing code read as missing; a damaged file is refused, naming it.

use crate::common::*;

fn spss(name: &str) -> String {
    test_path(&format!("data/spss/{name}"))
        .to_string_lossy()
        .into_owned()
}

#[test]
fn spss_files_give_the_reference_values() {
    let want: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(spss("expected.json")).unwrap()).unwrap();
    for name in ["likert.sav", "likert.zsav"] {
        let j = json_ok(&["items", &spss(name), "--json"]);
        assert_eq!(j["item_names"].as_array().unwrap().len(), 6, "{name}");
        assert_eq!(j["identifiers_left_out"][0], "respondent");
        assert_eq!(j["n_used"], want["n_used"], "{name}");
        assert_close(
            j["alpha"].as_f64().unwrap(),
            want["alpha"].as_f64().unwrap(),
            1e-12,
            1e-14,
            name,
        );
        let input = &j["input"];
        assert_eq!(input["rows_read"], want["rows"]);
        assert_eq!(input["user_missing_cells"], want["user_missing_cells"]);
        assert_eq!(input["missing_cells"], want["missing_cells"]);
        assert_eq!(input["delimiter"], "none (SPSS file)");
        let q1 = &input["value_labels"][0];
        assert_eq!(q1["variable"], "q1");
        for l in q1["labels"].as_array().unwrap() {
            let key = format!("{}", l["value"].as_f64().unwrap() as i64);
            assert_eq!(l["label"], want["labels_q1"][&key], "{name} {key}");
        }
        for (s, m) in j["item_statistics"]
            .as_array()
            .unwrap()
            .iter()
            .zip(floats(&want["means"]))
        {
            assert_close(s["mean"].as_f64().unwrap(), m, 1e-12, 1e-14, "mean");
        }
    }
}

#[test]
fn a_damaged_spss_file_is_refused() {
    let bytes = std::fs::read(spss("likert.sav")).unwrap();
    let dir = scratch("spss-damaged");
    for keep in [bytes.len() / 2, bytes.len() - 37, 200] {
        let path = write_file(&dir, "cut.sav", &bytes[..keep]);
        let out = relyard(&["items", &path]);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{keep}: {err}");
        assert!(
            err.contains("cut.sav") && !err.contains("panicked"),
            "{err}"
        );
    }
}
