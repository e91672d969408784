//! Criterion benchmarks of relyard live in `benches/engine.rs`; this crate holds nothing else.
