//! `relyard pool`: coding sheet in, benchmark out.

use super::config::PoolConfig;
use super::output::{Failure, print, print_json, warn_all};
use relyard::benchmark::build;
use relyard::report::json::PoolDocument;
use relyard::report::paragraph::benchmark_paragraph;
use relyard::report::text::benchmark_summary;
use relyard::sheet::read_coding_sheet;

pub fn run(c: &PoolConfig) -> Result<(), Failure> {
    let sheet = read_coding_sheet(&c.sheet.path, &c.sheet.options)?;
    let b = build(sheet, &c.benchmark)?;
    let paragraph = benchmark_paragraph(&b, c.measure.as_deref());
    warn_all(&b.warnings);
    if c.json {
        let doc = PoolDocument::new(&b, &paragraph, &b.warnings);
        print_json(&doc)
    } else {
        print(&benchmark_summary(&b, &paragraph, c.show_studies))
    }
}
