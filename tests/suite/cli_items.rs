//! `relyard items`, `compare` and `plan` run as a user runs them: the demo item data,
//! bad input located by row and column, and reproducible bootstraps.

use crate::common::*;
use std::process::Command;

fn demo_items() -> String {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("datasets-demo/candor-items.csv")
        .to_string_lossy()
        .into_owned()
}

const ITEMS: &str =
    "btci_01,btci_02,btci_03,btci_04,btci_05,btci_06,btci_07,btci_08,btci_09,btci_10";

fn fails_with(args: &[&str], fragments: &[&str]) {
    let out = relyard(args);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
    assert!(!err.contains("panicked"), "{err}");
    for f in fragments {
        assert!(err.contains(f), "{args:?}: missing {f:?} in {err}");
    }
}

#[test]
fn demo_items_read_well() {
    let d = demo_items();
    let out = relyard(&[
        "items",
        &d,
        "--items",
        ITEMS,
        "--reverse",
        "btci_04,btci_09",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    for frag in [
        "Reliability of 10 items from 275 respondents",
        "25 left out for 26 missing cells",
        "reversed      btci_04, btci_09",
        "(Feldt)",
        "(Bonett)",
        "Guttman's λ2",
        "omega (one factor, ML)",
        "tau-equivalence",
        "Which coefficient to report: omega",
    ] {
        assert!(text.contains(frag), "missing {frag:?} in\n{text}");
    }
    let j = json_ok(&[
        "items",
        &d,
        "--items",
        ITEMS,
        "--reverse",
        "btci_04,btci_09",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--json",
    ]);
    for key in [
        "n_used",
        "items",
        "alpha",
        "alpha_standardized",
        "lambda2",
        "omega",
    ] {
        assert!(j[key].is_number(), "{key}");
    }
    for key in ["alpha_ci_feldt", "alpha_ci_bonett"] {
        let ci = floats(&j[key]);
        let a = j["alpha"].as_f64().unwrap();
        assert!(ci[0] < a && a < ci[1], "{key} {ci:?}");
    }
    assert_eq!(floats(&j["loadings"]).len(), 10);
    assert_eq!(floats(&j["uniquenesses"]).len(), 10);
    for key in ["chi2", "df", "p"] {
        assert!(j["tau_equivalence"][key].is_number(), "tau {key}");
    }
    for key in ["chi2", "df", "rmsea", "cfi"] {
        assert!(j["fit"][key].is_number(), "fit {key}");
    }
    // Reversing the two reverse-worded items raises alpha.
    let raw = json_ok(&["items", &d, "--items", ITEMS, "--json"]);
    assert!(raw["alpha"].as_f64().unwrap() < j["alpha"].as_f64().unwrap());
    assert!(warning_codes(&raw).iter().any(|c| c == "negative_loading"));
}

/// The bootstrap is the same for a seed whatever the number of threads, and differs for
/// another seed.
#[test]
fn bootstrap_is_reproducible() {
    let d = demo_items();
    let run = |threads: &str, seed: &str| {
        let out = Command::new(env!("CARGO_BIN_EXE_relyard"))
            .args([
                "items",
                &d,
                "--items",
                ITEMS,
                "--reverse",
                "btci_04,btci_09",
                "--scale-min",
                "1",
                "--scale-max",
                "5",
                "--bootstrap",
                "200",
                "--seed",
                seed,
                "--json",
            ])
            .env("RAYON_NUM_THREADS", threads)
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        serde_json::from_slice::<serde_json::Value>(&out.stdout).unwrap()
    };
    let a = run("1", "9");
    let b = run("2", "9");
    let c = run("2", "10");
    assert_eq!(a["omega_ci"], b["omega_ci"]);
    assert_ne!(a["omega_ci"], c["omega_ci"]);
    let ci = floats(&a["omega_ci"]);
    let omega = a["omega"].as_f64().unwrap();
    assert!(ci[0] < omega && omega < ci[1], "{ci:?} {omega}");
    assert_eq!(a["bootstrap"]["replicates"], 200);
}

#[test]
fn bad_item_data_is_located() {
    let dir = scratch("items-bad");
    let text = write_file(&dir, "text.csv", b"a,b,c\n1,2,3\n2,x,3\n3,3,3\n4,2,1\n");
    fails_with(
        &["items", &text],
        &["row 3, column b:", "\"x\" is not a number"],
    );
    // A text column whose values repeat is neither an item nor an identifier (issue 10:
    // one with a different value per respondent is left out by itself, see
    // `identifier_columns_are_left_out`).
    let id = write_file(&dir, "id.csv", b"group,a,b,c\nA,2,2,3\nB,1,2,3\nA,3,3,4\n");
    fails_with(
        &["items", &id],
        &["column group holds text", "--items a,b,c"],
    );
    let range = write_file(&dir, "range.csv", b"a,b,c\n1,2,3\n2,7,3\n3,3,3\n4,2,1\n");
    fails_with(
        &["items", &range, "--scale-min", "1", "--scale-max", "5"],
        &["row 3, column b:", "outside the response scale"],
    );
    fails_with(&["items", &range, "--reverse", "a"], &["--scale-min"]);
    fails_with(&["items", &range, "--items", "a,zz"], &["zz"]);
    fails_with(&["items", &range, "--items", "a"], &["at least 2 items"]);
    let empty = write_file(&dir, "empty.csv", b"");
    fails_with(&["items", &empty], &["row 1", "empty"]);
    let header = write_file(&dir, "header.csv", b"a,b,c\n");
    fails_with(&["items", &header], &["no respondents"]);
    let ragged = write_file(&dir, "ragged.csv", b"a,b,c\n1,2,3\n2,3\n3,3,3\n");
    fails_with(&["items", &ragged], &["row 3", "2 cells"]);
    let constant = write_file(&dir, "constant.csv", b"a,b,c\n1,2,3\n2,2,3\n3,2,4\n4,2,1\n");
    fails_with(&["items", &constant], &["item b has no variance"]);
    let utf16 = write_file(&dir, "u16.csv", b"\xFF\xFEa\x00,\x00");
    fails_with(&["items", &utf16], &["UTF-16"]);
    fails_with(&["items", "no-such-file.csv"], &["no such file"]);
    fails_with(&["items", &range, "--level", "95"], &["--level"]);
}

/// Two items: alpha, but no one-factor model (not identified), said plainly.
#[test]
fn two_items_give_alpha_only() {
    let dir = scratch("items-two");
    let path = write_file(&dir, "two.csv", b"a,b\n1,2\n2,2\n3,4\n4,3\n5,5\n2,1\n");
    let j = json_ok(&["items", &path, "--json"]);
    assert!(j["omega"].is_null());
    assert_eq!(j["recommendation"], "alpha_only");
    assert!(
        j["factor_note"]
            .as_str()
            .unwrap()
            .contains("not identified")
    );
}

#[test]
fn compare_and_plan_usage() {
    let out = relyard(&[
        "compare",
        "--sample",
        "Form A=0.81,120,10",
        "--sample",
        "Form B=0.74,95,10",
    ]);
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("Form A")
            && text.contains("Feldt (1969)")
            && text.contains("Hakstian–Whalen (1976)")
    );
    fails_with(
        &["compare", "--sample", "0.81,120,10"],
        &["at least two samples"],
    );
    fails_with(
        &["compare", "--sample", "0.81,120", "--sample", "0.7,90,10"],
        &["ALPHA,N,ITEMS"],
    );
    fails_with(
        &["compare", "--sample", "1.2,120,10", "--sample", "0.7,90,10"],
        &["below 1"],
    );
    let dir = scratch("compare-sheet");
    let sheet = write_file(
        &dir,
        "s.csv",
        b"study,coef,n,items\nA,0.81,120,10\nB,0.74,95,10\nC,0.86,300,8\n",
    );
    let j = json_ok(&["compare", &sheet, "--json"]);
    assert_eq!(j["samples"].as_array().unwrap().len(), 3);
    fails_with(
        &["plan", "--items", "10", "--planning", "0.8"],
        &["--width", "--null"],
    );
    fails_with(
        &[
            "plan",
            "--items",
            "10",
            "--planning",
            "0.95",
            "--width",
            "0.2",
        ],
        &["reaches 1"],
    );
    fails_with(
        &[
            "plan",
            "--items",
            "1",
            "--planning",
            "0.8",
            "--width",
            "0.1",
        ],
        &["--items"],
    );
}

/// Regressions from the issue 4 review.
mod review {
    use super::*;

    #[test]
    fn the_reading_handles_unreversed_and_unrelated_items() {
        let d = demo_items();
        let raw = json_ok(&["items", &d, "--items", ITEMS, "--json"]);
        assert_eq!(
            raw["recommendation"], "reverse_key_first",
            "{}",
            raw["reading"]
        );
        assert!(raw["reading"].as_str().unwrap().contains("btci_04"));
        // Four unrelated items.
        let mut text = String::from("a,b,c,d\n");
        let mut state = 12345u64;
        for _ in 0..200 {
            let cells: Vec<String> = (0..4)
                .map(|_| {
                    state = state
                        .wrapping_mul(6364136223846793005)
                        .wrapping_add(1442695040888963407);
                    ((state >> 33) % 5 + 1).to_string()
                })
                .collect();
            text.push_str(&cells.join(","));
            text.push('\n');
        }
        let dir = scratch("review4-unrelated");
        let path = write_file(&dir, "u.csv", text.as_bytes());
        let j = json_ok(&["items", &path, "--json"]);
        assert!(
            ["no_common_variance", "reverse_key_first"]
                .contains(&j["recommendation"].as_str().unwrap()),
            "{}",
            j["reading"]
        );
    }

    #[test]
    fn columns_that_are_not_items() {
        let dir = scratch("review4-columns");
        let total = write_file(
            &dir,
            "total.csv",
            b"a,b,c,total\n1,2,3,6\n2,2,3,7\n3,3,4,10\n4,2,1,7\n2,4,4,10\n5,4,3,12\n",
        );
        fails_with(&["items", &total], &["column total", "total score"]);
        let empty = write_file(
            &dir,
            "empty.csv",
            b"a,b,c,d\n1,2,3,\n2,2,3,\n3,3,4,\n4,2,1,\n",
        );
        fails_with(&["items", &empty], &["column d has no answers"]);
        let dup = write_file(&dir, "dup.csv", b"a,b,a\n1,2,3\n2,2,3\n3,3,4\n");
        fails_with(&["items", &dup], &["\"a\" appears twice"]);
        let trailing = write_file(
            &dir,
            "trailing.csv",
            b"a,b,c,\n1,2,3,\n2,3,3,\n3,3,4,\n4,2,1,\n2,4,5,\n",
        );
        let j = json_ok(&["items", &trailing, "--json"]);
        assert_eq!(j["items"], 3);
        let ids = write_file(
            &dir,
            "ids.csv",
            b"id,a,b,c\n1,1,2,3\n2,2,2,3\n3,3,3,4\n4,4,2,1\n5,2,4,5\n6,5,4,3\n",
        );
        let j = json_ok(&["items", &ids, "--json"]);
        assert!(warning_codes(&j).iter().any(|c| c == "identifier_column"));
        let codes = write_file(&dir, "codes.csv", b"a,b,c\n1,2,3\n2,2,3\n3,3,4\n4,2,1\n2,4,5\n5,4,3\n3,3,3\n2,3,4\n4,4,4\n1,2,2\n3,2,3\n2,-99,3\n4,5,5\n3,3,2\n2,2,2\n4,4,5\n5,5,4\n1,1,2\n3,4,3\n2,3,3\n4,3,4\n3,4,4\n2,2,3\n3,3,3\n4,4,3\n3,2,4\n2,3,2\n4,3,3\n3,4,5\n2,2,1\n");
        let j = json_ok(&["items", &codes, "--json"]);
        assert!(
            warning_codes(&j).iter().any(|c| c == "extreme_response"),
            "{:?}",
            warning_codes(&j)
        );
        // A typo in the first row is a located cell error, not "a column of text".
        let typo = write_file(&dir, "typo.csv", b"a,b,c\n1,3x,3\n2,2,3\n3,3,4\n");
        fails_with(&["items", &typo], &["row 2, column b:", "\"3x\""]);
    }

    #[test]
    fn compare_says_what_it_found() {
        let out = relyard(&[
            "compare",
            "--sample",
            "0.81,120,10",
            "--sample",
            "0.74,95,8",
        ]);
        let text = String::from_utf8_lossy(&out.stdout);
        assert!(text.contains("The alphas span 0.070"), "{text}");
        assert!(text.contains("forms of different lengths"), "{text}");
    }
}

const GROUPS: [&str; 6] = [
    "--factor",
    "calm=c1,c2,c3,c4",
    "--factor",
    "focus=f1,f2,f3,f4",
    "--factor",
    "drive=d1,d2,d3,d4",
];

/// Issue 14 item 2: `items --factor` reports the bifactor coefficients and both models' fit
/// as the scipy reference found them, in text and JSON.
#[test]
fn subscales_give_the_reference_coefficients() {
    let dir = scratch("subscales");
    let file = subscale_items_csv(&dir);
    let mut args = vec!["items", file.as_str(), "--json"];
    args.extend(GROUPS);
    let j = json_ok(&args);
    let m = &j["multidimensional"];
    let want = &fixture("multidimensional.json")["data"];
    let c = &want["bifactor"]["coefficients"];
    for key in ["omega_total", "omega_hierarchical", "ecv"] {
        assert_close(
            m[key].as_f64().unwrap(),
            c[key].as_f64().unwrap(),
            1e-6,
            1e-8,
            key,
        );
    }
    let subs = m["subscales"].as_array().unwrap();
    assert_eq!(subs.len(), 3);
    for (g, w) in subs.iter().zip(c["subscales"].as_array().unwrap()) {
        assert_eq!(g["name"], w["name"]);
        for key in ["omega", "omega_hierarchical_subscale"] {
            assert_close(
                g[key].as_f64().unwrap(),
                w[key].as_f64().unwrap(),
                1e-6,
                1e-8,
                key,
            );
        }
    }
    for (key, model) in [
        ("fit_bifactor", "bifactor"),
        ("fit_correlated", "correlated"),
    ] {
        let (g, w) = (&m[key], &want[model]["fit"]);
        assert_close(
            g["chi2"].as_f64().unwrap(),
            w["chi2"].as_f64().unwrap(),
            1e-6,
            1e-8,
            key,
        );
        assert_eq!(g["df"], w["df"]);
        assert_close(
            g["cfi"].as_f64().unwrap(),
            w["cfi"].as_f64().unwrap(),
            1e-6,
            1e-8,
            key,
        );
    }
    assert_eq!(m["general_factor"], "not_strong");
    assert_eq!(m["groups"][1]["items"][3], "f4");
    assert_eq!(m["bifactor_loadings"].as_array().unwrap().len(), 12);
    let reading = m["reading"].as_str().unwrap();
    assert!(reading.contains("do not read the subscales"), "{reading}");
    // The readable summary shows the same coefficients.
    let mut args = vec!["items", file.as_str()];
    args.extend(GROUPS);
    let out = run_ok(&args);
    let text = String::from_utf8_lossy(&out.stdout);
    let total = format!(
        "omega total               {:.3}",
        c["omega_total"].as_f64().unwrap()
    );
    assert!(text.contains(&total), "{text}");
    assert!(text.contains("correlated factors χ²(51)"), "{text}");
}

/// Groups that cannot be used are refused with the item and group named (exit 2); a group
/// of two items leaves out the bifactor model with the reason and keeps the correlated one.
#[test]
fn bad_groups_are_refused_and_small_groups_explained() {
    let dir = scratch("subscales-bad");
    let file = subscale_items_csv(&dir);
    let f = file.as_str();
    fails_with(
        &[
            "items",
            f,
            "--factor",
            "calm=c1,c2,c3,c4,q9",
            "--factor",
            "rest=f1,f2,f3,f4,d1,d2,d3,d4",
        ],
        &["group calm names \"q9\"", "--factor"],
    );
    fails_with(
        &[
            "items",
            f,
            "--factor",
            "calm=c1,c2,c3,c4,f1",
            "--factor",
            "rest=f1,f2,f3,f4,d1,d2,d3,d4",
        ],
        &["item f1 is in two groups (calm and rest)"],
    );
    fails_with(
        &[
            "items",
            f,
            "--factor",
            "calm=c1,c2,c3,c4",
            "--factor",
            "focus=f1,f2,f3,f4",
        ],
        &["d1, d2, d3 and d4 are in no group", "--items"],
    );
    fails_with(&["items", f, "--factor", "calm"], &["NAME=ITEM,ITEM"]);
    fails_with(
        &["items", f, "--factor", "a=c1", "--factor", "a=c2"],
        &["\"a\" is given twice"],
    );
    let j = json_ok(&[
        "items",
        f,
        "--items",
        "c1,c2,c3,c4,f1,f2",
        "--json",
        "--factor",
        "calm=c1,c2,c3,c4",
        "--factor",
        "focus=f1,f2",
    ]);
    let m = &j["multidimensional"];
    assert!(m["omega_hierarchical"].is_null());
    let note = m["bifactor_note"].as_str().unwrap();
    assert!(
        note.contains("at least three items") && note.contains("focus"),
        "{note}"
    );
    assert!(m["fit_correlated"]["chi2"].as_f64().unwrap() > 0.0);
    assert_eq!(m["factor_correlations"].as_array().unwrap().len(), 2);
}

/// Issue 14 item 4: `items` reports the greatest lower bound between λ2 and 1, marks a
/// sample below 1,000 respondents and says that it is a lower bound (over-correction).
#[test]
fn the_greatest_lower_bound_is_reported_with_its_cautions() {
    let d = demo_items();
    let j = json_ok(&[
        "items",
        &d,
        "--items",
        ITEMS,
        "--reverse",
        "btci_04,btci_09",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--json",
    ]);
    let g = &j["glb"];
    let (value, l2) = (g["value"].as_f64().unwrap(), j["lambda2"].as_f64().unwrap());
    assert!(l2 <= value && value < 1.0, "λ2 {l2}, glb {value}");
    assert_eq!(g["converged"], true);
    assert_eq!(g["small_sample"], true);
    let caution = g["caution"].as_str().unwrap();
    assert!(
        caution.contains("over-corrects") && caution.contains("1,000"),
        "{caution}"
    );
    // Two respondents fewer than items: not computed, and why.
    let dir = scratch("glb-few");
    let few = write_file(&dir, "few.csv", b"a,b,c,d\n1,2,3,4\n2,3,5,4\n4,4,4,5\n");
    let j = json_ok(&["items", &few, "--json"]);
    assert!(j["glb"]["value"].is_null());
    assert!(
        j["glb"]["note"]
            .as_str()
            .unwrap()
            .contains("fewer respondents than items")
    );
}

/// Issue 14 item 6: `items --paragraph` prints a methods paragraph whose numbers are the
/// JSON's (two decimals), naming the coefficient the reading recommends, with references;
/// the JSON holds the same paragraph.
#[test]
fn the_methods_paragraph_carries_the_reported_coefficient() {
    let d = demo_items();
    let base = [
        "items",
        d.as_str(),
        "--items",
        ITEMS,
        "--reverse",
        "btci_04,btci_09",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
    ];
    let mut args = base.to_vec();
    args.push("--json");
    let j = json_ok(&args);
    let mut args = base.to_vec();
    args.push("--paragraph");
    let out = run_ok(&args);
    let text = String::from_utf8_lossy(&out.stdout);
    let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert_eq!(j["recommendation"], "omega");
    let omega = format!("ω = {:.2}", j["omega"].as_f64().unwrap());
    let alpha = format!("α = {:.2}", j["alpha"].as_f64().unwrap());
    assert!(flat.contains(&omega) && flat.contains(&alpha), "{flat}");
    assert!(flat.contains("not tau-equivalent"), "{flat}");
    assert!(
        flat.contains("btci_04 and btci_09 were reverse-keyed"),
        "{flat}"
    );
    assert!(flat.contains("McDonald, R. P. (1999)"), "{flat}");
    let para = j["paragraph"].as_str().unwrap();
    assert!(flat.starts_with(&para.split_whitespace().collect::<Vec<_>>().join(" ")));
    assert!(j["references"].as_array().unwrap().len() >= 2);
    // --paragraph and --json together are refused.
    let mut args = base.to_vec();
    args.extend(["--paragraph", "--json"]);
    assert_eq!(relyard(&args).status.code(), Some(2));
}
