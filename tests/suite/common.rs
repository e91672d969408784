//! Shared helpers for the integration tests: the one place for tolerances, fixture
//! loading, and running the real binary.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Values from the reference fixtures: the iterative fits stop when τ² changes by less
/// than 1e-10, so derived quantities agree to about 1e-9 relative.
pub const FIXTURE_REL: f64 = 1e-8;
/// Absolute floor for values near zero.
pub const FIXTURE_ABS: f64 = 1e-10;
/// Quantiles against scipy.
pub const QUANTILE_REL: f64 = 1e-10;
/// Values printed to three decimals in a publication.
pub const PRINTED_3DP: f64 = 5e-4 + 1e-9;

/// Assert |actual − expected| ≤ max(rel·|expected|, abs), printing the context.
#[track_caller]
pub fn assert_close(actual: f64, expected: f64, rel: f64, abs: f64, what: &str) {
    let tol = (rel * expected.abs()).max(abs);
    assert!(
        (actual - expected).abs() <= tol,
        "{what}: got {actual:.15e}, expected {expected:.15e} (tolerance {tol:e})"
    );
}

/// Path of a file under tests/.
pub fn test_path(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join(rel)
}

/// Path of a file in datasets-demo/, as a string for command arguments.
pub fn demo_file(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("datasets-demo")
        .join(name)
        .to_string_lossy()
        .into_owned()
}

/// Load a JSON fixture from tests/reference/fixtures.
pub fn fixture(name: &str) -> serde_json::Value {
    let p = test_path(&format!("reference/fixtures/{name}"));
    let text = std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// A JSON array of numbers as a vector.
pub fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .expect("an array")
        .iter()
        .map(|x| x.as_f64().expect("a number"))
        .collect()
}

/// Run the relyard binary with arguments.
pub fn relyard(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_relyard"))
        .args(args)
        .output()
        .expect("the binary runs")
}

/// A fresh scratch directory for one test.
pub fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("relyard-test-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

/// Write `bytes` to `dir/name` and return the path as a string.
pub fn write_file(dir: &Path, name: &str, bytes: &[u8]) -> String {
    let p = dir.join(name);
    std::fs::write(&p, bytes).expect("write test file");
    p.to_string_lossy().into_owned()
}

/// The 13 BCG trials (Colditz et al. 1994, JAMA 271, 698–702; the 2×2 tables as
/// printed in van Houwelingen, Arends & Stijnen 2002, Statistics in Medicine 21,
/// 589–624, Table I): (tpos, tneg, cpos, cneg, absolute latitude).
pub fn bcg_trials() -> Vec<[f64; 5]> {
    let text = std::fs::read_to_string(test_path("data/bcg-trials.csv")).expect("bcg data");
    text.lines()
        .skip(1)
        .filter(|l| !l.trim().is_empty())
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            [2, 3, 4, 5, 6].map(|i| f[i].parse::<f64>().expect("a number"))
        })
        .collect()
}

/// Log risk ratios and their variances for the BCG trials.
pub fn bcg_log_rr() -> (Vec<f64>, Vec<f64>) {
    bcg_trials()
        .iter()
        .map(|[a, b, c, d, _]| {
            let y = ((a / (a + b)) / (c / (c + d))).ln();
            let v = 1.0 / a - 1.0 / (a + b) + 1.0 / c - 1.0 / (c + d);
            (y, v)
        })
        .unzip()
}

/// Log odds ratios and their variances for the BCG trials.
pub fn bcg_log_or() -> (Vec<f64>, Vec<f64>) {
    bcg_trials()
        .iter()
        .map(|[a, b, c, d, _]| {
            (
                (a * d / (b * c)).ln(),
                1.0 / a + 1.0 / b + 1.0 / c + 1.0 / d,
            )
        })
        .unzip()
}

/// The warning codes of a JSON document.
pub fn warning_codes(j: &serde_json::Value) -> Vec<String> {
    j["warnings"]
        .as_array()
        .expect("warnings is an array")
        .iter()
        .map(|w| w["code"].as_str().expect("a code").to_string())
        .collect()
}

/// Run the binary, require exit status 0, and parse its stdout as one JSON object.
#[track_caller]
pub fn json_ok(args: &[&str]) -> serde_json::Value {
    let out = run_ok(args);
    serde_json::from_slice(&out.stdout).expect("stdout is one JSON object")
}

/// Run the binary and require success (exit status 0), showing stderr otherwise.
#[track_caller]
pub fn run_ok(args: &[&str]) -> Output {
    let out = relyard(args);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out
}

/// [`assert_close`] for two JSON numbers.
#[track_caller]
pub fn assert_json_close(
    actual: &serde_json::Value,
    expected: &serde_json::Value,
    rel: f64,
    abs: f64,
    what: &str,
) {
    let a = actual
        .as_f64()
        .unwrap_or_else(|| panic!("{what}: {actual} is not a number"));
    let e = expected
        .as_f64()
        .unwrap_or_else(|| panic!("{what}: {expected} is not a number"));
    assert_close(a, e, rel, abs, what);
}

/// The Chromium binary on the path, if any (the browser tests skip without it, except under
/// CI, which sets RELYARD_REQUIRE_BROWSER=1 and installs it).
pub fn chromium() -> Option<PathBuf> {
    ["chromium", "chromium-browser", "google-chrome"]
        .iter()
        .find_map(|b| {
            Command::new("which")
                .arg(b)
                .output()
                .ok()
                .filter(|o| o.status.success())
                .map(|o| PathBuf::from(String::from_utf8_lossy(&o.stdout).trim()))
        })
}

/// The DOM of `url` as headless Chromium renders it (after `budget_ms` of virtual time, a
/// fresh profile under `profile`), asserting that the browser ran and logged no console
/// message, uncaught error or failed load.
pub fn rendered_dom(browser: &Path, profile: &Path, url: &str, budget_ms: u32) -> String {
    let out = Command::new(browser)
        .args([
            "--headless=new",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-dev-shm-usage",
            "--no-first-run",
            "--enable-logging=stderr",
            "--v=0",
            &format!("--user-data-dir={}", profile.display()),
            &format!("--virtual-time-budget={budget_ms}"),
            "--dump-dom",
            url,
        ])
        .output()
        .expect("chromium runs");
    let log = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "chromium failed: {log}");
    for line in log.lines() {
        assert!(
            !(line.contains("CONSOLE")
                || line.contains("Uncaught")
                || line.contains("Failed to load")),
            "browser console: {line}"
        );
    }
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// The invented subscale data of tests/reference/multidimensional_reference.py as a CSV in
/// `dir`: c1–c4 calm, f1–f4 focus, d1–d4 drive.
pub fn subscale_items_csv(dir: &Path) -> String {
    let f = fixture("multidimensional.json");
    let mut text = String::from("c1,c2,c3,c4,f1,f2,f3,f4,d1,d2,d3,d4\n");
    for row in f["data"]["responses"].as_array().unwrap() {
        let cells: Vec<String> = floats(row).iter().map(|x| x.to_string()).collect();
        text.push_str(&cells.join(","));
        text.push('\n');
    }
    write_file(dir, "subscales.csv", text.as_bytes())
}
