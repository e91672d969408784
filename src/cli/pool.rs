//! `relyard pool`: coding sheet in, benchmark out.

use super::args::PoolArgs;
use super::names::OptionNames;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::Bar;
use relyard::analysis::run;
use relyard::output::json::PoolDocument;
use relyard::output::prose::benchmark_paragraph;
use relyard::output::text::benchmark_summary;

pub fn run_pool(a: PoolArgs) -> Result<(), Failure> {
    let (json, studies) = (a.json, a.studies);
    let settings = super::config::pool(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let b = analysis
        .benchmark
        .as_ref()
        .expect("pool asks for a benchmark");
    warn_all(&b.warnings);
    let paragraph = benchmark_paragraph(b, settings.measure.as_deref());
    let printed = if json {
        print_json(&PoolDocument::new(b, &paragraph, &OptionNames))
    } else {
        let measure = settings.measure.as_deref();
        print(&benchmark_summary(
            b,
            &paragraph,
            measure,
            studies,
            &OptionNames,
        ))
    };
    // The process ends next: the operating system takes the memory back at once, where
    // freeing a large sheet's records one by one takes longer than writing them out.
    std::mem::forget(analysis);
    printed
}
