//! The committed demo sheet is exactly what its documented generator writes.

#[allow(dead_code)]
#[path = "../../examples/make_demo_data.rs"]
mod generator;

#[test]
fn committed_demo_sheet_matches_its_generator() {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets-demo/candor-benchmark.csv");
    let committed = std::fs::read_to_string(path).expect("the demo sheet exists");
    assert_eq!(
        committed,
        generator::generate(),
        "datasets-demo/candor-benchmark.csv differs from its generator; run \
         `cargo run --example make_demo_data` and commit the result"
    );
}

#[test]
fn committed_demo_items_match_their_generator() {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets-demo/candor-items.csv");
    let committed = std::fs::read_to_string(path).expect("the demo item data exist");
    assert_eq!(
        committed,
        generator::generate_items(),
        "run `cargo run --example make_demo_data`"
    );
}

#[test]
fn committed_demo_study_matches_its_generator() {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("datasets-demo/candor-study.csv");
    let committed = std::fs::read_to_string(path).expect("the demo study exists");
    assert_eq!(
        committed,
        generator::generate_study(),
        "run `cargo run --example make_demo_data`"
    );
}
