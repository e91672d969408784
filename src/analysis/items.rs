//! Reliability from raw item data: read, analysed, and omega bootstrapped on request.

use super::settings::{ItemSettings, Settings};
use super::{Progress, Task, with_progress};
use crate::error::Result;
use crate::items::bootstrap::{OmegaBootstrap, bootstrap_omega};
use crate::items::{ItemAnalysis, ItemData, analyze, read_items};
use crate::warning::Warning;

/// Item data, their analysis, and omega's bootstrap.
#[derive(Debug, Clone)]
pub struct ItemsOutcome {
    /// The data as read.
    pub data: ItemData,
    /// Alpha, omega, the reading and the item statistics.
    pub analysis: ItemAnalysis,
    /// Omega's bootstrap interval, when asked for and a factor model was fitted.
    pub bootstrap: Option<OmegaBootstrap>,
    /// Every warning (the reading's and the bootstrap's).
    pub warnings: Vec<Warning>,
}

pub(crate) fn items(
    i: &ItemSettings,
    s: &Settings,
    progress: &dyn Progress,
) -> Result<ItemsOutcome> {
    let mut read = i.read.clone();
    read.keep_rows = i.bootstrap.is_some();
    let data = read_items(&i.path, &read)?;
    let analysis = analyze(&data, s.level)?;
    let mut warnings = analysis.warnings.clone();
    let bootstrap = match (i.bootstrap, &data.rows, analysis.factor.is_ok()) {
        (Some(b), Some(rows), true) => Some(with_progress(progress, Task::Bootstrap, b, |tick| {
            bootstrap_omega(rows, data.names.len(), b, s.seed, s.level, tick)
        })?),
        (Some(_), _, false) => {
            warnings.push(Warning::PartFailed {
                what: "the bootstrap of omega".into(),
                why: "there is no one-factor model to bootstrap".into(),
            });
            None
        }
        _ => None,
    };
    Ok(ItemsOutcome {
        data,
        analysis,
        bootstrap,
        warnings,
    })
}
