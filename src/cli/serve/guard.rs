//! The checks every request to the local server passes before it is answered: the Host
//! header names this server (no DNS rebinding), an Origin header (when the browser sends
//! one) is this server's own (no cross-site requests), and the session cookie carries the
//! launch token.

/// Name of the cookie that carries the launch token.
pub const COOKIE: &str = "relyard_session";

/// True when `host` (the Host header) is this server: 127.0.0.1 or localhost with its port.
pub fn host_allowed(host: Option<&str>, port: u16) -> bool {
    host.is_some_and(|h| {
        let h = h.trim();
        h == format!("127.0.0.1:{port}") || h.eq_ignore_ascii_case(&format!("localhost:{port}"))
    })
}

/// True when there is no Origin header (a plain navigation) or it is this server's own.
pub fn origin_allowed(origin: Option<&str>, port: u16) -> bool {
    match origin {
        None => true,
        Some(o) => {
            let o = o.trim();
            o == format!("http://127.0.0.1:{port}")
                || o.eq_ignore_ascii_case(&format!("http://localhost:{port}"))
        }
    }
}

/// The value of the session cookie among the Cookie headers, if any.
pub fn session_token<'a>(cookies: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    cookies
        .into_iter()
        .flat_map(|header| header.split(';'))
        .filter_map(|pair| pair.trim().split_once('='))
        .find(|(name, _)| *name == COOKIE)
        .map(|(_, value)| value.trim())
}

/// Compare two tokens in time that does not depend on where they first differ.
pub fn same_token(given: &str, expected: &str) -> bool {
    let (a, b) = (given.as_bytes(), expected.as_bytes());
    if a.len() != b.len() {
        return false;
    }
    a.iter().zip(b).fold(0u8, |acc, (x, y)| acc | (x ^ y)) == 0
}

/// A fresh launch token: 32 bytes from the operating system's generator, in hex.
pub fn new_token() -> std::io::Result<String> {
    let mut bytes = [0u8; 32];
    getrandom::fill(&mut bytes).map_err(|e| std::io::Error::other(e.to_string()))?;
    Ok(bytes.iter().map(|b| format!("{b:02x}")).collect())
}

/// Parse an upload limit: a number of bytes, or a number with KB, MB or GB (powers of
/// 1,000; also KiB, MiB, GiB, powers of 1,024).
pub fn parse_size(text: &str) -> Result<u64, String> {
    let t = text.trim();
    let split = t
        .find(|c: char| !(c.is_ascii_digit() || c == '.'))
        .unwrap_or(t.len());
    let (number, unit) = t.split_at(split);
    let value: f64 = number
        .parse()
        .map_err(|_| format!("--max-upload: \"{text}\" is not a size (e.g. 200MB)"))?;
    let factor = match unit.trim().to_ascii_lowercase().as_str() {
        "" | "b" => 1.0,
        "kb" => 1e3,
        "mb" => 1e6,
        "gb" => 1e9,
        "kib" => 1024.0,
        "mib" => 1024.0 * 1024.0,
        "gib" => 1024.0 * 1024.0 * 1024.0,
        other => {
            return Err(format!(
                "--max-upload: unknown unit \"{other}\" (use bytes, KB, MB or GB)"
            ));
        }
    };
    let bytes = value * factor;
    if !(1.0..=64e9).contains(&bytes) {
        return Err(format!("--max-upload: {text} is outside 1 byte to 64 GB"));
    }
    Ok(bytes as u64)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn only_this_server_is_an_allowed_host() {
        assert!(host_allowed(Some("127.0.0.1:8123"), 8123));
        assert!(host_allowed(Some("localhost:8123"), 8123));
        assert!(!host_allowed(Some("127.0.0.1:8124"), 8123));
        assert!(!host_allowed(Some("evil.example:8123"), 8123));
        assert!(!host_allowed(Some("127.0.0.1"), 8123));
        assert!(!host_allowed(None, 8123));
    }

    #[test]
    fn a_foreign_origin_is_refused_and_none_is_allowed() {
        assert!(origin_allowed(None, 9000));
        assert!(origin_allowed(Some("http://127.0.0.1:9000"), 9000));
        assert!(origin_allowed(Some("http://localhost:9000"), 9000));
        assert!(!origin_allowed(Some("http://evil.example"), 9000));
        assert!(!origin_allowed(Some("null"), 9000));
        assert!(!origin_allowed(Some("https://127.0.0.1:9000"), 9000));
    }

    #[test]
    fn the_session_cookie_is_found_among_others() {
        assert_eq!(
            session_token(["a=1; relyard_session=abc ; b=2"]),
            Some("abc")
        );
        assert_eq!(session_token(["x=1", "relyard_session=z"]), Some("z"));
        assert_eq!(session_token(["relyard_sessionx=abc"]), None);
        assert_eq!(session_token([]), None);
    }

    #[test]
    fn tokens_compare_whole() {
        assert!(same_token("abcd", "abcd"));
        assert!(!same_token("abce", "abcd"));
        assert!(!same_token("abc", "abcd"));
        let t = new_token().unwrap();
        assert_eq!(t.len(), 64);
        assert_ne!(t, new_token().unwrap());
    }

    #[test]
    fn sizes_parse_with_units() {
        assert_eq!(parse_size("200MB"), Ok(200_000_000));
        assert_eq!(parse_size("1024"), Ok(1024));
        assert_eq!(parse_size("2 KiB"), Ok(2048));
        assert!(parse_size("0").is_err());
        assert!(parse_size("lots").is_err());
        assert!(parse_size("5 parsecs").is_err());
    }
}
