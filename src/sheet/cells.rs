//! Reading single cells: missing-value markers, numbers (with a decimal comma where
//! the sheet's delimiter allows it) and whole numbers.

/// True for a cell that means "no value": empty, `NA`, `N/A` or `.`.
pub fn is_missing(cell: &str) -> bool {
    let t = cell.trim();
    t.is_empty() || t == "." || t.eq_ignore_ascii_case("na") || t.eq_ignore_ascii_case("n/a")
}

/// Shorten a cell for quoting in a message.
pub fn quote(cell: &str) -> String {
    const MAX: usize = 40;
    let t = cell.trim();
    if t.chars().count() > MAX {
        let short: String = t.chars().take(MAX).collect();
        format!("\"{short}…\"")
    } else {
        format!("\"{t}\"")
    }
}

/// Parse a number. With `decimal_comma`, a cell such as `0,85` reads as 0.85 (sheets
/// saved with a semicolon or tab delimiter often use the comma as decimal mark).
pub fn parse_number(cell: &str, decimal_comma: bool) -> Result<f64, String> {
    let t = cell.trim();
    let owned;
    let text =
        if decimal_comma && t.contains(',') && !t.contains('.') && t.matches(',').count() == 1 {
            owned = t.replace(',', ".");
            owned.as_str()
        } else {
            t
        };
    let bare = text.trim_start_matches(['+', '-']);
    if bare.eq_ignore_ascii_case("nan") {
        return Err(format!("{} is not a number", quote(t)));
    }
    if bare.eq_ignore_ascii_case("inf") || bare.eq_ignore_ascii_case("infinity") {
        return Err(format!("{} is not a finite number", quote(t)));
    }
    // Only plain decimal notation: digits, one point, an optional exponent.
    let plain = text
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'));
    let value: f64 = if plain { text.parse().ok() } else { None }.ok_or_else(|| {
        let hint = if t.ends_with('%') {
            " (give it as a proportion, without %)"
        } else if t.contains(',') && !decimal_comma {
            " (write numbers without thousands separators, with a point as decimal mark)"
        } else {
            ""
        };
        format!("{} is not a number{hint}", quote(t))
    })?;
    if !value.is_finite() {
        return Err(format!("{} is too large to be a number here", quote(t)));
    }
    Ok(value)
}

/// Parse a whole number between `min` and `max`.
pub fn parse_whole(
    cell: &str,
    decimal_comma: bool,
    min: u64,
    max: u64,
    what: &str,
) -> Result<u64, String> {
    if looks_grouped(cell.trim()) {
        return Err(format!(
            "{} looks like a number with a thousands separator, which is ambiguous (it could \
             be a decimal mark); write it without separators, e.g. {}",
            quote(cell),
            cell.trim().replace([',', '.'], "")
        ));
    }
    let x = parse_number(cell, decimal_comma)?;
    if x.fract() != 0.0 {
        return Err(format!(
            "{} is not a whole number ({what} counts)",
            quote(cell)
        ));
    }
    if x < min as f64 {
        return Err(format!(
            "{} is below the smallest possible {what} of {min}",
            quote(cell)
        ));
    }
    if x > max as f64 {
        return Err(format!(
            "{} is larger than any plausible {what} (at most {max})",
            quote(cell)
        ));
    }
    Ok(x as u64)
}

/// True for text such as `10,000`, `1.200` or `12,345,678`: one to three digits, then
/// groups of a separator and exactly three digits.
fn looks_grouped(t: &str) -> bool {
    let t = t.trim_start_matches(['+', '-']);
    if !t.contains([',', '.']) {
        return false;
    }
    let mut parts = t.split([',', '.']);
    let Some(first) = parts.next() else {
        return false;
    };
    (1..=3).contains(&first.len())
        && first.chars().all(|c| c.is_ascii_digit())
        && parts.all(|g| g.len() == 3 && g.chars().all(|c| c.is_ascii_digit()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers() {
        assert_eq!(parse_number(" 0.85 ", false), Ok(0.85));
        assert_eq!(parse_number("0,85", true), Ok(0.85));
        assert!(
            parse_number("0,85", false)
                .unwrap_err()
                .contains("separators")
        );
        assert_eq!(parse_number("-1e-3", false), Ok(-0.001));
        assert!(parse_number("NaN", false).is_err());
        assert!(parse_number("inf", false).unwrap_err().contains("finite"));
        assert!(
            parse_number("1e400", false)
                .unwrap_err()
                .contains("too large")
        );
        assert!(
            parse_number("85%", false)
                .unwrap_err()
                .contains("proportion")
        );
        assert!(parse_number("abc", false).is_err());
        assert!(parse_number("0x10", false).is_err());
    }

    #[test]
    fn whole_numbers() {
        assert_eq!(parse_whole("120", false, 1, 1000, "sample size"), Ok(120));
        assert!(parse_whole("120.5", false, 1, 1000, "sample size").is_err());
        assert!(parse_whole("0", false, 1, 1000, "sample size").is_err());
        assert!(parse_whole("1e12", false, 1, 1000, "sample size").is_err());
        for grouped in ["10,000", "1.200", "12,345,678", "2.500"] {
            let e = parse_whole(grouped, true, 1, u64::MAX, "sample size").unwrap_err();
            assert!(e.contains("thousands separator"), "{grouped}: {e}");
        }
        assert_eq!(parse_whole("120,0", true, 1, 1000, "sample size"), Ok(120));
    }

    #[test]
    fn missing_markers() {
        for m in ["", "  ", "NA", "na", "N/A", "."] {
            assert!(is_missing(m), "{m}");
        }
        assert!(!is_missing("0"));
    }
}
