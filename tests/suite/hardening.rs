//! Nothing lost, nothing overwritten, nothing unbounded: hostile and unusual inputs and
//! folders. Large or hostile files are made here, in the test, and kept small enough to
//! run fast.

use crate::common::*;
use std::path::{Path, PathBuf};

/// A small report (two studies) into `out`, with extra arguments.
fn report(out: &Path, extra: &[&str]) -> std::process::Output {
    let sheet = write_file(
        out.parent().unwrap(),
        "sheet.csv",
        b"study,coef,n,items\nA,0.81,120,8\nB,0.74,95,8\nC,0.78,150,8\n",
    );
    let mut args = vec!["report", &sheet, "--out", out.to_str().unwrap()];
    args.extend_from_slice(extra);
    relyard(&args)
}

fn stderr(o: &std::process::Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn files_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .map(|r| {
            r.flatten()
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect()
        })
        .unwrap_or_default();
    v.sort();
    v
}

/// A link planted where the report writes is refused, with or without --force, and the
/// file it points to is untouched.
#[cfg(unix)]
#[test]
fn links_inside_the_report_folder_are_never_written_through() {
    let dir = scratch("links");
    let out = dir.join("out");
    std::fs::create_dir_all(&out).unwrap();
    let victim = dir.join("victim.html");
    std::fs::write(&victim, "precious").unwrap();
    std::os::unix::fs::symlink(&victim, out.join("report.html")).unwrap();
    for force in [false, true] {
        let o = report(&out, if force { &["--force"] } else { &[] });
        assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
        assert!(stderr(&o).contains("symbolic link"), "{}", stderr(&o));
    }
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");

    // A figures folder that is a link to somewhere else: refused, nothing written there.
    let out2 = dir.join("out2");
    std::fs::create_dir_all(&out2).unwrap();
    let elsewhere = dir.join("elsewhere");
    std::fs::create_dir_all(&elsewhere).unwrap();
    std::fs::write(elsewhere.join("forest.svg"), "someone's figure").unwrap();
    std::os::unix::fs::symlink(&elsewhere, out2.join("figures")).unwrap();
    let o = report(&out2, &["--force"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("figures"), "{}", stderr(&o));
    assert_eq!(files_in(&elsewhere), ["forest.svg"]);
    assert_eq!(
        std::fs::read_to_string(elsewhere.join("forest.svg")).unwrap(),
        "someone's figure"
    );
    assert!(!out2.join("report.html").exists());
}

/// --force replaces and removes only what an earlier report wrote (its manifest lists
/// it); a file of the user's own, even one named like ours, is never touched.
#[test]
fn force_touches_only_files_an_earlier_report_wrote() {
    let dir = scratch("manifest");
    let out = dir.join("out");
    run_ok_output(report(&out, &[]));
    let manifest = std::fs::read_to_string(out.join(".relyard-manifest.json")).unwrap();
    assert!(manifest.contains("report.html") && manifest.contains("figures/forest.svg"));
    // The user's own files, one named like a figure we might write.
    std::fs::write(out.join("figures").join("moderator-mine.png"), "mine").unwrap();
    std::fs::write(out.join("notes.txt"), "mine too").unwrap();
    // An earlier report's figure this one does not have: listed, so removed with --force.
    let old = out.join("figures").join("moderator-year.svg");
    std::fs::write(&old, "<svg/>").unwrap();
    let listed = manifest.replace(
        "\"figures/forest.png\"",
        "\"figures/forest.png\",\n    \"figures/moderator-year.svg\"",
    );
    std::fs::write(out.join(".relyard-manifest.json"), listed).unwrap();
    run_ok_output(report(&out, &["--force"]));
    assert!(!old.exists(), "a listed file this report lacks is removed");
    assert_eq!(
        std::fs::read_to_string(out.join("figures").join("moderator-mine.png")).unwrap(),
        "mine"
    );
    assert_eq!(
        std::fs::read_to_string(out.join("notes.txt")).unwrap(),
        "mine too"
    );
    // A report.md of the user's own (not listed) is not replaced, even with --force.
    let manifest = std::fs::read_to_string(out.join(".relyard-manifest.json")).unwrap();
    std::fs::write(
        out.join(".relyard-manifest.json"),
        manifest.replace("\"report.md\",", ""),
    )
    .unwrap();
    std::fs::write(out.join("report.md"), "my own notes").unwrap();
    let o = report(&out, &["--force"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("not written by a relyard report"),
        "{}",
        stderr(&o)
    );
    assert_eq!(
        std::fs::read_to_string(out.join("report.md")).unwrap(),
        "my own notes"
    );
}

fn run_ok_output(o: std::process::Output) {
    assert!(o.status.success(), "{}", stderr(&o));
}

/// A killed run's temporary files are cleaned by the next run; a folder an earlier report
/// left (its manifest written) is replaced with --force, and without it the message says
/// whose files are in the way.
#[test]
fn a_killed_run_leaves_nothing_that_blocks_the_next() {
    let dir = scratch("killed");
    let out = dir.join("out");
    run_ok_output(report(&out, &[]));
    let stale: PathBuf = out.join(".relyard-0-00000000deadbeef.tmp");
    std::fs::write(&stale, "half a page").unwrap();
    let figure_stale = out.join("figures").join(".relyard-0-00000000cafef00d.tmp");
    std::fs::write(&figure_stale, "half a figure").unwrap();
    let o = report(&out, &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("written by an earlier report") && stderr(&o).contains("--force"),
        "{}",
        stderr(&o)
    );
    run_ok_output(report(&out, &["--force"]));
    assert!(!stale.exists() && !figure_stale.exists());
    let left: Vec<String> = files_in(&out)
        .into_iter()
        .chain(files_in(&out.join("figures")))
        .filter(|f| f.ends_with(".tmp"))
        .collect();
    assert!(left.is_empty(), "{left:?}");
}

/// Writing a template over a link is refused.
#[cfg(unix)]
#[test]
fn template_never_writes_through_a_link() {
    let dir = scratch("template-link");
    let victim = dir.join("victim.csv");
    std::fs::write(&victim, "precious").unwrap();
    let target = dir.join("sheet.csv");
    std::os::unix::fs::symlink(&victim, &target).unwrap();
    let o = relyard(&["template", target.to_str().unwrap(), "--force"]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");
}

/// An unclosed quote swallows every later line into one cell: each reader says so at the
/// row where the quote opened, instead of reading fewer rows in silence.
#[test]
fn an_unclosed_quote_is_an_error_at_its_row() {
    let dir = scratch("quotes");
    let sheet = write_file(
        &dir,
        "sheet.csv",
        b"study,coef,n,items\nA,0.81,120,8\n\"B,0.74,95,8\nC,0.78,150,8\nD,0.7,90,8\nE,0.8,100,8\n",
    );
    for extra in [&[][..], &["--skip-invalid"][..]] {
        let mut args = vec!["pool", sheet.as_str()];
        args.extend_from_slice(extra);
        let o = relyard(&args);
        assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
        assert!(
            stderr(&o).contains("row 3") && stderr(&o).contains("never closed"),
            "{}",
            stderr(&o)
        );
    }
    let items = write_file(
        &dir,
        "items.csv",
        b"q1,q2,q3\n1,2,3\n2,\"3,4\n3,4,5\n4,5,5\n5,5,4\n",
    );
    let o = relyard(&["items", &items]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("row 3") && stderr(&o).contains("never closed"));
    let data = write_file(
        &dir,
        "data.csv",
        b"x,y\n1,2\n2,3\n3,\"5\n4,4\n5,6\n6,7\n7,9\n8,8\n",
    );
    let o = relyard(&[
        "correct",
        "--data",
        &data,
        "--outcome",
        "y",
        "--predictor",
        "x",
        "--rel",
        "x=0.8",
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("row 4") && stderr(&o).contains("never closed"));
    let summary = write_file(&dir, "summary.csv", b",x,y\nx,1,0.3\n\"y,0.3,1\n");
    let o = relyard(&[
        "correct",
        "--summary",
        &summary,
        "--n",
        "100",
        "--outcome",
        "y",
        "--predictor",
        "x",
        "--rel",
        "x=0.8",
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("row 3") && stderr(&o).contains("never closed"));
    // A quoted cell with a line break in it, properly closed, is fine.
    let fine = write_file(
        &dir,
        "fine.csv",
        b"study,coef,n,items\n\"A, the\nfirst\",0.81,120,8\nB,0.74,95,8\nC,0.78,150,8\n",
    );
    let j = json_ok(&["pool", &fine, "--json"]);
    assert_eq!(j["k"], 3);
}

/// Counts at the edge of what a machine holds (2^64 − 1) are refused with exit 2 and the
/// bound, for every command that takes them, before anything is allocated.
#[test]
fn absurd_counts_are_refused_with_their_bound() {
    let dir = scratch("counts");
    let sheet = write_file(
        &dir,
        "sheet.csv",
        b"study,coef,n,items,sd\nA,0.81,120,8,5\nB,0.74,95,8,4\nC,0.78,150,8,6\nD,0.70,80,8,3\n",
    );
    let items = write_file(&dir, "items.csv", b"a,b,c\n1,2,3\n2,3,3\n3,3,4\n4,4,5\n");
    let huge = "18446744073709551615";
    let correlation = [
        "correct", "--r", "0.3", "--n", "100", "--rel-x", "0.8", "--rel-y", "0.7",
    ];
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (
            [&correlation[..], &["--draws", huge]].concat(),
            "1,000,000 draws",
        ),
        (
            [&correlation[..], &["--grid", huge]].concat(),
            "101 grid points",
        ),
        (
            vec![
                "explain",
                &sheet,
                "--moderator",
                "sd",
                "--permutations",
                huge,
            ],
            "1,000,000 permutations",
        ),
        (
            vec!["items", &items, "--bootstrap", huge],
            "100,000 bootstrap",
        ),
        (
            vec![
                "report",
                &sheet,
                "--out",
                dir.to_str().unwrap(),
                "--coef",
                "0.8",
                "--n",
                "90",
                "--r",
                "0.3",
                "--rel-y",
                "0.8",
                "--draws",
                huge,
            ],
            "1,000,000 draws",
        ),
    ];
    for (args, bound) in cases {
        let o = relyard(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(bound), "{args:?}: {}", stderr(&o));
        assert!(!stderr(&o).contains("panicked"), "{}", stderr(&o));
    }
}

/// Endless input (a device that never ends) and a line longer than the limit are refused
/// by every reader with exit 2, the line named, before the line is held in memory.
#[test]
fn endless_and_overlong_lines_are_refused() {
    let dir = scratch("long-lines");
    let mut long = b"a,b\n1,2\n".to_vec();
    long.extend(std::iter::repeat_n(
        b'7',
        relyard::limits::MAX_LINE_BYTES + 10,
    ));
    long.extend_from_slice(b",3\n4,5\n");
    let long = write_file(&dir, "long.csv", &long);
    let mut sources = vec![long.clone()];
    if cfg!(unix) && Path::new("/dev/zero").exists() {
        sources.push("/dev/zero".into());
    }
    for source in &sources {
        let runs: Vec<Vec<&str>> = vec![
            vec!["pool", source],
            vec!["items", source],
            vec![
                "correct",
                "--data",
                source,
                "--outcome",
                "a",
                "--predictor",
                "b",
                "--rel",
                "b=0.8",
            ],
            vec![
                "correct",
                "--summary",
                source,
                "--n",
                "100",
                "--outcome",
                "a",
                "--predictor",
                "b",
                "--rel",
                "b=0.8",
            ],
        ];
        for args in runs {
            let o = relyard(&args);
            assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
            assert!(
                stderr(&o).contains("longer than 16 MB"),
                "{args:?}: {}",
                stderr(&o)
            );
            if *source == long {
                assert!(
                    stderr(&o).contains("3"),
                    "{args:?}: the line is named: {}",
                    stderr(&o)
                );
            }
        }
    }
}

/// A categorical moderator or a benchmark per level with thousands of levels is refused
/// at once (not after minutes of a design that grows with the cube of the levels), the
/// column and its number of levels named; within the bound the levels are read in time
/// linear in the rows.
#[test]
fn many_levels_are_refused_quickly() {
    let dir = scratch("levels");
    let mut text = String::from("study,coef,n,items,site\n");
    for i in 0..5000 {
        text.push_str(&format!("S{i},0.{},{},8,L{i}\n", 70 + i % 20, 60 + i % 200));
    }
    let sheet = write_file(&dir, "many.csv", text.as_bytes());
    for args in [
        vec!["explain", &sheet, "--moderator", "site"],
        vec!["explain", &sheet, "--by", "site"],
    ] {
        let start = std::time::Instant::now();
        let o = relyard(&args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        assert!(
            stderr(&o).contains("5,000 different values"),
            "{}",
            stderr(&o)
        );
        assert!(stderr(&o).contains("200 levels"), "{}", stderr(&o));
        assert!(start.elapsed().as_secs() < 10, "refused at once");
    }
    // At the bound it runs.
    let mut text = String::from("study,coef,n,items,site\n");
    for i in 0..600 {
        text.push_str(&format!(
            "S{i},0.{},{},8,L{}\n",
            70 + i % 20,
            60 + i % 200,
            i % 200
        ));
    }
    let sheet = write_file(&dir, "bound.csv", text.as_bytes());
    let o = relyard(&["explain", &sheet, "--by", "site", "--json"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
}

/// Wide item files: above the column bound the file is refused at once (the header is
/// checked in time linear in its columns); above the factor-model bound, alpha and the
/// item statistics are computed and omega is left out with the reason.
#[test]
fn wide_item_files_are_bounded() {
    let dir = scratch("wide");
    let wide = |k: usize, n: usize| {
        let mut t: String = (1..=k)
            .map(|i| format!("q{i}"))
            .collect::<Vec<_>>()
            .join(",");
        t.push('\n');
        for r in 0..n {
            let row: Vec<String> = (0..k)
                .map(|i| ((i * 7 + r * 3) % 5 + 1).to_string())
                .collect();
            t.push_str(&row.join(","));
            t.push('\n');
        }
        t
    };
    let too_wide = write_file(&dir, "too-wide.csv", wide(20_001, 3).as_bytes());
    let o = relyard(&["items", &too_wide]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("20,001 columns"), "{}", stderr(&o));
    assert!(stderr(&o).contains("20,000"), "{}", stderr(&o));

    let many = write_file(&dir, "many-items.csv", wide(1_001, 6).as_bytes());
    let o = relyard(&["items", &many, "--json"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert!(v["alpha"].is_number(), "{v}");
    assert_eq!(v["item_statistics"].as_array().map(Vec::len), Some(1_001));
    assert!(v["omega"].is_null(), "{v}");
    assert!(
        v["factor_note"]
            .as_str()
            .is_some_and(|n| n.contains("more than 1,000")),
        "omega left out with its reason: {}",
        v["factor_note"]
    );
}

/// `template out.xlsx` writes a real workbook (read back by the workbook reader, the
/// dictionary on its second worksheet, no CSV beside it); other workbook extensions are
/// refused rather than filled with CSV text.
#[test]
fn template_workbooks_are_workbooks() {
    let dir = scratch("template-xlsx");
    let out = dir.join("sheet.xlsx");
    let o = relyard(&["template", out.to_str().unwrap(), "--extra-column", "stage"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let bytes = std::fs::read(&out).unwrap();
    assert!(relyard::sheet::is_workbook(&bytes));
    assert!(!dir.join("sheet-dictionary.csv").exists());
    let o = relyard(&["pool", out.to_str().unwrap()]);
    assert!(
        stderr(&o).contains("no data rows"),
        "read as a workbook: {}",
        stderr(&o)
    );
    let o = relyard(&["pool", out.to_str().unwrap(), "--worksheet", "Dictionary"]);
    assert_eq!(o.status.code(), Some(2));
    for ext in ["ods", "xls", "XLSM"] {
        let p = dir.join(format!("sheet.{ext}"));
        let o = relyard(&["template", p.to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
        assert!(stderr(&o).contains(".csv or .xlsx"), "{}", stderr(&o));
        assert!(!p.exists());
    }
}
