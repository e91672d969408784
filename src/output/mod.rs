//! The faces' renderings of an [`Analysis`](crate::analysis::Analysis), one module per
//! kind of output: the JSON documents (`json`), the readable summaries (`text`), the
//! paragraphs, methods and references (`prose`), the report page as blocks rendered to
//! HTML and Markdown (`page`), and the figures' data (`figures`). Everything here builds
//! strings, serialisable values or figures; printing and writing files is a face's job.
//!
//! Messages that point to settings are rendered with the face's own
//! [`SettingNames`](crate::setting::SettingNames) (option names on the command line).

pub mod figures;
pub mod json;
pub mod layout;
pub mod page;
pub mod prose;
pub mod text;

/// The caution printed with every benchmark.
pub const INDIVIDUAL_DECISIONS_CAUTION: &str = "Where scores inform decisions about \
individuals (clinical diagnosis, educational placement, personnel selection), higher \
reliability is needed than for research use. This benchmark serves the interpretation of \
research results; for decisions about individuals the professional testing standards and \
local practice govern.";
