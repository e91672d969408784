//! The intraclass correlations against numpy/scipy/statsmodels (tests/reference/
//! icc_reference.py → tests/reference/fixtures/icc.json): the mean squares from statsmodels'
//! analysis of variance, each form, its F-based interval (scipy.stats.f quantiles; the
//! agreement forms' Satterthwaite interval of McGraw & Wong 1996, Table 7), its F test, and
//! the SEM and smallest detectable change, on the Shrout & Fleiss (1979) table (as
//! recalled) and two invented tables.

use crate::common::*;
use relyard::Level;
use relyard::icc::icc;

#[test]
fn every_form_matches_the_reference() {
    let f = fixture("icc.json");
    for c in f["cases"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let rows: Vec<Vec<f64>> = c["table"].as_array().unwrap().iter().map(floats).collect();
        let (n, k) = (rows.len(), rows[0].len());
        let cells: Vec<f64> = rows.concat();
        let level = Level::new(c["level"].as_f64().unwrap()).unwrap();
        let got = icc(&cells, n, k, level).unwrap();
        let close = |a: f64, b: &serde_json::Value, what: &str| {
            assert_close(
                a,
                b.as_f64().unwrap(),
                1e-9,
                1e-12,
                &format!("{name} {what}"),
            )
        };
        let ms = &c["mean_squares"];
        close(got.mean_squares.rows, &ms["rows"], "MSR");
        close(got.mean_squares.columns, &ms["columns"], "MSC");
        close(got.mean_squares.error, &ms["error"], "MSE");
        close(got.mean_squares.within, &ms["within"], "MSW");
        let want = c["forms"].as_array().unwrap();
        assert_eq!(got.forms.len(), want.len());
        for (g, w) in got.forms.iter().zip(want) {
            let label = format!("{} {} {}", w["model"], w["type"], w["unit"]);
            assert_eq!(g.model.name(), w["model"], "{name}");
            assert_eq!(g.kind.name(), w["type"], "{name}");
            assert_eq!(g.unit.name(), w["unit"], "{name}");
            close(g.value, &w["value"], &label);
            close(g.ci.0, &w["ci"][0], &format!("{label} lower"));
            close(g.ci.1, &w["ci"][1], &format!("{label} upper"));
            close(g.f, &w["f"], &format!("{label} F"));
            close(g.df1, &w["df1"], &format!("{label} df1"));
            close(g.df2, &w["df2"], &format!("{label} df2"));
            close(g.p, &w["p"], &format!("{label} p"));
        }
        close(got.sd, &c["sd"], "SD");
        close(got.sem, &c["sem"], "SEM");
        close(got.sdc, &c["sdc"], "SDC");
    }
}
