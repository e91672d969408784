//! `relyard compare`: tests of equality for independent alphas.

use super::args::CompareArgs;
use super::output::{Failure, print, print_json};
use relyard::Error;
use relyard::compare::{AlphaSample, feldt_two_sample, hakstian_whalen_test};
use relyard::report::items::{CompareDocument, compare_summary};
use relyard::sheet::{ColumnMap, SheetOptions, read_coding_sheet};

fn bad(msg: String) -> Failure {
    Failure::Lib(Error::InvalidOption(msg))
}

/// Parse `ALPHA,N,ITEMS` or `LABEL=ALPHA,N,ITEMS`.
fn parse_sample(spec: &str, index: usize) -> Result<AlphaSample, Failure> {
    let (label, rest) = match spec.split_once('=') {
        Some((l, r)) => (l.trim().to_string(), r),
        None => (format!("sample {index}"), spec),
    };
    let parts: Vec<&str> = rest.split(',').map(str::trim).collect();
    let usage = || {
        bad(format!(
            "--sample {spec}: write ALPHA,N,ITEMS, e.g. 0.81,120,10"
        ))
    };
    if parts.len() != 3 {
        return Err(usage());
    }
    let alpha: f64 = parts[0].parse().map_err(|_| usage())?;
    let n: u64 = parts[1].parse().map_err(|_| usage())?;
    let items: u32 = parts[2].parse().map_err(|_| usage())?;
    Ok(AlphaSample {
        label,
        alpha,
        n,
        items,
    })
}

pub fn run(a: CompareArgs) -> Result<(), Failure> {
    let mut samples = Vec::new();
    if let Some(path) = &a.sheet {
        let mut columns = ColumnMap::new();
        for spec in &a.columns {
            columns.insert_spec(spec).map_err(bad)?;
        }
        let sheet = read_coding_sheet(
            path,
            &SheetOptions {
                columns,
                ..SheetOptions::default()
            },
        )?;
        if !sheet.problems.is_empty() {
            return Err(Failure::Lib(Error::InvalidSheet {
                file: sheet.file,
                problems: sheet.problems,
            }));
        }
        for r in &sheet.records {
            let (Some(n), Some(items)) = (r.n, r.items) else {
                return Err(bad(format!(
                    "{}: row {}: compare needs n and items for every sample",
                    sheet.file, r.row
                )));
            };
            samples.push(AlphaSample {
                label: r.label.clone(),
                alpha: r.coef,
                n,
                items,
            });
        }
    }
    for spec in &a.samples {
        let index = samples.len() + 1;
        samples.push(parse_sample(spec, index)?);
    }
    if samples.len() < 2 {
        return Err(bad(
            "compare needs at least two samples (a sheet, or --sample ALPHA,N,ITEMS twice)".into(),
        ));
    }
    let hw = hakstian_whalen_test(&samples)?;
    let feldt = if samples.len() == 2 {
        Some(feldt_two_sample(&samples[0], &samples[1])?)
    } else {
        None
    };
    if a.json {
        let doc = CompareDocument::new(&samples, feldt.as_ref(), &hw);
        print_json(&doc)
    } else {
        print(&compare_summary(&samples, feldt.as_ref(), &hw))
    }
}
