//! Scales with subscales against numpy/scipy (tests/reference/multidimensional_reference.py
//! → tests/reference/fixtures/multidimensional.json): a covariance matrix built from known
//! bifactor loadings (the coefficients of Rodriguez, Reise & Haviland 2016 in closed form
//! from those loadings), and bifactor and correlated-factors fits of invented item data
//! against scipy.optimize's minimum of the same maximum-likelihood discrepancy (a different
//! parametrization and optimizer).

use crate::common::*;
use nalgebra::DMatrix;
use relyard::items::multidimensional::{FactorGroups, Structure, fit_structure};

fn groups(f: &serde_json::Value) -> FactorGroups {
    FactorGroups {
        names: f["names"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_str().unwrap().to_string())
            .collect(),
        of_item: f["groups"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_u64().unwrap() as usize)
            .collect(),
    }
}

fn matrix(v: &serde_json::Value) -> DMatrix<f64> {
    let rows: Vec<Vec<f64>> = v.as_array().unwrap().iter().map(floats).collect();
    DMatrix::from_fn(rows.len(), rows[0].len(), |i, j| rows[i][j])
}

/// The sample covariance matrix (n − 1 denominator) of rows of responses.
fn covariance(rows: &[Vec<f64>]) -> DMatrix<f64> {
    let (n, k) = (rows.len(), rows[0].len());
    let mean: Vec<f64> = (0..k)
        .map(|j| rows.iter().map(|r| r[j]).sum::<f64>() / n as f64)
        .collect();
    DMatrix::from_fn(k, k, |a, b| {
        rows.iter()
            .map(|r| (r[a] - mean[a]) * (r[b] - mean[b]))
            .sum::<f64>()
            / (n - 1) as f64
    })
}

fn check_coefficients(
    got: &relyard::items::multidimensional::BifactorOmegas,
    want: &serde_json::Value,
    tol: f64,
    what: &str,
) {
    let close = |a: f64, b: &serde_json::Value, name: &str| {
        assert!(
            (a - b.as_f64().unwrap()).abs() < tol,
            "{what} {name}: {a} against {}",
            b
        )
    };
    close(got.omega_total, &want["omega_total"], "omega total");
    close(
        got.omega_hierarchical,
        &want["omega_hierarchical"],
        "omega hierarchical",
    );
    close(got.ecv, &want["ecv"], "ECV");
    let subs = want["subscales"].as_array().unwrap();
    assert_eq!(got.subscales.len(), subs.len());
    for (g, w) in got.subscales.iter().zip(subs) {
        assert_eq!(g.name, w["name"].as_str().unwrap());
        close(g.omega, &w["omega"], &format!("{} omega", g.name));
        close(
            g.omega_hierarchical_subscale,
            &w["omega_hierarchical_subscale"],
            &format!("{} omega_hs", g.name),
        );
    }
}

#[test]
fn known_bifactor_loadings_are_recovered_with_their_coefficients() {
    let f = fixture("multidimensional.json");
    let e = &f["exact"];
    let cov = matrix(&e["covariance"]);
    let gr = groups(e);
    let fit = fit_structure(&cov, &gr, Structure::Bifactor).unwrap();
    assert!(fit.stop.converged(), "{:?}", fit.stop);
    assert!(fit.discrepancy.abs() < 1e-10, "F = {}", fit.discrepancy);
    assert_eq!(fit.general.len(), floats(&e["general"]).len());
    for (got, want) in [
        (&fit.general, floats(&e["general"])),
        (&fit.specific, floats(&e["specific"])),
    ] {
        for (a, b) in got.iter().zip(&want) {
            assert!((a - b).abs() < 1e-5, "{got:?} against {want:?}");
        }
    }
    let omegas = fit.omegas(&cov, &gr).unwrap();
    check_coefficients(&omegas, &e["coefficients"], 1e-7, "exact");
}

#[test]
fn fits_of_invented_item_data_match_scipy() {
    let f = fixture("multidimensional.json");
    let d = &f["data"];
    let rows: Vec<Vec<f64>> = d["responses"]
        .as_array()
        .unwrap()
        .iter()
        .map(floats)
        .collect();
    let cov = covariance(&rows);
    let gr = groups(d);
    let n = d["n"].as_f64().unwrap();
    for (structure, key) in [
        (Structure::Bifactor, "bifactor"),
        (Structure::Correlated, "correlated"),
    ] {
        let want = &d[key];
        let fit = fit_structure(&cov, &gr, structure).unwrap();
        assert!(fit.stop.converged(), "{key}: {:?}", fit.stop);
        assert_close(
            fit.discrepancy,
            want["discrepancy"].as_f64().unwrap(),
            1e-7,
            1e-10,
            key,
        );
        assert_eq!(
            fit.free_parameters as u64,
            want["free_parameters"].as_u64().unwrap()
        );
        assert_eq!(fit.specific.len(), floats(&want["specific"]).len());
        assert_eq!(fit.uniquenesses.len(), floats(&want["uniquenesses"]).len());
        for (a, b) in fit.specific.iter().zip(floats(&want["specific"])) {
            assert!(
                (a - b).abs() < 1e-4,
                "{key} group loadings {:?}",
                fit.specific
            );
        }
        for (a, b) in fit.uniquenesses.iter().zip(floats(&want["uniquenesses"])) {
            assert!(
                (a - b).abs() < 1e-4,
                "{key} uniquenesses {:?}",
                fit.uniquenesses
            );
        }
        let ix = fit.indices(&cov, n);
        let w = &want["fit"];
        assert_close(ix.chi2, w["chi2"].as_f64().unwrap(), 1e-6, 1e-8, "chi2");
        assert_eq!(ix.df, w["df"].as_f64().unwrap());
        assert_close(
            ix.rmsea.unwrap(),
            w["rmsea"].as_f64().unwrap(),
            1e-5,
            1e-7,
            "rmsea",
        );
        assert_close(
            ix.cfi.unwrap(),
            w["cfi"].as_f64().unwrap(),
            1e-6,
            1e-8,
            "cfi",
        );
        match structure {
            Structure::Bifactor => {
                for (a, b) in fit.general.iter().zip(floats(&want["general"])) {
                    assert!((a - b).abs() < 1e-4, "general {:?}", fit.general);
                }
                check_coefficients(
                    &fit.omegas(&cov, &gr).unwrap(),
                    &want["coefficients"],
                    1e-6,
                    key,
                );
            }
            Structure::Correlated => {
                let phi = matrix(&want["correlations"]);
                assert!(
                    (&fit.correlations - &phi).amax() < 1e-5,
                    "{}",
                    fit.correlations
                );
                assert!(fit.omegas(&cov, &gr).is_none());
            }
        }
    }
}
