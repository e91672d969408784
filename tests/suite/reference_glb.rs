//! The greatest lower bound against an independent minimum-trace solver
//! (tests/reference/glb_reference.py → tests/reference/fixtures/glb.json: the common part
//! written as LLᵀ and its trace minimized under the covariance constraints by scipy's
//! SLSQP), with alpha and λ2 from their definitions in numpy; on compound symmetry (where
//! glb = alpha), exact one- and two-factor structures and invented item data.

use crate::common::*;
use nalgebra::DMatrix;
use relyard::items::alpha::{alpha, lambda2};
use relyard::items::glb::greatest_lower_bound;

#[test]
fn the_glb_matches_an_independent_solver_and_is_ordered() {
    let f = fixture("glb.json");
    assert_eq!(f["cases"].as_array().unwrap().len(), 5);
    for c in f["cases"].as_array().unwrap() {
        let name = c["name"].as_str().unwrap();
        let rows: Vec<Vec<f64>> = c["covariance"]
            .as_array()
            .unwrap()
            .iter()
            .map(floats)
            .collect();
        let s = DMatrix::from_fn(rows.len(), rows.len(), |i, j| rows[i][j]);
        let g = greatest_lower_bound(&s).unwrap();
        assert!(g.converged, "{name}: {g:?}");
        assert_close(g.value, c["glb"].as_f64().unwrap(), 1e-7, 1e-9, name);
        assert_eq!(g.error_variances.len(), floats(&c["error_variances"]).len());
        for (a, b) in g.error_variances.iter().zip(floats(&c["error_variances"])) {
            assert!((a - b).abs() < 1e-5, "{name}: {:?}", g.error_variances);
        }
        let (a, l2) = (alpha(&s), lambda2(&s));
        assert_close(a, c["alpha"].as_f64().unwrap(), 1e-12, 1e-14, name);
        assert_close(l2, c["lambda2"].as_f64().unwrap(), 1e-12, 1e-14, name);
        assert!(
            a <= l2 + 1e-12 && l2 <= g.value + 1e-9 && g.value <= 1.0,
            "{name}"
        );
    }
}
