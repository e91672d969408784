//! relyard's integration tests, in one test binary (one link instead of one per file).
//!
//! Each module is one former test file: CLI tests run the real binary; reference tests
//! compare with published values and with the committed fixtures of `tests/reference/`.

mod common;

mod bad_input;
mod cli_correct;
mod cli_dependence;
mod cli_explain;
mod cli_icc;
mod cli_items;
mod cli_pool;
mod consistency;
mod demo_data;
mod hardening;
mod output_schema;
mod properties;
mod published_bcg;
mod reference_correct;
mod reference_glb;
mod reference_icc;
mod reference_items;
mod reference_metareg;
mod reference_multidimensional;
mod reference_multilevel;
mod reference_polychoric;
mod reference_pool;
mod reference_quantiles;
mod reference_transforms;
mod report;
mod serve_http;
mod simulation_items;
mod simulation_multilevel;
mod simulation_spread;
#[cfg(feature = "spss")]
mod spss;
mod workbooks;
