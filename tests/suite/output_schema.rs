//! The JSON contract (issue 10): every key each command's `--json` prints is documented in
//! docs/output-schema.md, and every documented key is printed, by runs that fill every
//! list (skipped rows, subsets, excluded rows, influence, permutations, subgroups…).

use crate::common::*;
use serde_json::Value;
use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

fn demo(name: &str) -> String {
    demo_file(name)
}

/// The documented keys per section, and the keys whose children are names from the data.
struct Documented {
    sections: BTreeMap<String, BTreeSet<String>>,
    by_name: BTreeSet<String>,
}

fn documented() -> Documented {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/output-schema.md");
    let text = std::fs::read_to_string(path).expect("docs/output-schema.md");
    let mut sections: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    let mut by_name = BTreeSet::new();
    let mut current = String::new();
    for line in text.lines() {
        if let Some(h) = line.strip_prefix("## ") {
            current = match h {
                h if h.starts_with("Keys shared") => "shared",
                h if h.contains("relyard pool") => "pool",
                h if h.contains("relyard explain") => "explain",
                h if h.contains("relyard check") => "check",
                h if h.contains("relyard items") => "items",
                h if h.contains("relyard icc") => "icc",
                h if h.contains("relyard compare") => "compare",
                h if h.contains("relyard correct") => "correct",
                h if h.contains("relyard plan") => "plan",
                h if h.contains("results.json") => "report",
                _ => "",
            }
            .to_string();
            continue;
        }
        if line.starts_with("### ") {
            current.clear();
        }
        if current.is_empty() || !line.starts_with("| `") {
            continue;
        }
        let cells: Vec<&str> = line.split(" | ").collect();
        let keys: Vec<String> = cells[0]
            .split('`')
            .enumerate()
            .filter(|(i, _)| i % 2 == 1)
            .map(|(_, k)| k.to_string())
            .collect();
        let map = cells.get(1).is_some_and(|t| t.contains("by name"));
        for k in keys {
            if map {
                by_name.insert(k.clone());
            }
            sections.entry(current.clone()).or_default().insert(k);
        }
    }
    Documented { sections, by_name }
}

/// Every key path of a document (`a.b`, `list[].c`), not looking inside `by_name` objects
/// nor inside the nested documents named in `skip`.
fn key_paths(v: &Value, by_name: &BTreeSet<String>, skip: &[&str]) -> BTreeSet<String> {
    fn walk(
        v: &Value,
        prefix: &str,
        by_name: &BTreeSet<String>,
        skip: &[&str],
        out: &mut BTreeSet<String>,
    ) {
        match v {
            Value::Object(m) => {
                for (k, x) in m {
                    let p = if prefix.is_empty() {
                        k.clone()
                    } else {
                        format!("{prefix}.{k}")
                    };
                    out.insert(p.clone());
                    if !by_name.contains(&p) && !skip.contains(&p.as_str()) {
                        walk(x, &p, by_name, skip, out);
                    }
                }
            }
            Value::Array(a) => {
                for x in a {
                    if x.is_object() {
                        walk(x, &format!("{prefix}[]"), by_name, skip, out);
                    }
                }
            }
            _ => {}
        }
    }
    let mut out = BTreeSet::new();
    walk(v, "", by_name, skip, &mut out);
    out
}

/// A copy of the demo sheet with one invalid row and one missing moderator value.
fn rich_sheet(dir: &Path) -> String {
    let text = std::fs::read_to_string(demo("candor-benchmark.csv")).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    lines[5] = lines[5].replacen(",exploratory,", ",,", 1);
    lines
        .push("Sample bad,2020,1.3,alpha,100,10,0.5,mean,1,5,growing,retail staff,original".into());
    write_file(dir, "rich.csv", (lines.join("\n") + "\n").as_bytes())
}

fn compare_sets(section: &str, documented: &BTreeSet<String>, printed: &BTreeSet<String>) {
    let undocumented: Vec<&String> = printed.difference(documented).collect();
    let unprinted: Vec<&String> = documented.difference(printed).collect();
    assert!(
        undocumented.is_empty() && unprinted.is_empty(),
        "{section}: printed but not documented {undocumented:?}; documented but not printed \
         {unprinted:?}"
    );
}

#[test]
fn every_json_key_is_documented_and_every_documented_key_printed() {
    let doc = documented();
    let dir = scratch("schema");
    let sheet = rich_sheet(&dir);
    let paths = |v: &Value| key_paths(v, &doc.by_name, &[]);
    let with_shared = |s: &str| -> BTreeSet<String> {
        doc.sections[s]
            .union(&doc.sections["shared"])
            .cloned()
            .collect()
    };
    let sheet_args = ["--skip-invalid", "--where", "language=original"];
    let run = |args: &[&str]| -> Value {
        let mut all: Vec<&str> = args.to_vec();
        all.push("--json");
        json_ok(&all)
    };

    let mut a = vec!["pool", sheet.as_str()];
    a.extend(sheet_args);
    let pool = run(&a);
    // A sheet whose rows share samples and clusters prints the dependence keys too.
    let grouped = write_file(
        &dir,
        "grouped.csv",
        b"study,sample,cluster,coef,n,items\nA,s1,p1,0.8,100,6\nB,s1,p1,0.82,100,6\n\
          C,s2,p1,0.75,120,6\nD,s3,p2,0.7,90,6\nE,s4,p3,0.86,200,6\nF,s5,p4,0.78,150,6\n\
          G,s5,p4,0.8,150,6\nH,s6,p5,0.72,80,6\n",
    );
    let mut printed = paths(&pool);
    printed.extend(paths(&run(&["pool", &grouped])));
    compare_sets("pool", &with_shared("pool"), &printed);

    let mut a = vec!["explain", sheet.as_str()];
    a.extend(sheet_args);
    a.extend([
        "--moderator",
        "year",
        "--moderator",
        "field_maturity",
        "--score-spread",
        "--by",
        "field_maturity",
        "--influence",
        "--permutations",
        "30",
    ]);
    let explain = run(&a);
    let mut printed = paths(&explain);
    let grouped_explain = run(&["explain", &grouped, "--moderator", "n"]);
    printed.extend(paths(&grouped_explain));
    compare_sets("explain", &with_shared("explain"), &printed);

    let mut a = vec!["check", sheet.as_str()];
    a.extend(sheet_args);
    a.extend([
        "--coef",
        "0.71",
        "--n",
        "150",
        "--items",
        "10",
        "--sd",
        "0.55",
        "--sd-metric",
        "mean",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--moderator",
        "year",
        "--at",
        "year=2015",
    ]);
    let check = run(&a);
    let mut printed = paths(&check);
    printed.extend(paths(&run(&[
        "check", &grouped, "--coef", "0.8", "--n", "120", "--items", "6",
    ])));
    compare_sets("check", &with_shared("check"), &printed);

    let items = run(&["items", &demo("candor-items.csv"), "--bootstrap", "30"]);
    let mut printed = paths(&items);
    printed.extend(paths(&run(&[
        "items",
        &demo("candor-items.csv"),
        "--ordinal",
    ])));
    // An item with too many categories: the note instead of the matrix.
    let wide = write_file(
        &dir,
        "wide.csv",
        b"a,b\n1,2\n2,3\n3,1\n4,5\n5,4\n6,7\n7,6\n8,9\n9,8\n10,11\n11,10\n12,1\n",
    );
    printed.extend(paths(&run(&["items", &wide, "--ordinal"])));
    // An SPSS file: its user-missing count and value labels.
    printed.extend(paths(&run(&[
        "items",
        &test_path("data/spss/likert.sav").to_string_lossy(),
    ])));
    // Subscales: both models.
    printed.extend(paths(&run(&[
        "items",
        &demo("candor-items.csv"),
        "--factor",
        "a=btci_01,btci_02,btci_03,btci_04",
        "--factor",
        "b=btci_05,btci_06,btci_07",
        "--factor",
        "c=btci_08,btci_09,btci_10",
    ])));
    compare_sets("items", &doc.sections["items"], &printed);

    // A table with a missing cell (a warning printed) and an identifier column.
    let table = write_file(
        &dir,
        "retest.csv",
        b"person,t1,t2\nP1,12,13\nP2,18,17\nP3,9,11\nP4,15,\nP5,21,20\nP6,14,15\n",
    );
    let icc = run(&["icc", &table]);
    compare_sets("icc", &doc.sections["icc"], &paths(&icc));

    let cmp = write_file(
        &dir,
        "compare.csv",
        b"study,coef,n,items,coef_type\nA,0.8,100,10,alpha\nB,0.75,120,10,alpha\nC,0.7,90,10,omega\nA,0.72,80,10,alpha\n",
    );
    let mut compare = paths(&run(&["compare", &cmp, "--skip-invalid"]));
    compare.extend(paths(&run(&[
        "compare",
        "--sample",
        "0.8,100,10",
        "--sample",
        "0.7,120,10",
    ])));
    compare_sets("compare", &doc.sections["compare"], &compare);

    let mut correct = paths(&run(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "150",
        "--rel-x",
        "0.8,kind=alpha",
        "--rel-y",
        "0.85,n=150,items=6",
        "--draws",
        "500",
    ]));
    correct.extend(paths(&run(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "150",
        "--items-x",
        &demo("candor-items.csv"),
        "--rel-y",
        "0.85",
        "--draws",
        "500",
    ])));
    correct.extend(paths(&run(&[
        "correct",
        "--data",
        &demo("candor-study.csv"),
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--rel",
        "candor=0.8",
        "--items-x",
        &demo("candor-items.csv"),
        "--draws",
        "200",
    ])));
    correct.extend(paths(&run(&[
        "correct",
        "--data",
        &demo("candor-study.csv"),
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--predictor",
        "safety",
        "--rel",
        "candor=0.8",
        "--rel",
        "safety=0.75",
        "--draws",
        "200",
    ])));
    compare_sets("correct", &doc.sections["correct"], &correct);

    let mut plan = paths(&run(&[
        "plan",
        "--items",
        "10",
        "--planning",
        "0.8",
        "--width",
        "0.1",
    ]));
    plan.extend(paths(&run(&[
        "plan",
        "--items",
        "10",
        "--planning",
        "0.8",
        "--null",
        "0.7",
    ])));
    compare_sets("plan", &doc.sections["plan"], &plan);

    let out = dir.join("report");
    let mut a = vec!["report", sheet.as_str()];
    a.extend(sheet_args);
    a.extend([
        "--moderator",
        "year",
        "--score-spread",
        "--coef",
        "0.71",
        "--n",
        "150",
        "--items",
        "10",
        "--at",
        "year=2015",
        "--r",
        "0.3",
        "--rel-y",
        "0.85",
        "--draws",
        "500",
        "--out",
        out.to_str().unwrap(),
    ]);
    run_ok(&a);
    let results: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    let nested = ["benchmark", "explain", "placement", "correction"];
    compare_sets(
        "report",
        &doc.sections["report"],
        &key_paths(&results, &doc.by_name, &nested),
    );
    // The nested documents are the commands' own: every key they print is documented
    // there (this run does not exercise every option, so not every key appears).
    for (key, section) in [
        ("benchmark", "pool"),
        ("explain", "explain"),
        ("placement", "check"),
        ("correction", "correct"),
    ] {
        let documented = if section == "correct" {
            doc.sections[section].clone()
        } else {
            with_shared(section)
        };
        let printed = paths(&results[key]);
        let undocumented: Vec<&String> = printed.difference(&documented).collect();
        assert!(
            undocumented.is_empty(),
            "report: {key}: printed but not documented {undocumented:?}"
        );
    }
}
