//! Quantiles and tail areas against scipy.stats (fixture made by
//! tests/reference/make_fixtures.py; versions stamped in the fixture).

use crate::common::*;
use relyard::dist;

#[test]
fn quantiles_match_scipy() {
    let f = fixture("quantiles.json");
    let rows = f["quantiles"].as_array().unwrap();
    assert!(rows.len() > 100);
    for r in rows {
        let p = r["p"].as_f64().unwrap();
        let d1 = r["df1"].as_f64();
        let d2 = r["df2"].as_f64();
        let expected = r["quantile"].as_f64().unwrap();
        let got = match r["dist"].as_str().unwrap() {
            "normal" => dist::normal_quantile(p),
            "t" => dist::t_quantile(p, d1.unwrap()),
            "chi2" => dist::chi2_quantile(p, d1.unwrap()),
            "f" => dist::f_quantile(p, d1.unwrap(), d2.unwrap()),
            other => panic!("unknown distribution {other}"),
        };
        assert_close(got, expected, QUANTILE_REL, 1e-14, &format!("{r}"));
    }
}

#[test]
fn tail_areas_match_scipy() {
    let f = fixture("quantiles.json");
    for r in f["tail_areas"].as_array().unwrap() {
        let x = r["x"].as_f64().unwrap();
        let d1 = r["df1"].as_f64();
        let d2 = r["df2"].as_f64();
        let expected = r["sf"].as_f64().unwrap();
        let got = match r["dist"].as_str().unwrap() {
            "normal" => dist::normal_sf(x),
            "t" => dist::t_sf(x, d1.unwrap()),
            "chi2" => dist::chi2_sf(x, d1.unwrap()),
            "f" => dist::f_sf(x, d1.unwrap(), d2.unwrap()),
            other => panic!("unknown distribution {other}"),
        };
        assert_close(got, expected, 1e-9, 1e-300, &format!("{r}"));
    }
}
