//! The page's words for settings. The analysis names a setting through [`SettingNames`]:
//! the command line says `--n`, the page says “Respondents (n)” (Your study). Messages the
//! command line writes out itself (its usage messages, its argument parser's) are reworded
//! the same way, option by option.

use super::super::names::OptionNames;
use relyard::setting::{Setting, SettingNames};
use std::borrow::Cow;

/// The settings of one kind of request, named as the page labels them.
pub(super) struct PageNames {
    /// Each option of the request's command and the page's label for it.
    labels: Vec<(&'static str, &'static str)>,
}

impl PageNames {
    /// The names of a request whose options are labelled so on the page: (option, label).
    pub(super) fn new(labels: Vec<(&'static str, &'static str)>) -> PageNames {
        PageNames { labels }
    }

    fn label(&self, option: &str) -> Option<&'static str> {
        self.labels
            .iter()
            .find(|(o, _)| *o == option)
            .map(|(_, l)| *l)
    }

    /// A message of the command line in the page's words: the argument parser's frame (its
    /// `error:` and the usage lines after the reason) left out, each option the page has a
    /// field for named by that field's label, and a value's placeholder (`<N>`) dropped.
    pub(super) fn reword(&self, message: &str) -> String {
        let m = message.strip_prefix("error: ").unwrap_or(message);
        let m = m.split("\n\nUsage:").next().unwrap_or(m);
        let m = m
            .split("\n\nFor more information")
            .next()
            .unwrap_or(m)
            .trim_end();
        let mut out = String::with_capacity(m.len());
        let mut rest = m;
        while let Some(at) = rest.find("--") {
            out.push_str(&rest[..at]);
            let tail = &rest[at..];
            let end = 2 + tail[2..]
                .find(|c: char| !(c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-'))
                .unwrap_or(tail.len() - 2);
            let (option, after) = tail.split_at(end);
            match self.label(option) {
                Some(label) => {
                    out.push_str(label);
                    rest = drop_placeholder(after);
                }
                None => {
                    out.push_str(option);
                    rest = after;
                }
            }
        }
        out.push_str(rest);
        out
    }
}

/// The command line's names for an option's value, as its messages write them after the
/// option (` NAME`, ` COLUMN`): left out after a label. A name the user gave is never
/// among them unless it is one of these words.
const VALUE_NAMES: [&str; 12] = [
    "NAME",
    "COLUMN",
    "N",
    "X",
    "R",
    "SPEC",
    "LEVEL",
    "METRIC",
    "VALUE",
    "NAME=LEVEL",
    "NAME=VALUE",
    "NAME=SPEC",
];

/// Text after an option without the value's placeholder (the parser's ` <N>`, or one of
/// [`VALUE_NAMES`]), if it starts with one.
fn drop_placeholder(after: &str) -> &str {
    let placeholder = |c: char| c.is_ascii_uppercase() || c == '_' || c == '=' || c == ',';
    if let Some(inner) = after.strip_prefix(" <")
        && let Some(close) = inner.find('>')
        && inner[..close].chars().all(placeholder)
    {
        return &inner[close + 1..];
    }
    if let Some(inner) = after.strip_prefix(' ') {
        let word = inner
            .find(|c: char| !(c.is_ascii_uppercase() || c == '_' || c == '='))
            .unwrap_or(inner.len());
        if VALUE_NAMES.contains(&&inner[..word]) {
            return &inner[word..];
        }
    }
    after
}

impl SettingNames for PageNames {
    fn name(&self, setting: Setting) -> Cow<'static, str> {
        let option = OptionNames.name(setting);
        match self.label(&option) {
            Some(label) => Cow::Borrowed(label),
            None => Cow::Borrowed(setting.describe()),
        }
    }
}
