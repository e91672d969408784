//! `relyard pool`: coding sheet in, benchmark out.

use super::config::PoolConfig;
use super::output::{Failure, print, print_json, warn_all};
use relyard::benchmark::{Benchmark, Prepared, from_prepared, prepare};
use relyard::report::json::PoolDocument;
use relyard::report::paragraph::{Paragraph, benchmark_paragraph};
use relyard::report::text::benchmark_summary;
use relyard::sheet::read_coding_sheet;

/// The benchmark and its paragraph.
pub fn compute(c: &PoolConfig) -> Result<(Benchmark, Paragraph), Failure> {
    let sheet = read_coding_sheet(&c.sheet.path, &c.sheet.options)?;
    compute_from(c, prepare(sheet, &c.benchmark)?)
}

/// [`compute`] from studies already prepared with `c`'s options (`relyard report`).
pub fn compute_from(c: &PoolConfig, prepared: Prepared) -> Result<(Benchmark, Paragraph), Failure> {
    let b = from_prepared(prepared, &c.benchmark.pool)?;
    let paragraph = benchmark_paragraph(&b, c.measure.as_deref());
    Ok((b, paragraph))
}

pub fn run(c: &PoolConfig) -> Result<(), Failure> {
    let (b, paragraph) = compute(c)?;
    warn_all(&b.warnings);
    if c.json {
        let doc = PoolDocument::new(&b, &paragraph, &b.warnings);
        print_json(&doc)
    } else {
        print(&benchmark_summary(&b, &paragraph, c.show_studies))
    }
}
