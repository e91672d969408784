//! The faces' renderings of an [`Analysis`](crate::analysis::Analysis), one module per
//! kind of output: the JSON documents (`json`), the readable summaries (`text`), the
//! paragraphs, methods and references (`prose`), the report page as blocks rendered to
//! HTML and Markdown (`page`), and the figures' data (`figures`). Everything here builds
//! strings, serialisable values or figures; printing and writing files is a face's job.
//!
//! Messages that point to settings are rendered with the face's own
//! [`SettingNames`](crate::setting::SettingNames) (option names on the command line).

pub mod figures;
pub mod icc_words;
pub mod json;
pub mod layout;
pub mod page;
pub mod prose;
pub mod text;

use crate::metareg::{Centring, Explanation, Moderator};

/// The caution printed with every benchmark.
pub const INDIVIDUAL_DECISIONS_CAUTION: &str = "Where scores inform decisions about \
individuals (clinical diagnosis, educational placement, personnel selection), higher \
reliability is needed than for research use. This benchmark serves the interpretation of \
research results; for decisions about individuals the professional testing standards and \
local practice govern.";

/// A meta-regression term in words, for the readable faces: "year, per unit",
/// "language: translated vs original", "intercept (at the means)". (The JSON keeps the
/// design's column names.)
pub fn term_label(ex: &Explanation, j: usize) -> String {
    if j == 0 {
        let mods = &ex.design.moderators;
        let numeric = mods.iter().any(|m| matches!(m, Moderator::Numeric { .. }));
        let categorical = mods
            .iter()
            .any(|m| matches!(m, Moderator::Categorical { .. }));
        let numeric_at = match ex.design.centring {
            Centring::Means => "at the means",
            Centring::None => "numeric moderators at 0",
        };
        return match (numeric, categorical) {
            (false, false) => "pooled value".into(),
            (true, false) => format!("intercept ({numeric_at})"),
            (false, true) => "intercept (at the reference levels)".into(),
            (true, true) => format!("intercept ({numeric_at}, reference levels)"),
        };
    }
    for m in &ex.design.moderators {
        match m {
            Moderator::Numeric { name, column, .. } if *column == j => {
                return format!("{name}, per unit");
            }
            Moderator::Categorical {
                name,
                reference,
                levels,
                ..
            } => {
                if let Some((l, _)) = levels.iter().find(|(_, c)| *c == j) {
                    return format!("{name}: {l} vs {reference}");
                }
            }
            _ => {}
        }
    }
    ex.design.names[j].clone()
}
