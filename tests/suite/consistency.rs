//! Consistency of the faces with each other and with what they promise (issue 10): one
//! setting from the command line to the fit, the JSON and the page; warnings once; every
//! cross-reference resolving; the same model wherever a part is shown; and the new
//! behaviours (subsets, centring, level spellings, identifier columns, missing-value
//! codes, exact p values).

use crate::common::*;
use serde_json::Value;
use std::path::Path;

fn demo(name: &str) -> String {
    demo_file(name)
}

fn stdout(args: &[&str]) -> String {
    String::from_utf8_lossy(&run_ok(args).stdout).into_owned()
}

fn report(dir: &Path, name: &str, args: &[&str]) -> (Value, String, String) {
    let out = dir.join(name);
    let mut all = vec!["report"];
    all.extend(args);
    all.extend(["--out", out.to_str().unwrap()]);
    run_ok(&all);
    let read = |f: &str| std::fs::read_to_string(out.join(f)).unwrap();
    (
        serde_json::from_str(&read("results.json")).unwrap(),
        read("report.html"),
        read("report.md"),
    )
}

/// One setting (the τ² estimator) goes from the command line through Settings to the fit
/// and out to every part's JSON and to the page.
#[test]
fn one_setting_reaches_every_face() {
    let dir = scratch("one-setting");
    let (r, html, md) = report(
        &dir,
        "dl",
        &[
            &demo("candor-benchmark.csv"),
            "--tau2",
            "dl",
            "--moderator",
            "year",
            "--coef",
            "0.7",
            "--n",
            "120",
            "--items",
            "10",
            "--at",
            "year=2015",
        ],
    );
    for part in ["benchmark", "explain", "placement"] {
        assert_eq!(r[part]["tau2_method"], "dl", "{part}");
    }
    // The same estimate as relyard pool with the same setting.
    let pool = json_ok(&[
        "pool",
        &demo("candor-benchmark.csv"),
        "--tau2",
        "dl",
        "--json",
    ]);
    assert_eq!(r["benchmark"]["tau2"], pool["tau2"]);
    assert!(html.contains("DerSimonian–Laird") && md.contains("DerSimonian–Laird"));
    assert!(r["settings"].as_str().unwrap().contains("τ² estimator dl"));
}

/// A warning shows once: on the terminal, in the page and in the Markdown, although the
/// sheet-level warning belongs to every part.
#[test]
fn a_warning_shows_once() {
    let dir = scratch("once");
    let text = std::fs::read_to_string(demo("candor-benchmark.csv")).unwrap();
    let dup = text.replacen("Sample 02,", "Sample 01,", 1);
    let sheet = write_file(&dir, "dup.csv", dup.as_bytes());
    let out = dir.join("rep");
    let o = run_ok(&[
        "report",
        &sheet,
        "--moderator",
        "year",
        "--score-spread",
        "--out",
        out.to_str().unwrap(),
    ]);
    let err = String::from_utf8_lossy(&o.stderr);
    let needle = "the study label \"Sample 01\" appears on";
    assert_eq!(err.matches(needle).count(), 1, "{err}");
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    assert_eq!(html.matches("appears on rows 2 and 3").count(), 1);
    assert_eq!(md.matches("appears on rows 2 and 3").count(), 1);
}

/// Rows a warning says were left out are listed on the page and in the Markdown, and the
/// checklist points only to sections the page has.
#[test]
fn every_cross_reference_resolves() {
    let dir = scratch("xref");
    let text = std::fs::read_to_string(demo("candor-benchmark.csv")).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    lines[4] = lines[4].replacen(",2011,", ",,", 1);
    lines
        .push("Sample bad,2020,1.3,alpha,100,10,0.5,mean,1,5,growing,retail staff,original".into());
    let sheet = write_file(&dir, "x.csv", (lines.join("\n") + "\n").as_bytes());
    let (r, html, md) = report(
        &dir,
        "r",
        &[
            &sheet,
            "--skip-invalid",
            "--moderator",
            "year",
            "--score-spread",
        ],
    );
    for page in [&html, &md] {
        assert!(
            page.contains("Rows left out"),
            "no section of left-out rows"
        );
        // The invalid row (38) and the row without a year (5).
        assert!(page.contains("the moderator model"));
        assert!(page.contains("every analysis (an invalid row, skipped)"));
    }
    assert!(html.contains("<td>38</td>") && html.contains("<td>5</td>"));
    let headings: Vec<&str> = html
        .split("<h2 id=\"")
        .skip(1)
        .filter_map(|s| s.split_once("\">").map(|(_, rest)| rest))
        .filter_map(|s| s.split_once("</h2>").map(|(t, _)| t))
        .collect();
    for item in r["checklist"].as_array().unwrap() {
        if let Some(w) = item["where_in_report"].as_str() {
            assert!(
                headings.contains(&w),
                "checklist points to {w}, not in {headings:?}"
            );
        }
    }
    // Every link within report.md points to a heading's anchor as Markdown renderers
    // make it (lower case, spaces as hyphens, punctuation dropped), and within the page to
    // an element's id.
    let anchor = |t: &str| -> String {
        t.chars()
            .filter_map(|c| match c {
                ' ' => Some('-'),
                c if c.is_alphanumeric() || c == '-' || c == '_' => c.to_lowercase().next(),
                _ => None,
            })
            .collect()
    };
    let md_anchors: Vec<String> = md
        .lines()
        .filter_map(|l| {
            l.trim_start_matches('#')
                .strip_prefix(' ')
                .filter(|_| l.starts_with('#'))
        })
        .map(|t| anchor(&t.replace('\\', "")))
        .collect();
    let mut links = 0;
    for (i, _) in md.match_indices("](#") {
        let target = &md[i + 3..];
        let target = &target[..target.find(')').unwrap()];
        assert!(
            md_anchors.iter().any(|a| a == target),
            "report.md links to #{target}: {md_anchors:?}"
        );
        assert!(
            html.contains(&format!("id=\"{target}\"")),
            "report.html lacks #{target}"
        );
        links += 1;
    }
    assert!(links > 0, "the checklist links to the report's sections");
    // Markdown is plain Markdown: no HTML tags in it.
    let tag = md
        .match_indices('<')
        .find(|(i, _)| md[i + 1..].starts_with(|c: char| c.is_ascii_alphabetic() || c == '/'));
    assert!(
        tag.is_none(),
        "HTML in report.md near {:?}",
        tag.map(|(i, _)| &md[i..i + 20])
    );
}

/// The report's score-spread section is explain's model with the same moderators, says
/// which are in it, and its figure reads in SDs and coefficients.
#[test]
fn score_spread_is_one_model_everywhere() {
    let dir = scratch("spread-one");
    let sheet = demo("candor-benchmark.csv");
    let (r, html, _) = report(
        &dir,
        "s",
        &[&sheet, "--moderator", "year", "--score-spread"],
    );
    let e = json_ok(&[
        "explain",
        &sheet,
        "--moderator",
        "year",
        "--score-spread",
        "--json",
    ]);
    assert_eq!(r["explain"]["score_spread"], e["score_spread"]);
    let names: Vec<&str> = e["score_spread"]["coefficients"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    assert!(names.contains(&"year"), "{names:?}");
    assert!(html.contains("The model also holds year"));
    let text = stdout(&["explain", &sheet, "--moderator", "year", "--score-spread"]);
    assert!(text.contains("also in the model: year"), "{text}");
    let svg =
        std::fs::read_to_string(dir.join("s").join("figures").join("score-spread.svg")).unwrap();
    assert!(svg.contains("score SD (POMP metric)") && svg.contains("reliability coefficient"));
    // Ticks in coefficients (0.8) and SDs (20), not in log units.
    let texts: Vec<&str> = svg
        .split("<text")
        .skip(1)
        .filter_map(|t| t.split_once('>').map(|(_, rest)| rest))
        .filter_map(|t| t.split_once("</text>").map(|(inner, _)| inner.trim()))
        .collect();
    assert!(
        texts.contains(&"0.8") && texts.contains(&"20"),
        "ticks {texts:?}"
    );
}

/// Every F test prints both degrees of freedom; the report's command can be run as printed.
#[test]
fn tests_and_commands_print_whole() {
    let dir = scratch("whole");
    let sheet = demo("candor-benchmark.csv");
    let text = stdout(&[
        "explain",
        &sheet,
        "--moderator",
        "year",
        "--moderator",
        "language",
    ]);
    assert!(text.contains("F(2, 33) = "), "{text}");
    let (_, html, md) = report(
        &dir,
        "q",
        &[
            &sheet,
            "--moderator",
            "year",
            "--measure",
            "the Team Candor Scale",
        ],
    );
    assert!(html.contains("F(1, 34) = ") && md.contains("F(1, 34) = "));
    assert!(
        html.contains("--measure &#39;the Team Candor Scale&#39;"),
        "quoted command"
    );
}

/// Each default in --help is shown once.
#[test]
fn help_defaults_are_shown_once() {
    for cmd in [
        "pool", "explain", "check", "items", "correct", "report", "plan", "compare",
    ] {
        let help = stdout(&[cmd, "--help"]);
        for line in help.lines() {
            assert!(line.matches("[default").count() <= 1, "{cmd}: {line}");
        }
        // No option's text and clap both say the default.
        let joined = help.split_whitespace().collect::<Vec<_>>().join(" ");
        for d in [
            "[default: alpha]",
            "[default: reml]",
            "[default: knapp-hartung]",
        ] {
            assert!(joined.matches(d).count() <= 1, "{cmd}: {d} twice");
        }
    }
}

/// A benchmark's moderator values are given to `correct` as NAME=VALUE, like --at (the
/// older NAME:VALUE is read too).
#[test]
fn correct_takes_benchmark_values_like_at() {
    let sheet = demo("candor-benchmark.csv");
    let with = |spec: &str| {
        json_ok(&[
            "correct", "--r", "0.3", "--n", "150", "--rel-x", spec, "--rel-y", "0.85", "--json",
        ])
    };
    let a = with(&format!("sheet={sheet},at=year=2015"));
    let b = with(&format!("sheet={sheet},at=year:2015"));
    assert_eq!(a["corrected"], b["corrected"]);
    assert!(
        a["reliabilities"][0]["description"]
            .as_str()
            .unwrap()
            .contains("year = 2015")
    );
}

/// Levels that differ only in case or spaces are one level, with a warning naming the
/// rows; --at values match the same way.
#[test]
fn level_spellings_are_one_level() {
    let dir = scratch("levels");
    let text = std::fs::read_to_string(demo("candor-benchmark.csv")).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    lines[3] = lines[3].replace(",original", ",Original ");
    let sheet = write_file(&dir, "l.csv", (lines.join("\n") + "\n").as_bytes());
    let j = json_ok(&["explain", &sheet, "--moderator", "language", "--json"]);
    let levels = j["moderators"][0]["levels"].as_array().unwrap();
    assert_eq!(levels.len(), 2, "{levels:?}");
    assert!(warning_codes(&j).iter().any(|c| c == "level_spellings"));
    let w = j["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["code"] == "level_spellings")
        .unwrap();
    assert!(w["message"].as_str().unwrap().contains("row 4"), "{w}");
    let c = json_ok(&[
        "check",
        &sheet,
        "--coef",
        "0.8",
        "--n",
        "100",
        "--items",
        "10",
        "--moderator",
        "language",
        "--at",
        "LANGUAGE= Translated",
        "--json",
    ]);
    // The value as the sheet spells the level.
    assert_eq!(c["at"]["language"], "translated");
}

/// Numeric moderators are centred by default: the intercept is the expected value at the
/// moderator's mean, which equals the uncentred intercept plus the slope times the mean
/// (the same line); the slope does not change.
#[test]
fn intercepts_are_at_the_means_by_default() {
    let sheet = demo("candor-benchmark.csv");
    let c = json_ok(&["explain", &sheet, "--moderator", "year", "--json"]);
    let u = json_ok(&[
        "explain",
        &sheet,
        "--moderator",
        "year",
        "--uncentred",
        "--json",
    ]);
    assert_eq!(c["centring"], "means");
    assert_eq!(u["centring"], "none");
    let mean = c["moderators"][0]["centre"].as_f64().unwrap();
    // The demo's mean year, computed from the sheet here.
    let years: Vec<f64> = std::fs::read_to_string(&sheet)
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| l.split(',').nth(1).unwrap().parse().unwrap())
        .collect();
    assert_close(
        mean,
        years.iter().sum::<f64>() / years.len() as f64,
        1e-12,
        0.0,
        "mean",
    );
    let (bc, bu) = (&c["coefficients"], &u["coefficients"]);
    assert_json_close(&bc[1]["estimate"], &bu[1]["estimate"], 1e-9, 1e-12, "slope");
    let line = bu[0]["estimate"].as_f64().unwrap() + bu[1]["estimate"].as_f64().unwrap() * mean;
    assert_close(
        bc[0]["estimate"].as_f64().unwrap(),
        line,
        1e-9,
        1e-12,
        "intercept",
    );
    assert_json_close(&c["tau2"], &u["tau2"], 1e-8, 1e-12, "tau2");
}

/// Two nearly collinear moderators draw the collinearity warning.
#[test]
fn collinear_moderators_are_warned_about() {
    let dir = scratch("vif");
    let mut text = String::from("study,coef,n,items,x,z\n");
    for i in 0..14 {
        let x = i as f64;
        let z = 2.0 * x + if i % 2 == 0 { 0.05 } else { -0.05 };
        let coef = 0.7 + 0.01 * (i % 5) as f64;
        text.push_str(&format!("S{i},{coef},{},10,{x},{z}\n", 100 + 10 * i));
    }
    let sheet = write_file(&dir, "v.csv", text.as_bytes());
    let j = json_ok(&[
        "explain",
        &sheet,
        "--moderator",
        "x",
        "--moderator",
        "z",
        "--json",
    ]);
    assert!(warning_codes(&j).iter().any(|c| c == "collinearity"), "{j}");
}

/// coef_type can be a moderator and a --by column; --where analyses a subset and every
/// output says so.
#[test]
fn coefficient_types_and_subsets() {
    let sheet = demo("candor-benchmark.csv");
    let j = json_ok(&["explain", &sheet, "--moderator", "coef_type", "--json"]);
    assert_eq!(j["moderators"][0]["kind"], "categorical");
    let by = json_ok(&["explain", &sheet, "--by", "coef_type", "--json"]);
    assert_eq!(by["subgroups"]["groups"].as_array().unwrap().len(), 2);
    let all = json_ok(&["pool", &sheet, "--json"]);
    let sub = json_ok(&["pool", &sheet, "--where", "coef_type=alpha", "--json"]);
    assert_eq!(sub["input"]["subset"][0]["column"], "coef_type");
    assert_eq!(
        sub["k"].as_u64().unwrap() + sub["input"]["rows_outside_subset"].as_u64().unwrap(),
        all["k"].as_u64().unwrap()
    );
    assert!(
        sub["studies"]
            .as_array()
            .unwrap()
            .iter()
            .all(|s| s["coef_type"] == "alpha")
    );
    let text = stdout(&["pool", &sheet, "--where", "coef_type=alpha"]);
    let text = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(text.contains("subset coef_type = alpha"), "{text}");
    // A column the sheet does not have is an error naming the option.
    let out = relyard(&["pool", &sheet, "--where", "colour=red"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--where colour=red"));
}

/// compare treats a sheet as pool does: rows that are not alpha are problems of their
/// rows (left out and listed with --skip-invalid), duplicate labels are warned about.
#[test]
fn compare_reads_a_sheet_as_pool_does() {
    let dir = scratch("compare-sheet");
    let sheet = write_file(
        &dir,
        "c.csv",
        b"study,coef,n,items,coef_type\nA,0.8,100,10,alpha\nB,0.75,120,10,alpha\nC,0.7,90,10,omega\nA,0.72,80,10,alpha\n",
    );
    let out = relyard(&["compare", &sheet]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("row 4, column coef_type: omega is not coefficient alpha"),
        "{err}"
    );
    let j = json_ok(&["compare", &sheet, "--skip-invalid", "--json"]);
    assert_eq!(j["samples"].as_array().unwrap().len(), 3);
    assert_eq!(j["skipped_rows"][0]["row"], 4);
    assert!(warning_codes(&j).iter().any(|c| c == "duplicate_label"));
}

/// The sentence on score spread is the same in the summary, the paragraph and the JSON.
#[test]
fn the_spread_sentence_agrees_everywhere() {
    let sheet = demo("candor-benchmark.csv");
    let args = [
        "check",
        &sheet,
        "--coef",
        "0.70",
        "--n",
        "150",
        "--items",
        "10",
        "--sd",
        "0.45",
        "--sd-metric",
        "mean",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
    ];
    let mut with_json = args.to_vec();
    with_json.push("--json");
    let j = json_ok(&with_json);
    let sentence = j["score_spread"]["conclusion"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(sentence.contains("Score spread accounts for"), "{sentence}");
    assert!(j["paragraph"].as_str().unwrap().contains(&sentence));
    let text = stdout(&args)
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ");
    assert!(text.contains(&sentence), "{text}");
}

/// A p value never prints as 0: Feldt's test of two very different alphas has a lower
/// tail of about 1.3e-163 (scipy, tests/reference/fixtures/inference.json), which 1 minus
/// the upper tail loses.
#[test]
fn tiny_p_values_keep_their_value() {
    let f = fixture("inference.json");
    let e = &f["feldt_extreme"];
    let s = |i: usize| {
        let x = &e["samples"][i];
        format!("{},{},{}", x[0], x[1], x[2])
    };
    let j = json_ok(&["compare", "--sample", &s(0), "--sample", &s(1), "--json"]);
    let p = j["feldt"]["p"].as_f64().unwrap();
    assert_close(p, e["p"].as_f64().unwrap(), 1e-6, 0.0, "Feldt p");
    let text = stdout(&["compare", "--sample", &s(0), "--sample", &s(1)]);
    assert!(
        text.contains("p < 0.001") && !text.contains("p = 0.000"),
        "{text}"
    );
}

/// OLS slopes from a summary matrix have the exact t interval (statsmodels on the data
/// behind the matrix, tests/reference/fixtures/inference.json).
#[test]
fn ols_intervals_from_a_summary_are_exact() {
    let dir = scratch("ols-t");
    let o = &fixture("inference.json")["ols_summary"];
    let names: Vec<&str> = o["names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    let mut text = format!("variable,{}\n", names.join(","));
    for (i, row) in o["cov"].as_array().unwrap().iter().enumerate() {
        let cells: Vec<String> = floats(row).iter().map(|x| format!("{x:.17e}")).collect();
        text.push_str(&format!("{},{}\n", names[i], cells.join(",")));
    }
    let summary = write_file(&dir, "s.csv", text.as_bytes());
    let n = o["n"].to_string();
    let j = json_ok(&[
        "correct",
        "--summary",
        &summary,
        "--n",
        &n,
        "--outcome",
        "y",
        "--predictor",
        "x1",
        "--predictor",
        "x2",
        "--rel",
        "x1=0.8",
        "--rel",
        "x2=0.7",
        "--draws",
        "200",
        "--json",
    ]);
    for (i, c) in j["coefficients"].as_array().unwrap().iter().enumerate() {
        let want = floats(&o["ols_ci"][i]);
        let got = floats(&c["ols_ci"]);
        for k in 0..2 {
            assert_close(got[k], want[k], 1e-9, 1e-12, &format!("x{} ols_ci", i + 1));
        }
        assert_close(
            c["ols"].as_f64().unwrap(),
            o["ols"][i].as_f64().unwrap(),
            1e-9,
            0.0,
            "ols",
        );
    }
}

/// Item data: an identifier column is left out by itself and said so; a missing-value
/// code is missing; the scale score's mean and SD are the sum's and mean's (computed here
/// from the file).
#[test]
fn item_data_say_what_they_used() {
    let dir = scratch("items-new");
    let j = json_ok(&["items", &demo("candor-items.csv"), "--json"]);
    assert_eq!(j["identifiers_left_out"][0], "respondent");
    assert!(warning_codes(&j).iter().any(|c| c == "identifier_left_out"));
    let text = std::fs::read_to_string(demo("candor-items.csv")).unwrap();
    // Listwise: the respondents who answered every item.
    let sums: Vec<f64> = text
        .lines()
        .skip(1)
        .filter(|l| l.split(',').skip(1).all(|c| !c.trim().is_empty()))
        .map(|l| {
            l.split(',')
                .skip(1)
                .map(|c| c.trim().parse::<f64>().unwrap())
                .sum()
        })
        .collect();
    let n = sums.len() as f64;
    let mean = sums.iter().sum::<f64>() / n;
    let sd = (sums.iter().map(|s| (s - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    assert_close(
        j["score"]["sum_mean"].as_f64().unwrap(),
        mean,
        1e-12,
        0.0,
        "sum mean",
    );
    assert_close(
        j["score"]["sum_sd"].as_f64().unwrap(),
        sd,
        1e-9,
        0.0,
        "sum SD",
    );
    assert_close(
        j["score"]["mean_sd"].as_f64().unwrap(),
        sd / 10.0,
        1e-9,
        0.0,
        "mean SD",
    );
    let coded = write_file(
        &dir,
        "codes.csv",
        b"a,b,c\n1,2,3\n2,3,3\n3,-99,4\n4,4,5\n5,4,4\n2,2,2\n",
    );
    let j = json_ok(&["items", &coded, "--missing-code", "-99", "--json"]);
    assert_eq!(j["input"]["missing_cells"], 1);
    assert_eq!(j["n_used"], 5);
    // Three respondents and four items: no factor model, with the reason.
    let tiny = write_file(&dir, "tiny.csv", b"a,b,c,d\n1,2,3,4\n2,3,3,5\n4,4,5,5\n");
    let j = json_ok(&["items", &tiny, "--json"]);
    assert!(j["omega"].is_null() && j["fit"].is_null());
    assert!(
        j["factor_note"].as_str().unwrap().contains("singular"),
        "{j}"
    );
}

/// check warns when its range reaches below 0, as pool does.
#[test]
fn check_warns_when_its_range_reaches_below_zero() {
    let dir = scratch("below-zero");
    let mut text = String::from("study,coef,n,items\n");
    for (i, c) in [0.2, 0.9, 0.35, 0.85, 0.1, 0.75, 0.5, 0.95]
        .iter()
        .enumerate()
    {
        text.push_str(&format!("S{i},{c},80,6\n"));
    }
    let sheet = write_file(&dir, "b.csv", text.as_bytes());
    let j = json_ok(&[
        "check", &sheet, "--coef", "0.6", "--n", "80", "--items", "6", "--json",
    ]);
    assert!(j["pi"][0].as_f64().unwrap() < 0.0);
    assert!(warning_codes(&j).iter().any(|c| c == "range_below_zero"));
}

/// Warnings that change how a result reads also close the summary on stdout, so that a
/// summary saved to a file keeps them.
#[test]
fn reading_warnings_close_the_summary() {
    let dir = scratch("closing");
    let sheet = write_file(
        &dir,
        "three.csv",
        b"study,coef,n,items\nA,0.81,120,8\nB,0.74,95,8\nC,0.79,150,8\n",
    );
    let text = stdout(&["pool", &sheet]);
    let tail = text.rsplit("Read with care").next().unwrap();
    assert!(text.contains("Read with care"), "{text}");
    assert!(tail.contains("only 3 studies were pooled"), "{tail}");
}

/// The score-spread split uses one baseline (the model's value at the typical SD), the
/// unexplained rest is the expectation at the study's own SD minus its coefficient, and
/// an interval for a rise has the rise's sign.
#[test]
fn the_spread_split_has_one_baseline() {
    let run = |sd: &str| {
        json_ok(&[
            "check",
            &demo("candor-benchmark.csv"),
            "--coef",
            "0.70",
            "--n",
            "150",
            "--items",
            "10",
            "--sd",
            sd,
            "--sd-metric",
            "mean",
            "--scale-min",
            "1",
            "--scale-max",
            "5",
            "--json",
        ])
    };
    let j = run("0.62");
    let s = &j["score_spread"];
    let f = |k: &str| s[k].as_f64().unwrap();
    assert!((f("shortfall_from_typical_sd") - (f("expected_at_typical_sd") - 0.70)).abs() < 1e-12);
    assert!((f("unexplained_shortfall") - (f("expected_at_own_sd") - 0.70)).abs() < 1e-12);
    assert!(
        (f("shortfall_from_typical_sd") - f("explained_shortfall") - f("unexplained_shortfall"))
            .abs()
            < 1e-12
    );
    let conclusion = s["conclusion"].as_str().unwrap();
    let rest = format!("the rest, {:.2}", f("unexplained_shortfall"));
    assert!(conclusion.contains(&rest), "{conclusion}");
    // A wider spread than typical raises the expectation: its interval is positive.
    let j = run("0.80");
    let conclusion = j["score_spread"]["conclusion"].as_str().unwrap();
    let ci = conclusion.split("(CI ").nth(1).unwrap();
    assert!(!ci.starts_with('−') && !ci.starts_with('-'), "{conclusion}");
}

/// When every Monte Carlo draw is beyond ±1 there is no Monte Carlo interval.
#[test]
fn no_interval_from_impossible_draws() {
    let j = json_ok(&[
        "correct", "--r", "0.9", "--n", "50", "--rel-x", "0.6", "--rel-y", "0.7", "--json",
    ]);
    assert!(j["mc_ci"].is_null(), "{}", j["mc_ci"]);
    let text = stdout(&[
        "correct", "--r", "0.9", "--n", "50", "--rel-x", "0.6", "--rel-y", "0.7",
    ]);
    assert!(text.contains("none: 100.0% of"), "{text}");
}

/// --where compares numbers as numbers, and a value no row has is named with the
/// column's values.
#[test]
fn subsets_match_numbers_and_name_missing_values() {
    let sheet = demo("candor-benchmark.csv");
    let a = json_ok(&["pool", &sheet, "--where", "items=10", "--json"]);
    let b = json_ok(&["pool", &sheet, "--where", "items=10.0", "--json"]);
    assert_eq!(a["k"], b["k"]);
    assert!(a["k"].as_u64().unwrap() > 2);
    let out = relyard(&["pool", &sheet, "--where", "population=doctors"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("no row has population = doctors") && err.contains("hospital nurses"),
        "{err}"
    );
    // The subset is named in the paragraph for the paper.
    assert!(
        a["paragraph"].as_str().unwrap().contains("with items = 10"),
        "{}",
        a["paragraph"]
    );
}

/// The check paragraph cites what it lists, and names a meta-regression as one.
#[test]
fn the_check_paragraph_cites_what_it_lists() {
    let sheet = demo("candor-benchmark.csv");
    let j = json_ok(&[
        "check",
        &sheet,
        "--coef",
        "0.7",
        "--n",
        "150",
        "--items",
        "10",
        "--moderator",
        "year",
        "--at",
        "year=2020",
        "--json",
    ]);
    let text = j["paragraph"].as_str().unwrap();
    for r in j["references"].as_array().unwrap() {
        let first_author = r.as_str().unwrap().split(',').next().unwrap();
        assert!(
            text.contains(first_author),
            "{first_author} is listed, not cited: {text}"
        );
    }
    assert!(text.contains("mixed-effects meta-regression"), "{text}");
}

/// The intercept of a model with categorical moderators only is at the reference levels.
#[test]
fn the_intercept_says_where_it_is() {
    let text = stdout(&[
        "explain",
        &demo("candor-benchmark.csv"),
        "--moderator",
        "language",
    ]);
    assert!(
        text.contains("intercept (at the reference levels)"),
        "{text}"
    );
    let text = stdout(&["explain", &demo("candor-benchmark.csv"), "--by", "language"]);
    assert!(text.contains("random effects; τ² by"), "{text}");
    assert!(!text.contains("all terms together"), "{text}");
}

/// A group whose expected range reaches below 0 is warned about, naming the group.
#[test]
fn a_group_range_below_zero_is_warned_about() {
    let dir = scratch("group-below");
    let sheet = write_file(
        &dir,
        "g.csv",
        b"study,coef,n,items,site\nA,0.9,100,10,x\nB,0.2,100,10,x\nC,0.85,100,10,x\nD,0.5,100,10,x\nE,0.8,100,10,y\nF,0.82,100,10,y\nG,0.79,100,10,y\n",
    );
    let j = json_ok(&["explain", &sheet, "--by", "site", "--json"]);
    let w: Vec<&str> = j["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|w| w["code"] == "range_below_zero")
        .map(|w| w["message"].as_str().unwrap())
        .collect();
    assert!(w.iter().any(|m| m.contains("site = x")), "{j}");
}

/// Answers that happen to run 2, 3, 4, … are not a respondent number (one starts at 0 or
/// 1 and runs for at least five rows).
#[test]
fn short_runs_are_not_identifiers() {
    let dir = scratch("short-run");
    let items = write_file(
        &dir,
        "i.csv",
        b"a,b,c,d\n2,3,5,1\n3,1,5,4\n4,4,3,2\n5,2,4,5\n6,5,4,4\n",
    );
    let j = json_ok(&["items", &items, "--json"]);
    assert!(
        !warning_codes(&j).iter().any(|c| c == "identifier_column"),
        "{j}"
    );
}
