//! Polychoric correlations against numpy/scipy (tests/reference/polychoric_reference.py →
//! tests/reference/fixtures/polychoric.json): the bivariate normal distribution function
//! against one-dimensional quadrature (scipy.integrate.quad) on a grid that covers both of
//! the algorithm's branches; thresholds, the two-step maximum-likelihood correlations
//! (scipy.optimize.minimize_scalar on the multinomial likelihood) and ordinal alpha on
//! invented item data; and recovery of known correlations in a seeded simulation.

use crate::common::*;
use relyard::items::polychoric::{
    bivariate_normal_cdf, ordinal_alpha, polychoric_matrix, thresholds,
};

#[test]
fn the_bivariate_normal_matches_quadrature() {
    let f = fixture("polychoric.json");
    for c in f["cdf"].as_array().unwrap() {
        let (h, k, r) = (
            c["h"].as_f64().unwrap(),
            c["k"].as_f64().unwrap(),
            c["r"].as_f64().unwrap(),
        );
        let want = c["cdf"].as_f64().unwrap();
        let got = bivariate_normal_cdf(h, k, r);
        assert!(
            (got - want).abs() < 1e-11,
            "Φ₂({h}, {k}; {r}) = {got}, quadrature {want}"
        );
    }
}

#[test]
fn thresholds_correlations_and_ordinal_alpha_match_the_reference() {
    let f = fixture("polychoric.json");
    let items = &f["items"];
    let rows: Vec<Vec<f64>> = items["responses"]
        .as_array()
        .unwrap()
        .iter()
        .map(floats)
        .collect();
    let k = rows[0].len();
    let cells = rows.concat();
    let names: Vec<String> = (1..=k).map(|i| format!("i{i}")).collect();
    let r = polychoric_matrix(&cells, k, &names).unwrap();
    let want: Vec<Vec<f64>> = items["polychoric"]
        .as_array()
        .unwrap()
        .iter()
        .map(floats)
        .collect();
    for a in 0..k {
        for b in 0..k {
            assert!(
                (r[(a, b)] - want[a][b]).abs() < 1e-6,
                "r[{a}][{b}] = {} against {}",
                r[(a, b)],
                want[a][b]
            );
        }
        // Thresholds from the item's margins.
        let mut counts = [0u64; 10];
        for row in &rows {
            counts[row[a] as usize - 1] += 1;
        }
        let levels = floats(&items["thresholds"][a]).len() + 1;
        let t = thresholds(&counts[..levels]);
        for (got, want) in t[1..levels].iter().zip(floats(&items["thresholds"][a])) {
            // The normal quantile (statrs, polished) is accurate to about 1e-10.
            assert!((got - want).abs() < 1e-9, "threshold {got} against {want}");
        }
    }
    assert_close(
        ordinal_alpha(&r),
        items["ordinal_alpha"].as_f64().unwrap(),
        1e-6,
        1e-9,
        "ordinal alpha",
    );
}

/// Seeded simulation: underlying correlations 0.3 and 0.7 cut into 4 and 3 categories,
/// 20,000 pairs: the polychoric estimate recovers each within 0.02 (its standard error is
/// about 0.008 at this n; the Pearson correlation of the categories is clearly lower).
#[test]
fn known_correlations_are_recovered() {
    let mut rng = relyard::random::stream(20261203, 0);
    for rho in [0.3, 0.7] {
        let n = 20_000;
        let mut cells = Vec::with_capacity(2 * n);
        for _ in 0..n {
            let x = relyard::random::draw::normal(&mut rng);
            let e = relyard::random::draw::normal(&mut rng);
            let y = rho * x + (1.0f64 - rho * rho).sqrt() * e;
            let cx = [-0.8, 0.1, 1.0].iter().filter(|c| x > **c).count() as f64;
            let cy = [-0.3, 0.6].iter().filter(|c| y > **c).count() as f64;
            cells.push(cx);
            cells.push(cy);
        }
        let names = ["x".to_string(), "y".to_string()];
        let r = polychoric_matrix(&cells, 2, &names).unwrap();
        assert!(
            (r[(0, 1)] - rho).abs() < 0.02,
            "{} against {rho}",
            r[(0, 1)]
        );
    }
}

/// `relyard items --ordinal` gives the reference's ordinal alpha and matrix for the same
/// data, beside the observed-score coefficients, with the caution.
#[test]
fn the_items_command_reports_the_reference_ordinal_alpha() {
    let f = fixture("polychoric.json");
    let items = &f["items"];
    let mut text = String::from("i1,i2,i3,i4\n");
    for row in items["responses"].as_array().unwrap() {
        let cells: Vec<String> = floats(row).iter().map(|x| format!("{x}")).collect();
        text.push_str(&cells.join(","));
        text.push('\n');
    }
    let dir = scratch("ordinal-items");
    let path = write_file(&dir, "ordinal.csv", text.as_bytes());
    let doc = json_ok(&["items", &path, "--ordinal", "--json"]);
    let ord = &doc["ordinal"];
    assert_close(
        ord["alpha"].as_f64().unwrap(),
        items["ordinal_alpha"].as_f64().unwrap(),
        1e-6,
        1e-9,
        "ordinal alpha",
    );
    assert_close(
        ord["polychoric"][0][1].as_f64().unwrap(),
        items["polychoric"][0][1].as_f64().unwrap(),
        1e-6,
        1e-9,
        "r12",
    );
    assert!(ord["caution"].as_str().unwrap().contains("observed"));
    assert!(doc["alpha"].as_f64().unwrap() < ord["alpha"].as_f64().unwrap());
}

/// The fixture's responses as a CSV, the first item's values mapped through `first`.
fn ordinal_csv(items: &serde_json::Value, first: Option<&[f64]>, name: &str) -> String {
    let mut text = String::from("i1,i2,i3,i4\n");
    for row in items["responses"].as_array().unwrap() {
        let mut r = floats(row);
        if let Some(map) = first {
            r[0] = map[r[0] as usize - 1];
        }
        let cells: Vec<String> = r.iter().map(|x| format!("{x}")).collect();
        text.push_str(&cells.join(","));
        text.push('\n');
    }
    write_file(&scratch(name), "ordinal.csv", text.as_bytes())
}

/// Categorical omega (Green & Yang 2009) against the reference: the formula at the
/// reference's loadings (scipy's one-factor fit of the polychoric matrix, Φ₂ by quadrature)
/// to 1e-9, and the whole computation through `items --ordinal --json` to 1e-6 — also with
/// unequal gaps between the first item's values (0, 1, 3, 6), which weight its thresholds.
#[test]
fn categorical_omega_matches_the_reference() {
    use relyard::items::polychoric::{categorical_omega, ordinal_items};
    let f = fixture("polychoric.json");
    let items = &f["items"];
    let c = &items["categorical"];
    let spaced = floats(&c["spaced_first_item"]);
    for (first, key) in [(None, "omega"), (Some(spaced.as_slice()), "omega_spaced")] {
        let want = c[key].as_f64().unwrap();
        let mut rows: Vec<Vec<f64>> = items["responses"]
            .as_array()
            .unwrap()
            .iter()
            .map(floats)
            .collect();
        if let Some(map) = first {
            rows.iter_mut().for_each(|r| r[0] = map[r[0] as usize - 1]);
        }
        let n = rows.len() as f64;
        let sums: Vec<f64> = rows.iter().map(|r| r.iter().sum()).collect();
        let mean = sums.iter().sum::<f64>() / n;
        let var = sums.iter().map(|s| (s - mean).powi(2)).sum::<f64>() / (n - 1.0);
        let names: Vec<String> = (1..=4).map(|i| format!("i{i}")).collect();
        let o = ordinal_items(&rows.concat(), 4, &names).unwrap();
        let got = categorical_omega(&o, &floats(&c["loadings"]), var);
        assert_close(got, want, 1e-9, 1e-12, key);
        let path = ordinal_csv(items, first, key);
        let doc = json_ok(&["items", &path, "--ordinal", "--json"]);
        assert_close(
            doc["ordinal"]["omega"].as_f64().unwrap(),
            want,
            1e-6,
            1e-9,
            key,
        );
    }
}
