//! Tests of equality for independent alphas: the rows of a coding sheet (checked as the
//! benchmark checks them) and samples given one by one.

use super::settings::{ComparisonSettings, Settings, SheetSettings};
use crate::benchmark::{BenchmarkOptions, SkippedRow, prepare_from};
use crate::compare::{
    AlphaSample, FeldtTest, HakstianWhalenTest, feldt_two_sample, hakstian_whalen_test,
};
use crate::error::{CellProblem, Error, Result};
use crate::setting::msg;
use crate::setting::{Setting, given};
use crate::sheet::{CodingSheet, SheetSummary};
use crate::transform::TransformKind;
use crate::warning::Warning;

/// The samples compared and the tests.
#[derive(Debug, Clone)]
pub struct Comparison {
    /// The coding sheet the samples came from, when one was read.
    pub source: Option<SheetSummary>,
    /// The samples, in order (the sheet's first).
    pub samples: Vec<AlphaSample>,
    /// How many of them came from the sheet.
    pub from_sheet: usize,
    /// The sheet's rows left out (invalid rows skipped at the user's request).
    pub skipped: Vec<SkippedRow>,
    /// Feldt's test (two samples only).
    pub feldt: Option<FeldtTest>,
    /// The Hakstian–Whalen test.
    pub hakstian_whalen: HakstianWhalenTest,
    /// Warnings (the sheet's).
    pub warnings: Vec<Warning>,
}

pub(crate) fn compare(c: &ComparisonSettings, s: &Settings) -> Result<Comparison> {
    let from = match &s.sheet {
        Some(sheet) => sheet_samples(sheet, s)?,
        None => SheetSamples::default(),
    };
    let from_sheet = from.samples.len();
    let mut samples = from.samples;
    samples.extend(c.samples.iter().cloned());
    let hakstian_whalen = hakstian_whalen_test(&samples)?;
    let feldt = if samples.len() == 2 {
        Some(feldt_two_sample(&samples[0], &samples[1])?)
    } else {
        None
    };
    Ok(Comparison {
        source: from.source,
        samples,
        from_sheet,
        skipped: from.skipped,
        feldt,
        hakstian_whalen,
        warnings: from.warnings,
    })
}

/// What a coding sheet gives the tests.
#[derive(Default)]
struct SheetSamples {
    source: Option<SheetSummary>,
    samples: Vec<AlphaSample>,
    skipped: Vec<SkippedRow>,
    warnings: Vec<Warning>,
}

/// The sheet's samples, checked as the benchmark checks them.
fn sheet_samples(sheet: &SheetSettings, s: &Settings) -> Result<SheetSamples> {
    let bytes = match &sheet.bytes {
        Some(b) => b.as_ref().clone(),
        None => crate::sheet::read_sheet_bytes(&sheet.path)?,
    };
    let mut cs = crate::sheet::coding_sheet_from_bytes(&sheet.path, bytes, &sheet.read)?;
    let mut summary = cs.summary();
    summary.rows_outside_subset = cs.keep_subset(&sheet.subset)?;
    summary.subset = sheet.subset.clone();
    keep_alphas(&mut cs);
    let options = BenchmarkOptions {
        transform: Some(TransformKind::HakstianWhalen),
        allow_mixed_types: false,
        skip_invalid: sheet.skip_invalid,
        pool: s.pool_options(),
        dependence: s.model.dependence,
    };
    let prepared = prepare_from(cs, summary, &options)?;
    let warnings = prepared
        .warnings
        .iter()
        .filter(|w| !matches!(w, Warning::TransformFamilyMismatch { .. }))
        .cloned()
        .collect();
    let mut samples = Vec::with_capacity(prepared.records.len());
    for r in &prepared.records {
        let (Some(n), Some(items)) = (r.n, r.items) else {
            return Err(Error::InvalidSheet {
                file: prepared.file().to_string(),
                problems: vec![CellProblem::row(
                    r.row,
                    "the tests need n and items for every sample",
                )],
            });
        };
        samples.push(AlphaSample {
            label: r.label.clone(),
            alpha: r.coef,
            n,
            items,
        });
    }
    Ok(SheetSamples {
        source: Some(prepared.source.clone()),
        samples,
        skipped: prepared.skipped.clone(),
        warnings,
    })
}

/// The tests are for coefficient alpha: other kinds are problems of their rows, as the
/// benchmark treats rows it cannot use (left out and listed on request).
fn keep_alphas(cs: &mut CodingSheet) {
    let mut problems = Vec::new();
    let type_column = cs.column_label(crate::sheet::Role::CoefType);
    cs.records.retain(|r| {
        let alpha_kind = matches!(
            r.coef_type,
            crate::sheet::CoefType::Alpha
                | crate::sheet::CoefType::AlphaStd
                | crate::sheet::CoefType::Kr20
        );
        if !alpha_kind {
            problems.push(CellProblem::cell(
                r.row,
                type_column.clone(),
                msg![
                    format!(
                        "{} is not coefficient alpha, and these tests compare alphas (leave such \
                         rows out, for example with ",
                        r.coef_type.name()
                    ),
                    given(Setting::Subset, "coef_type=alpha"),
                    ")"
                ],
            ));
        }
        alpha_kind
    });
    cs.problems.extend(problems);
    cs.problems.sort_by_key(|p| p.row);
}
