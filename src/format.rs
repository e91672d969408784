//! Number formatting: the one owner of how numbers read in every output (text, the
//! paragraphs, the page, messages and warnings).

/// Format with `decimals` places, using a true minus sign for negatives and avoiding
/// "-0.000".
pub fn fixed(x: f64, decimals: usize) -> String {
    if x.is_nan() {
        return "n/a".into();
    }
    if x.is_infinite() {
        return if x > 0.0 {
            "∞".into()
        } else {
            "−∞".into()
        };
    }
    let s = format!("{:.*}", decimals, x);
    let zero = format!("{:.*}", decimals, 0.0);
    if s.trim_start_matches('-') == zero {
        return zero;
    }
    match s.strip_prefix('-') {
        Some(rest) => format!("−{rest}"),
        None => s,
    }
}

/// Format with about `sig` significant digits (for τ² and other small quantities).
pub fn significant(x: f64, sig: usize) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return fixed(x, 0);
    }
    let mag = x.abs().log10().floor() as i32;
    if !(-4..6).contains(&mag) {
        let s = format!("{:.*e}", sig.saturating_sub(1), x);
        return s.replace('-', "−");
    }
    let decimals = (sig as i32 - 1 - mag).max(0) as usize;
    fixed(x, decimals)
}

/// About `sig` significant digits with trailing zeros dropped: 2030, 0.3, 11.25 (for values
/// the user gave, such as a moderator value, where "2030.00" would misread).
pub fn trimmed(x: f64, sig: usize) -> String {
    let s = significant(x, sig);
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A count with its noun: "1 row", "3 rows", "1,200 rows".
pub fn count(n: impl Into<u64>, one: &str, many: &str) -> String {
    let n = n.into();
    format!("{} {}", thousands(n), if n == 1 { one } else { many })
}

/// "lower to upper" with each end formatted by `f`.
pub fn range(lower: f64, upper: f64, f: impl Fn(f64) -> String) -> String {
    format!("{} to {}", f(lower), f(upper))
}

/// Smallest p value written as a number; below it a p value reads "< 1e-300" (the tail
/// areas are computed to about this size; JSON keeps the value itself).
pub const P_FLOOR: f64 = 1e-300;

/// A p value with its relation: "= 0.042", "< 0.001", or "< 1e-300" where the value lies
/// below what a double can resolve (it is never printed as 0).
pub fn p_value(p: f64) -> String {
    if p.is_nan() {
        "not available".into()
    } else if p < P_FLOOR {
        "< 1e-300".into()
    } else if p < 0.001 {
        "< 0.001".into()
    } else {
        format!("= {}", fixed(p, 3))
    }
}

/// A p value without its relation for a table cell: "0.042", "< 0.001", "< 1e-300".
pub fn p_cell(p: f64) -> String {
    let s = p_value(p);
    s.strip_prefix("= ").map(str::to_string).unwrap_or(s)
}

/// Thousands separated by commas, e.g. 12,345.
pub fn thousands(n: u64) -> String {
    let s = n.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// Wrap text at `width` columns with a prefix on every line.
pub fn wrap(text: &str, width: usize, prefix: &str) -> String {
    let mut out = String::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            out.push_str(prefix);
            out.push_str(&line);
            out.push('\n');
            line.clear();
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    if !line.is_empty() {
        out.push_str(prefix);
        out.push_str(&line);
        out.push('\n');
    }
    out
}

/// Text shortened to at most `max` characters (an ellipsis marks the cut), for messages
/// that quote a cell or a header.
pub fn quoted(text: &str, max: usize) -> String {
    if text.chars().count() <= max {
        return text.to_string();
    }
    let kept: String = text.chars().take(max.saturating_sub(1)).collect();
    format!("{kept}…")
}

/// A list of words as "a", "a and b", "a, b and c".
pub fn and_list(items: &[String]) -> String {
    match items.len() {
        0 => String::new(),
        1 => items[0].clone(),
        _ => {
            let (last, first) = items.split_last().expect("two or more");
            format!("{} and {last}", first.join(", "))
        }
    }
}

/// [`and_list`] of at most `max` items, the rest counted ("a, b and 7 more").
pub fn quote_list(items: &[String], max: usize) -> String {
    if items.len() <= max {
        return and_list(items);
    }
    format!("{} and {} more", items[..max].join(", "), items.len() - max)
}

/// A change with its sign (+0.012, −0.004), or "same" when it rounds to zero at `decimals`.
pub fn change(x: f64, decimals: usize) -> String {
    if x.abs() < 0.5 * 10f64.powi(-(decimals as i32)) {
        return "same".to_string();
    }
    format!(
        "{}{}",
        if x > 0.0 { "+" } else { "−" },
        fixed(x.abs(), decimals)
    )
}

/// The first letter in upper case.
pub fn capitalized(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formats() {
        assert_eq!(fixed(-0.0004, 3), "0.000");
        assert_eq!(fixed(-1.5, 2), "−1.50");
        assert_eq!(significant(0.0421337, 3), "0.0421");
        assert_eq!(significant(152.233, 3), "152");
        assert_eq!(trimmed(2030.0, 6), "2030");
        assert_eq!(trimmed(0.1 + 0.2, 6), "0.3");
        assert_eq!(trimmed(-11.25, 4), "−11.25");
        assert_eq!(trimmed(1.5e-7, 3), "1.50e−7");
        assert_eq!(thousands(1234567), "1,234,567");
        assert_eq!(count(1u64, "row", "rows"), "1 row");
        assert_eq!(count(1200u64, "row", "rows"), "1,200 rows");
        assert_eq!(thousands(999), "999");
        assert_eq!(p_value(0.0001), "< 0.001");
        assert_eq!(p_value(0.0), "< 1e-300");
        assert_eq!(p_value(3.5e-78), "< 0.001");
        assert_eq!(p_cell(0.0421), "0.042");
        assert_eq!(quoted("abcdef", 4), "abc…");
        assert_eq!(
            and_list(&["a".into(), "b".into(), "c".into()]),
            "a, b and c"
        );
        assert_eq!(wrap("a b c", 3, "> "), "> a b\n> c\n");
    }
}
