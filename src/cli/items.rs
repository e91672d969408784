//! `relyard items`: reliability from raw item data.

use super::config::ItemsConfig;
use super::output::{Failure, print, print_json, warn_all};
use super::progress::bar;
use relyard::items::bootstrap::bootstrap_omega;
use relyard::items::{analyze, read_items};
use relyard::report::items::{ItemsDocument, items_summary};

pub fn run(c: &ItemsConfig) -> Result<(), Failure> {
    let data = read_items(&c.path, &c.read)?;
    let analysis = analyze(&data, c.level)?;
    let mut warnings = analysis.warnings.clone();
    let boot = match (c.bootstrap, &data.rows, analysis.factor.is_ok()) {
        (Some(b), Some(rows), true) => {
            let pb = bar(b, "bootstrap");
            let r = bootstrap_omega(rows, data.names.len(), b, c.seed, c.level, &|d| {
                pb.inc(d as u64)
            })?;
            pb.finish_and_clear();
            Some(r)
        }
        (Some(_), _, false) => {
            warnings.push(relyard::Warning::PartFailed {
                what: "the bootstrap of omega".into(),
                why: "there is no one-factor model to bootstrap".into(),
            });
            None
        }
        _ => None,
    };
    warn_all(&warnings);
    if c.json {
        let mut doc = ItemsDocument::new(&data, &analysis, boot.as_ref());
        doc.warnings = relyard::report::items::warning_records(&warnings);
        print_json(&doc)
    } else {
        print(&items_summary(&data, &analysis, boot.as_ref()))
    }
}
