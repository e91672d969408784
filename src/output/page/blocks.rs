//! A page as format-neutral blocks, rendered to HTML and to Markdown.
//!
//! Text in blocks is plain text (never markup): each renderer escapes it for its own
//! format, so a study label such as `<script>` or `*bold*` reads as typed in both.

/// A run of text with one style.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Span {
    /// Plain text.
    Text(String),
    /// Emphasised text.
    Strong(String),
    /// Code, a file name or a command.
    Code(String),
    /// A link to a section of the page or to a file beside it.
    Link {
        /// The text shown.
        text: String,
        /// The target: `#section-id` or a relative file path.
        href: String,
    },
}

/// Text made of spans.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Inline(pub Vec<Span>);

impl Inline {
    /// Plain text.
    pub fn text(s: impl Into<String>) -> Self {
        Inline(vec![Span::Text(s.into())])
    }

    /// Add a span.
    pub fn push(mut self, span: Span) -> Self {
        self.0.push(span);
        self
    }

    /// Add plain text.
    pub fn and(self, s: impl Into<String>) -> Self {
        self.push(Span::Text(s.into()))
    }

    /// Add emphasised text.
    pub fn strong(self, s: impl Into<String>) -> Self {
        self.push(Span::Strong(s.into()))
    }

    /// Add code.
    pub fn code(self, s: impl Into<String>) -> Self {
        self.push(Span::Code(s.into()))
    }

    /// The text without styles.
    pub fn plain(&self) -> String {
        self.0
            .iter()
            .map(|s| match s {
                Span::Text(t) | Span::Strong(t) | Span::Code(t) => t.as_str(),
                Span::Link { text, .. } => text.as_str(),
            })
            .collect()
    }
}

impl From<&str> for Inline {
    fn from(s: &str) -> Self {
        Inline::text(s)
    }
}

impl From<String> for Inline {
    fn from(s: String) -> Self {
        Inline::text(s)
    }
}

/// One block of a page.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A heading of level 2 or 3 with its anchor id.
    Heading {
        /// 2 or 3.
        level: u8,
        /// The anchor (letters, digits and hyphens).
        id: String,
        /// The heading's text.
        text: String,
    },
    /// A paragraph.
    Para(Inline),
    /// A highlighted note (the caution).
    Note(Inline),
    /// A table: a header row and body rows of cells.
    Table {
        /// Header cells.
        head: Vec<Inline>,
        /// Body rows.
        rows: Vec<Vec<Inline>>,
    },
    /// A bulleted list.
    List(Vec<Inline>),
    /// A figure, by its index in the page's figure list.
    Figure(usize),
}

impl Block {
    /// A level-2 heading.
    pub fn section(id: &str, text: &str) -> Block {
        Block::Heading {
            level: 2,
            id: id.into(),
            text: text.into(),
        }
    }

    /// A level-3 heading.
    pub fn subsection(id: &str, text: &str) -> Block {
        Block::Heading {
            level: 3,
            id: id.into(),
            text: text.into(),
        }
    }

    /// A table of plain cells.
    pub fn table(head: &[&str], rows: Vec<Vec<Inline>>) -> Block {
        Block::Table {
            head: head.iter().map(|h| Inline::text(*h)).collect(),
            rows,
        }
    }
}

/// Escape text for HTML.
pub fn html_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// A heading's anchor as Markdown renderers make it: lower case, spaces as hyphens,
/// letters, digits, hyphens and underscores kept, everything else dropped.
pub fn heading_anchor(title: &str) -> String {
    title
        .chars()
        .filter_map(|c| {
            if c.is_alphanumeric() || c == '-' || c == '_' {
                Some(c.to_lowercase().collect::<String>())
            } else if c == ' ' {
                Some("-".to_string())
            } else {
                None
            }
        })
        .collect()
}

/// Escape text for Markdown: the characters that make emphasis, code, links, tables and
/// strike-through are backslash-escaped anywhere, those that start a heading, a list or
/// a quote are escaped at the start, angle brackets are backslash-escaped and an
/// ampersand is where it could start a character reference, so no text turns into a tag,
/// a link, emphasis or a table cell break, and the file holds no HTML (numbers such as
/// 0.783 and "p < 0.001" stay readable as they are).
pub fn markdown_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    let mut chars = s.chars().peekable();
    // At the start: a heading (#), a list (-, +, or digits and a dot).
    match s.chars().next() {
        Some('#' | '-' | '+') => out.push('\\'),
        Some(c) if c.is_ascii_digit() => {
            let digits: String = s.chars().take_while(char::is_ascii_digit).collect();
            let rest = &s[digits.len()..];
            let marker = rest.starts_with(['.', ')'])
                && rest[1..].chars().next().is_none_or(char::is_whitespace);
            if marker {
                out.push_str(&digits);
                for _ in 0..digits.len() {
                    chars.next();
                }
                out.push('\\');
            }
        }
        _ => {}
    }
    while let Some(c) = chars.next() {
        match c {
            '\\' | '`' | '*' | '_' | '[' | ']' | '|' | '~' | '<' | '>' => {
                out.push('\\');
                out.push(c);
            }
            '&' if chars
                .peek()
                .is_some_and(|n| n.is_ascii_alphanumeric() || *n == '#') =>
            {
                out.push_str("\\&");
            }
            '\n' | '\r' => out.push(' '),
            _ => out.push(c),
        }
    }
    out
}

/// Code in Markdown: a backtick run longer than any inside the text.
fn markdown_code(s: &str) -> String {
    let longest = s.split(|c| c != '`').map(str::len).max().unwrap_or(0);
    let fence = "`".repeat(longest + 1);
    let pad = if s.starts_with('`') || s.ends_with('`') {
        " "
    } else {
        ""
    };
    format!("{fence}{pad}{}{pad}{fence}", s.replace(['\n', '\r'], " "))
}

/// A link target made safe: page anchors and relative file paths only.
fn safe_href(href: &str) -> Option<&str> {
    let ok = href
        .chars()
        .all(|c| c.is_ascii_alphanumeric() || matches!(c, '#' | '-' | '_' | '.' | '/'))
        && !href.contains("..")
        && !href.starts_with('/');
    ok.then_some(href)
}

impl Inline {
    /// The text as HTML.
    pub fn html(&self) -> String {
        self.0
            .iter()
            .map(|s| match s {
                Span::Text(t) => html_escape(t),
                Span::Strong(t) => format!("<strong>{}</strong>", html_escape(t)),
                Span::Code(t) => format!("<code>{}</code>", html_escape(t)),
                Span::Link { text, href } => match safe_href(href) {
                    Some(h) => format!("<a href=\"{h}\">{}</a>", html_escape(text)),
                    None => html_escape(text),
                },
            })
            .collect()
    }

    /// The text as Markdown.
    pub fn markdown(&self) -> String {
        self.0
            .iter()
            .map(|s| match s {
                Span::Text(t) => markdown_escape(t),
                Span::Strong(t) => {
                    // Markers next to spaces do not make emphasis: keep spaces outside.
                    let inner = t.trim();
                    if inner.is_empty() {
                        return markdown_escape(t);
                    }
                    let (before, after) = (
                        &t[..t.len() - t.trim_start().len()],
                        &t[t.trim_end().len()..],
                    );
                    format!("{before}**{}**{after}", markdown_escape(inner))
                }
                Span::Code(t) => markdown_code(t),
                Span::Link { text, href } => match safe_href(href) {
                    Some(h) => format!("[{}]({h})", markdown_escape(text)),
                    None => markdown_escape(text),
                },
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_never_becomes_markup() {
        let t = Inline::text("<script>alert(1)</script> *x* [a](b) | c");
        assert_eq!(
            t.html(),
            "&lt;script&gt;alert(1)&lt;/script&gt; *x* [a](b) | c"
        );
        let md = t.markdown();
        // Every bracket and bar is escaped: no link, no tag, no table cell break.
        let unescaped = md.replace("\\]", "").replace("\\|", "").replace("\\<", "");
        assert!(
            !unescaped.contains('<') && !unescaped.contains("](") && !unescaped.contains('|'),
            "{md}"
        );
        assert!(md.contains("\\*x\\*"), "{md}");
        assert_eq!(
            heading_anchor("Reporting checklist (REGEMA)"),
            "reporting-checklist-regema"
        );
        assert_eq!(heading_anchor("What-if correction"), "what-if-correction");
        assert_eq!(markdown_escape("0.783 to 0.9"), "0.783 to 0.9");
        assert_eq!(markdown_escape("p < 0.001"), "p \\< 0.001");
        assert_eq!(markdown_escape("Knapp & Hartung"), "Knapp & Hartung");
        assert_eq!(markdown_escape("&amp;"), "\\&amp;");
        assert_eq!(
            Inline::default().strong("Caution. ").and("Text").markdown(),
            "**Caution.** Text"
        );
        assert_eq!(markdown_escape("1. first"), "1\\. first");
        assert_eq!(markdown_escape("- x"), "\\- x");
        assert_eq!(markdown_code("a`b"), "``a`b``");
        let link = Inline::default().push(Span::Link {
            text: "x".into(),
            href: "javascript:alert(1)".into(),
        });
        assert_eq!(link.html(), "x");
        assert_eq!(link.markdown(), "x");
    }
}
