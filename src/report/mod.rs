//! Output: the JSON document, the readable text summary and the paragraph a
//! researcher can adapt for a paper. Everything here builds strings or serialisable
//! values; printing is the binary's job.

pub mod check;
pub mod correct;
pub mod document;
pub mod explain;
pub mod figures;
pub mod format;
pub mod items;
pub mod json;
pub mod layout;
pub mod paragraph;
pub mod regema;
pub mod text;

/// The caution printed with every benchmark.
pub const INDIVIDUAL_DECISIONS_CAUTION: &str = "Where scores inform decisions about \
individuals (clinical diagnosis, educational placement, personnel selection), higher \
reliability is needed than for research use. This benchmark serves the interpretation of \
research results; for decisions about individuals the professional testing standards and \
local practice govern.";
