//! `relyard report`: the report holds exactly the numbers the individual commands print,
//! its figures have their structure (checked against committed snapshots), and the page
//! renders in a real browser (headless Chromium) with no console errors.

use crate::common::*;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

const SHEET: &str = "datasets-demo/candor-benchmark.csv";

fn demo_sheet() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join(SHEET)
        .to_string_lossy()
        .into_owned()
}

/// The full report of the demo (invented) data, written once per test into its own folder.
fn full_report(name: &str) -> PathBuf {
    let dir = scratch(name).join("out");
    let sheet = demo_sheet();
    run_ok(&[
        "report",
        &sheet,
        "--moderator",
        "year",
        "--moderator",
        "field_maturity",
        "--score-spread",
        "--coef",
        "0.72",
        "--n",
        "150",
        "--items",
        "10",
        "--at",
        "year=2024",
        "--at",
        "field_maturity=developing",
        "--r",
        "0.32",
        "--rel-y",
        "0.85",
        "--draws",
        "2000",
        "--out",
        dir.to_str().unwrap(),
    ]);
    dir
}

fn read_json(p: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

/// results.json holds the very documents `pool`, `explain`, `check` and `correct` print
/// with `--json` for the same options.
#[test]
fn report_numbers_equal_the_commands_json() {
    let dir = full_report("equal");
    let r = read_json(&dir.join("results.json"));
    let sheet = demo_sheet();
    let pool = json_ok(&["pool", &sheet, "--json"]);
    assert_eq!(r["benchmark"], pool);
    let explain = json_ok(&[
        "explain",
        &sheet,
        "--moderator",
        "year",
        "--moderator",
        "field_maturity",
        "--score-spread",
        "--json",
    ]);
    assert_eq!(r["explain"], explain);
    let check = json_ok(&[
        "check",
        &sheet,
        "--moderator",
        "year",
        "--moderator",
        "field_maturity",
        "--coef",
        "0.72",
        "--n",
        "150",
        "--items",
        "10",
        "--at",
        "year=2024",
        "--at",
        "field_maturity=developing",
        "--json",
    ]);
    assert_eq!(r["placement"], check);
    let correct = json_ok(&[
        "correct",
        "--r",
        "0.32",
        "--n",
        "150",
        "--rel-x",
        "0.72,n=150,items=10,kind=alpha",
        "--rel-y",
        "0.85",
        "--draws",
        "2000",
        "--json",
    ]);
    assert_eq!(r["correction"], correct);
    // The input's checksum is the SHA-256 of the file (FIPS 180-4), checked against the
    // system's sha256sum when it is there.
    let sha = r["input"]["sha256"].as_str().unwrap().to_string();
    assert_eq!(sha.len(), 64);
    if let Ok(o) = Command::new("sha256sum").arg(&sheet).output() {
        let printed = String::from_utf8_lossy(&o.stdout);
        assert!(printed.starts_with(&sha), "{printed} vs {sha}");
    }
    // The HTML and Markdown show the same numbers.
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let md = std::fs::read_to_string(dir.join("report.md")).unwrap();
    let three = |v: &serde_json::Value| format!("{:.3}", v.as_f64().unwrap());
    for shown in [
        three(&pool["reliability"]["estimate"]),
        three(&pool["reliability"]["pi"][0]),
        three(&pool["reliability"]["pi"][1]),
        three(&check["expected"]),
        three(&correct["corrected"]),
    ] {
        assert!(html.contains(&shown), "{shown} missing from the HTML");
        assert!(md.contains(&shown), "{shown} missing from the Markdown");
    }
    assert!(html.contains(&sha[..12]));
    assert!(md.contains(&sha));
    // The checklist has the guideline's 30 items.
    assert_eq!(r["checklist"].as_array().unwrap().len(), 30);
}

/// The page is self-contained: no scripts, no external style sheets or images, every
/// figure inline with a title for screen readers.
#[test]
fn the_page_is_self_contained() {
    let dir = full_report("self-contained");
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let r = read_json(&dir.join("results.json"));
    let figures: Vec<String> = r["figures"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f.as_str().unwrap().to_string())
        .collect();
    assert_eq!(figures.len(), 6, "{figures:?}");
    for f in &figures {
        assert!(html.contains(&format!("<figure id=\"fig-{f}\">")), "{f}");
        for ext in ["svg", "png"] {
            let p = dir.join("figures").join(format!("{f}.{ext}"));
            assert!(
                std::fs::metadata(&p).unwrap().len() > 1000,
                "{}",
                p.display()
            );
        }
    }
    assert_eq!(html.matches("<svg").count(), figures.len());
    assert_eq!(html.matches("<title id=").count(), figures.len());
    // Ids are unique on the page (one title and one description per figure).
    for f in &figures {
        assert_eq!(html.matches(&format!("id=\"{f}-title\"")).count(), 1, "{f}");
    }
    for forbidden in ["<script", "<link", "<img", "<iframe", "@import", "url("] {
        assert!(!html.contains(forbidden), "{forbidden}");
    }
    // The only absolute addresses are XML namespaces.
    for (i, _) in html.match_indices("http") {
        let around = &html[i.saturating_sub(8)..(i + 40).min(html.len())];
        assert!(around.contains("www.w3.org"), "external address: {around}");
    }
    // PNGs are PNGs, at twice the SVG's size (PNG specification: the IHDR chunk holds the
    // width and height as big-endian 32-bit numbers at bytes 16–23).
    for f in &figures {
        let png = std::fs::read(dir.join(format!("figures/{f}.png"))).unwrap();
        assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
        let be = |i: usize| u32::from_be_bytes([png[i], png[i + 1], png[i + 2], png[i + 3]]);
        let svg = std::fs::read_to_string(dir.join(format!("figures/{f}.svg"))).unwrap();
        let attr = |name: &str| -> u32 {
            let i = svg.find(&format!(" {name}=\"")).unwrap() + name.len() + 3;
            svg[i..].split('"').next().unwrap().parse().unwrap()
        };
        assert_eq!(
            (be(16), be(20)),
            (2 * attr("width"), 2 * attr("height")),
            "{f}"
        );
    }
}

/// An existing report is not replaced without --force.
#[test]
fn an_existing_report_is_kept() {
    let dir = full_report("keep");
    let before = std::fs::read(dir.join("report.html")).unwrap();
    let sheet = demo_sheet();
    let out = relyard(&["report", &sheet, "--out", dir.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--force"));
    assert_eq!(std::fs::read(dir.join("report.html")).unwrap(), before);
    let out = relyard(&["report", &sheet, "--out", dir.to_str().unwrap(), "--force"]);
    assert_eq!(out.status.code(), Some(0));
    assert_ne!(std::fs::read(dir.join("report.html")).unwrap(), before);
    for (args, frag) in [
        (vec!["--coef", "0.7"], "--n"),
        (vec!["--r", "0.3", "--n", "100"], "--rel-y"),
        (vec!["--rel-y", "0.8"], "--r"),
    ] {
        let mut a = vec![
            "report",
            sheet.as_str(),
            "--out",
            "/tmp/relyard-never-written",
        ];
        a.extend(args);
        let out = relyard(&a);
        assert_eq!(out.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&out.stderr).contains(frag));
    }
}

/// The structure of an SVG: how many of each element, and its texts.
fn structure(svg: &str) -> String {
    let mut counts: BTreeMap<String, usize> = BTreeMap::new();
    let mut texts: Vec<String> = Vec::new();
    let mut rest = svg;
    while let Some(i) = rest.find('<') {
        rest = &rest[i + 1..];
        if rest.starts_with('/') || rest.starts_with('?') || rest.starts_with('!') {
            continue;
        }
        let name: String = rest
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric())
            .collect();
        *counts.entry(name.clone()).or_default() += 1;
        if name == "text" || name == "title" || name == "desc" {
            let start = rest.find('>').map_or(0, |j| j + 1);
            let end = rest.find("</").unwrap_or(start);
            texts.push(rest[start..end].trim().to_string());
        }
    }
    let mut out = String::from("elements:\n");
    for (k, v) in counts {
        out.push_str(&format!("  {k} {v}\n"));
    }
    out.push_str("texts:\n");
    for t in texts {
        out.push_str(&format!("  {t}\n"));
    }
    out
}

/// Each figure's structure matches its committed snapshot (tests/snapshots/); a change
/// to a figure shows as a diff. Set RELYARD_UPDATE_SNAPSHOTS=1 to write new snapshots
/// after a deliberate change, and review them before committing.
#[test]
fn figure_structure_matches_snapshots() {
    let dir = full_report("snapshots");
    let snap_dir = test_path("snapshots");
    let update = std::env::var_os("RELYARD_UPDATE_SNAPSHOTS").is_some();
    let mut failures = Vec::new();
    for entry in std::fs::read_dir(dir.join("figures")).unwrap() {
        let p = entry.unwrap().path();
        if p.extension().and_then(|e| e.to_str()) != Some("svg") {
            continue;
        }
        let svg = std::fs::read_to_string(&p).unwrap();
        let got = structure(&svg);
        let snap = snap_dir.join(format!("{}.txt", p.file_stem().unwrap().to_string_lossy()));
        if update {
            std::fs::create_dir_all(&snap_dir).unwrap();
            std::fs::write(&snap, &got).unwrap();
            continue;
        }
        match std::fs::read_to_string(&snap) {
            Ok(want) if want == got => {}
            Ok(want) => failures.push(format!(
                "{}: structure changed\n--- snapshot\n{want}\n--- now\n{got}",
                snap.display()
            )),
            Err(_) => failures.push(format!("{}: no snapshot", snap.display())),
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Axis labels each figure must carry.
fn axis_labels(figure: &str) -> Vec<&'static str> {
    match figure {
        "forest" => vec!["reliability coefficient", "Pooled", "Expected range"],
        "precision" => vec!["standard error", "ln(1 − coefficient)"],
        "moderator-year" => vec!["year", "reliability coefficient"],
        "score-spread" => vec!["score SD (", "reliability coefficient", "slope −2"],
        "placement" => vec!["reliability coefficient", "density", "this study"],
        "correction" => vec!["reliability of x", "corrected correlation"],
        other => panic!("no axis labels listed for figure {other}"),
    }
}

/// The page loads in headless Chromium with no console errors, and every figure is in
/// the rendered page with its axes and labels. CI sets RELYARD_REQUIRE_BROWSER=1 (and
/// installs Chromium), so there a missing browser fails the test; elsewhere it is skipped
/// with a note.
#[test]
fn renders_in_a_browser() {
    let Some(chromium) = super::common::chromium() else {
        assert!(
            std::env::var_os("RELYARD_REQUIRE_BROWSER").is_none(),
            "RELYARD_REQUIRE_BROWSER is set but no Chromium was found"
        );
        eprintln!("note: Chromium not found; the browser test was skipped");
        return;
    };
    let dir = full_report("browser");
    let page = dir.join("report.html");
    let profile = dir.join("chromium-profile");
    let dom = super::common::rendered_dom(
        &chromium,
        &profile,
        &format!("file://{}", page.display()),
        5000,
    );
    assert!(dom.contains("<h1>Reliability benchmark report"), "{dom}");
    let r = read_json(&dir.join("results.json"));
    for f in r["figures"].as_array().unwrap() {
        let name = f.as_str().unwrap();
        let start = dom
            .find(&format!("<figure id=\"fig-{name}\""))
            .unwrap_or_else(|| panic!("figure {name} not in the rendered page"));
        let end = dom[start..].find("</figure>").unwrap() + start;
        let fig = &dom[start..end];
        assert!(fig.contains("<svg"), "{name}: no svg");
        assert!(fig.contains("<title"), "{name}: no title");
        // Axis lines and tick labels, then the named labels.
        assert!(fig.matches("<text").count() >= 6, "{name}: too few texts");
        assert!(
            fig.contains("<line") || fig.contains("<polyline"),
            "{name}: no axes"
        );
        for label in axis_labels(name) {
            assert!(fig.contains(label), "{name}: label {label} missing");
        }
    }
}

/// Small and unusual benchmarks still give a report: two studies (no prediction interval)
/// and a common-effect model (no between-setting variation); the methods say so.
#[test]
fn small_and_common_effect_reports() {
    let dir = scratch("small");
    let sheet = write_file(
        &dir,
        "two.csv",
        b"study,coef,n,items\nA,0.81,120,8\nB,0.74,95,8\n",
    );
    let out_dir = dir.join("two");
    run_ok(&["report", &sheet, "--out", out_dir.to_str().unwrap()]);
    let html = std::fs::read_to_string(out_dir.join("report.html")).unwrap();
    assert!(
        html.contains("None is stated"),
        "no prediction interval said"
    );
    let sheet = demo_sheet();
    let out_dir = dir.join("common");
    run_ok(&[
        "report",
        &sheet,
        "--tau2",
        "common",
        "--ci",
        "wald",
        "--out",
        out_dir.to_str().unwrap(),
    ]);
    let html = std::fs::read_to_string(out_dir.join("report.html")).unwrap();
    assert!(html.contains("common-effect model (τ² = 0 assumed)"));
    assert!(!html.contains("τ² by COMMON"));
    assert!(html.contains("normal quantiles"));
    assert!(!html.contains("Knapp–Hartung: t with"));
}

/// The correction's reliability, when the new study gives none, is the benchmark the
/// report shows: the same sheet options (here a mapped column name) and model.
#[test]
fn the_correction_uses_the_reports_benchmark() {
    let dir = scratch("correction-benchmark");
    let text = std::fs::read_to_string(demo_sheet()).unwrap();
    let renamed = text.replacen("coef", "reported_alpha", 1);
    let sheet = write_file(&dir, "renamed.csv", renamed.as_bytes());
    let out_dir = dir.join("out");
    run_ok(&[
        "report",
        &sheet,
        "--column",
        "coef=reported_alpha",
        "--tau2",
        "dl",
        "--r",
        "0.3",
        "--n",
        "200",
        "--rel-y",
        "0.8",
        "--draws",
        "500",
        "--out",
        out_dir.to_str().unwrap(),
    ]);
    let r = read_json(&out_dir.join("results.json"));
    assert_eq!(r["benchmark"]["tau2_method"], "dl");
    let used = r["correction"]["reliabilities"][0]["value"]
        .as_f64()
        .unwrap();
    let shown = r["benchmark"]["reliability"]["estimate"].as_f64().unwrap();
    assert!((used - shown).abs() < 1e-12, "{used} vs {shown}");
}

/// Issue 14 item 5: the report shows the same side-by-side table as `correct` when the
/// other score's item data are given (`--items-y`), and results.json holds it.
#[test]
fn the_report_shows_the_choice_of_coefficient() {
    let dir = scratch("report-choice");
    let sheet = demo_sheet();
    let items = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("datasets-demo/candor-items.csv")
        .to_string_lossy()
        .into_owned();
    let out_dir = dir.join("out");
    run_ok(&[
        "report",
        &sheet,
        "--coef",
        "0.72",
        "--n",
        "150",
        "--items",
        "10",
        "--r",
        "0.3",
        "--items-y",
        &items,
        "--draws",
        "500",
        "--out",
        out_dir.to_str().unwrap(),
    ]);
    let r = read_json(&out_dir.join("results.json"));
    let rows = r["correction"]["by_coefficient"].as_array().unwrap();
    let names: Vec<&str> = rows
        .iter()
        .map(|r| r["coefficient"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["alpha", "omega", "glb"]);
    // x is the study's coefficient in every row (it has no item data).
    for row in rows {
        assert_eq!(row["reliability_x"].as_f64().unwrap(), 0.72);
    }
    let html = std::fs::read_to_string(out_dir.join("report.html")).unwrap();
    assert!(
        html.contains("The choice of coefficient"),
        "no table in the page"
    );
    assert!(html.contains("greatest lower bound"));
    let md = std::fs::read_to_string(out_dir.join("report.md")).unwrap();
    assert!(md.contains("The choice of coefficient"));
}
