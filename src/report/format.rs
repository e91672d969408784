//! Number formatting shared by the text outputs.

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

/// "lower to upper" with each end formatted by `f`.
pub fn range(lower: f64, upper: f64, f: impl Fn(f64) -> String) -> String {
    format!("{} to {}", f(lower), f(upper))
}

/// A p value: "< 0.001" below that, else three decimals.
pub fn p_value(p: f64) -> String {
    if p < 0.001 {
        "< 0.001".into()
    } else {
        format!("= {}", fixed(p, 3))
    }
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

/// A level such as 0.95 as "95%".
pub fn percent_level(level: f64) -> String {
    let pct = format!("{:.4}", level * 100.0);
    let trimmed = pct.trim_end_matches('0').trim_end_matches('.');
    format!("{trimmed}%")
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

/// How a sheet was stored, for the summary's first line: "comma-delimited", "workbook", …
pub fn sheet_kind(delimiter: u8) -> String {
    if delimiter == crate::sheet::WORKBOOK {
        "workbook".to_string()
    } else {
        format!("{}-delimited", crate::sheet::delimiter_name(delimiter))
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
        assert_eq!(thousands(1234567), "1,234,567");
        assert_eq!(thousands(999), "999");
        assert_eq!(percent_level(0.95), "95%");
        assert_eq!(percent_level(0.999), "99.9%");
        assert_eq!(p_value(0.0001), "< 0.001");
        assert_eq!(wrap("a b c", 3, "> "), "> a b\n> c\n");
    }
}
