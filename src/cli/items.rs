//! `relyard items`: reliability from raw item data.

use super::args::ItemsArgs;
use super::names::OptionNames;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::Bar;
use relyard::analysis::run;
use relyard::output::json::ItemsDocument;
use relyard::output::text::items_summary;

pub fn run_items(a: ItemsArgs) -> Result<(), Failure> {
    let (json, paragraph) = (a.json, a.paragraph);
    let settings = super::config::items(a)?;
    let analysis = run(&settings, &Bar::default())?;
    let o = analysis
        .items
        .as_ref()
        .expect("items asks for an item analysis");
    warn_all(&o.warnings);
    if json {
        print_json(&ItemsDocument::new(o, &OptionNames))
    } else if paragraph {
        let p = relyard::output::prose::items_paragraph(o);
        let mut text = relyard::format::wrap(&p.text, 86, "");
        text.push_str("\nReferences\n");
        for r in p.citations() {
            text.push_str(&relyard::format::wrap(&r, 86, "  "));
        }
        print(&text)
    } else {
        print(&items_summary(o, &OptionNames))
    }
}
