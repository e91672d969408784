//! Intraclass correlations from a table of scores (rows persons or targets, columns
//! occasions or raters): read from a delimited file or a workbook, rows with a missing cell
//! left out (and counted), every form computed.

use super::settings::{ItemSettings, Settings};
use crate::error::{Error, Result};
use crate::icc::{IccAnalysis, icc as intraclass};
use crate::items::{ItemData, Missing, read_items, read_items_from_bytes};
use crate::setting::Setting;
use crate::warning::Warning;

/// The table as read and its intraclass correlations.
#[derive(Debug, Clone)]
pub struct IccOutcome {
    /// The table as read (its columns, rows read, complete rows, missing cells).
    pub data: ItemData,
    /// Every form, the SEM and the smallest detectable change.
    pub analysis: IccAnalysis,
    /// The reading's warnings (identifier columns left out, rows with missing cells).
    pub warnings: Vec<Warning>,
    /// The confidence level of the intervals.
    pub level: crate::level::Level,
}

pub(crate) fn icc(i: &ItemSettings, s: &Settings) -> Result<IccOutcome> {
    let mut read = i.read.clone();
    read.keep_rows = true;
    read.missing = Missing::Listwise;
    read.columns_setting = Setting::IccColumns;
    let data = match &i.bytes {
        Some(b) => read_items_from_bytes(&i.path, b, &read)?,
        None => read_items(&i.path, &read)?,
    };
    let rows = data
        .rows
        .as_ref()
        .ok_or_else(|| Error::Numerical("the table's rows were not kept".into()))?;
    let analysis = intraclass(rows, data.complete_rows as usize, data.names.len(), s.level)?;
    let mut warnings = data.notes.clone();
    if data.missing_cells > 0 {
        warnings.push(Warning::RowsWithMissingValues {
            rows: data.rows_read - data.complete_rows,
            cells: data.missing_cells,
        });
    }
    Ok(IccOutcome {
        data,
        analysis,
        warnings,
        level: s.level,
    })
}
