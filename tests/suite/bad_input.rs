//! Malformed coding sheets: every one gives exit status 2 and a message that names the
//! row (as a spreadsheet numbers it, header = row 1) and the column — never a panic.

use crate::common::*;

struct Case {
    name: &'static str,
    bytes: Vec<u8>,
    args: &'static [&'static str],
    /// Fragments that must all appear in the error message.
    expect: &'static [&'static str],
}

fn case(
    name: &'static str,
    text: &str,
    args: &'static [&'static str],
    expect: &'static [&'static str],
) -> Case {
    Case {
        name,
        bytes: text.as_bytes().to_vec(),
        args,
        expect,
    }
}

fn cases() -> Vec<Case> {
    let long_label = "x".repeat(5000);
    let mut v = vec![
        case(
            "missing coef column",
            "study,n,items\nA,100,6\nB,90,6\n",
            &[],
            &["row 1", "coef column"],
        ),
        case(
            "coefficient of 1 or more",
            "study,coef,n,items\nA,0.8,100,6\nB,1.07,100,6\n",
            &[],
            &["row 3, column coef: 1.07 is not a reliability coefficient (it must be below 1)"],
        ),
        case(
            "n below 3",
            "study,coef,n,items\nA,0.8,2,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column n:", "n ≥ 3"],
        ),
        case(
            "one item",
            "study,coef,n,items\nA,0.8,100,1\nB,0.7,50,6\n",
            &[],
            &["row 2, column items:", "at least 2"],
        ),
        case(
            "text in a numeric column",
            "study,coef,n,items\nA,0.8,many,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column n:", "\"many\" is not a number"],
        ),
        case("empty file", "", &[], &["row 1", "empty"]),
        case(
            "header only",
            "study,coef,n,items\n",
            &[],
            &["row 1", "no data rows"],
        ),
        case(
            "duplicated header",
            "study,coef,n,coef\nA,0.8,100,0.7\nB,0.7,50,0.6\n",
            &[],
            &["row 1", "\"coef\" appears twice"],
        ),
        case(
            "too few cells",
            "study,coef,n,items\nA,0.8,100,6\nB,0.7,50\n",
            &[],
            &["row 3", "3 cells but the header has 4 columns", "4 columns"],
        ),
        case(
            "too many cells",
            "study,coef,n,items\nA,0.8,100,6,extra\nB,0.7,50,6\n",
            &[],
            &["row 2", "5 cells", "only 4 columns"],
        ),
        case(
            "NaN",
            "study,coef,n,items\nA,NaN,100,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column coef:", "not a number"],
        ),
        case(
            "infinity",
            "study,coef,n,items\nA,0.8,inf,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column n:", "not a finite number"],
        ),
        case(
            "huge sample size",
            "study,coef,n,items\nA,0.8,1e300,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column n:", "larger than any plausible"],
        ),
        case(
            "number too large for a float",
            "study,coef,n,items\nA,1e400,100,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column coef:", "too large"],
        ),
        case(
            "fractional n",
            "study,coef,n,items\nA,0.8,120.5,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column n:", "not a whole number"],
        ),
        case(
            "missing coefficient",
            "study,coef,n,items\nA,,100,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column coef:", "missing"],
        ),
        case(
            "unknown coefficient type",
            "study,coef,n,items,coef_type\nA,0.8,100,6,glb\nB,0.7,50,6,alpha\n",
            &[],
            &["row 2, column coef_type:", "\"glb\""],
        ),
        case(
            "sd not positive",
            "study,coef,n,items,sd\nA,0.8,100,6,-2\nB,0.7,50,6,3\n",
            &[],
            &["row 2, column sd:", "above 0"],
        ),
        case(
            "scale bounds reversed",
            "study,coef,n,items,scale_min,scale_max\nA,0.8,100,6,5,1\nB,0.7,50,6,1,5\n",
            &[],
            &["row 2, column scale_max:"],
        ),
        case(
            "retest correlation of -1",
            "study,coef,n,coef_type\nA,-1,100,retest\nB,0.7,50,retest\n",
            &[],
            &["row 2, column coef:", "above −1"],
        ),
        case(
            "retest with n of 3",
            "study,coef,n,coef_type\nA,0.8,3,retest\nB,0.7,50,retest\n",
            &[],
            &["row 2, column n:", "n ≥ 4"],
        ),
        case(
            "negative variance with --transform none",
            "study,coef,var\nA,0.3,-0.01\nB,0.2,0.02\n",
            &["--transform", "none"],
            &["row 2, column var:", "above 0"],
        ),
        case(
            "no var column with --transform none",
            "study,coef\nA,0.3\nB,0.2\n",
            &["--transform", "none"],
            &["row 1", "var"],
        ),
        case(
            "mapped column absent",
            "study,alpha,n,items\nA,0.8,100,6\nB,0.7,50,6\n",
            &["--column", "coef=reported_alpha"],
            &["row 1", "--column coef=reported_alpha"],
        ),
        case(
            "unnamed column with data",
            "study,coef,n,items,\nA,0.8,100,6,oops\nB,0.7,50,6,\n",
            &[],
            &["row 2, column 5 (unnamed):", "no name"],
        ),
        case(
            "missing items for bonett",
            "study,coef,n\nA,0.8,100\nB,0.7,50\n",
            &[],
            &["row 1", "items"],
        ),
        case(
            "thousands separator in a tab sheet (issue 2 review)",
            "study\tcoef\tn\titems\nA\t0.81\t10,000\t6\nB\t0.75\t300\t6\n",
            &[],
            &["row 2, column n:", "thousands separator"],
        ),
        case(
            "thousands separator with a point",
            "study;coef;n;items\nA;0,81;12.000;6\nB;0,75;300;6\n",
            &[],
            &["row 2, column n:", "thousands separator"],
        ),
        case(
            "coefficient below -1",
            "study,coef,n,items\nA,-1e300,100,6\nB,0.7,50,6\n",
            &[],
            &["row 2, column coef:", "above −1"],
        ),
    ];
    v.push(Case {
        name: "very long label",
        bytes: format!("study,coef,n,items\n{long_label},0.8,100,6\nB,0.7,50,6\n").into_bytes(),
        args: &[],
        expect: &["row 2, column study:", "5000 characters"],
    });
    v.push(Case {
        name: "BOM and a bad value",
        bytes: b"\xEF\xBB\xBFstudy,coef,n,items\nA,1.5,100,6\nB,0.7,50,6\n".to_vec(),
        args: &[],
        expect: &["row 2, column coef:", "below 1"],
    });
    v.push(Case {
        name: "bytes that are not UTF-8",
        bytes: b"study,coef,n,items\nA\xFF\xFE,0.8,100,6\nB,0.7,50,6\n".to_vec(),
        args: &[],
        expect: &["row 2, column study:", "UTF-8"],
    });
    v.push(Case {
        name: "header that is not UTF-8",
        bytes: b"study,co\xFFef,n,items\nA,0.8,100,6\n".to_vec(),
        args: &[],
        expect: &["row 1", "UTF-8"],
    });
    v.push(Case {
        name: "UTF-16 file",
        bytes: b"\xFF\xFEs\x00t\x00".to_vec(),
        args: &[],
        expect: &["row 1", "UTF-16"],
    });
    v
}

#[test]
fn malformed_sheets_give_status_2_and_a_located_message() {
    let dir = scratch("bad-input");
    let all = cases();
    assert!(all.len() >= 15);
    for (i, c) in all.iter().enumerate() {
        let path = write_file(&dir, &format!("case{i}.csv"), &c.bytes);
        let mut args = vec!["pool", path.as_str()];
        args.extend_from_slice(c.args);
        let out = relyard(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(
            out.status.code(),
            Some(2),
            "case {:?}: status {:?}\n{err}",
            c.name,
            out.status
        );
        assert!(
            !err.contains("panicked"),
            "case {:?} panicked:\n{err}",
            c.name
        );
        assert!(
            err.contains(&path),
            "case {:?}: the message does not name the file:\n{err}",
            c.name
        );
        for frag in c.expect {
            assert!(
                err.contains(frag),
                "case {:?}: missing {frag:?} in:\n{err}",
                c.name
            );
        }
        assert!(
            out.stdout.is_empty(),
            "case {:?}: wrote results despite the error",
            c.name
        );
    }
}

/// Every problem of a sheet is listed, not only the first.
#[test]
fn all_problems_are_listed() {
    let dir = scratch("all-problems");
    let path = write_file(
        &dir,
        "s.csv",
        b"study,coef,n,items\nA,1.2,100,6\nB,0.8,x,6\nC,0.7,50,1\nD,0.75,80,6\nE,x,2,1\n",
    );
    let out = relyard(&["pool", &path]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2));
    // A row that fails to parse is still checked for its other problems (issue 2 review).
    assert!(err.contains("6 problems found"), "{err}");
    for frag in [
        "row 2, column coef",
        "row 3, column n",
        "row 4, column items",
        "row 6, column coef: \"x\"",
        "row 6, column n: a sample size of 2",
        "row 6, column items: 1 item is too few",
    ] {
        assert!(err.contains(frag), "missing {frag} in {err}");
    }
}

/// Arbitrary bytes never crash the reader (a deterministic sweep; the fuzz targets of a
/// later issue go further).
#[test]
fn arbitrary_bytes_never_panic() {
    let dir = scratch("noise");
    let mut state = 0x1234_5678_9abc_def0u64;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    let alphabet = b"study,coef;n\titems\"\n\r0.8-1e5NA .\xFF\xEF\xBB\xBF";
    for i in 0..40 {
        let len = (next() % 300) as usize;
        let bytes: Vec<u8> = (0..len)
            .map(|_| alphabet[(next() % alphabet.len() as u64) as usize])
            .collect();
        let path = write_file(&dir, &format!("n{i}.csv"), &bytes);
        let out = relyard(&["pool", &path]);
        let code = out.status.code();
        assert!(
            matches!(code, Some(0) | Some(2)),
            "noise {i}: status {code:?}\n{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}
