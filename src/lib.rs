//! relyard: judge a reliability coefficient in context.
//!
//! The library holds the statistics: reading and validating a coding sheet of
//! reported coefficients ([`sheet`]), transforming them to an analysis scale
//! ([`transform`]), pooling them with common- or random-effects models ([`pool`]) and
//! turning the result into a benchmark with an expected range ([`benchmark`]). It never
//! prints and never exits; the `relyard` binary owns the terminal.

#![warn(missing_docs)]

pub mod setting;

pub mod analysis;
pub mod benchmark;
pub mod compare;
pub mod correct;
pub mod dist;
pub mod error;
pub mod format;
pub mod icc;
pub mod items;
pub mod level;
pub mod limits;
pub mod metareg;
pub mod numeric;
pub mod output;
pub mod placement;
pub mod plan;
pub mod plot;
pub mod pool;
pub mod random;
pub mod sheet;
pub mod transform;
pub mod warning;

pub use error::{CellProblem, Error, Result};
pub use level::Level;
pub use setting::{Message, Setting, SettingNames};
pub use warning::Warning;
