//! From a coding sheet to a benchmark: choose and check the transform, transform each
//! coefficient, pool, and map the results back to the coefficient scale.

mod groups;

use crate::error::{CellProblem, Error, Result};
use crate::pool::dependence::{DependenceMethod, DependenceOptions, composites, pool_dependent};
use crate::pool::multilevel::Grouping;
use crate::pool::{PoolOptions, PoolResult, pool};
use crate::setting::msg;
use crate::setting::{Message, Setting, given};
use crate::sheet::{CodingSheet, ColumnRef, Role, SheetSummary, StudyRecord};
use crate::transform::{
    BackInterval, CoefficientFamily, CoefficientTransform, InputField, StudyInput, TransformKind,
    Transformed, back_interval,
};
use crate::warning::Warning;
use std::collections::BTreeMap;

/// Options of a benchmark run.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct BenchmarkOptions {
    /// The transform; chosen from the coefficient types when `None`.
    pub transform: Option<TransformKind>,
    /// Pool internal-consistency and correlation-type coefficients together.
    pub allow_mixed_types: bool,
    /// Leave out rows with problems (each is listed) instead of stopping.
    pub skip_invalid: bool,
    /// The pooling model.
    pub pool: PoolOptions,
    /// How rows that share a sample or a cluster are pooled.
    pub dependence: DependenceOptions,
}

/// One pooled study.
#[derive(Debug, Clone, PartialEq)]
pub struct StudyEffect {
    /// The study as read.
    pub record: StudyRecord,
    /// Its value on the analysis scale.
    pub effect: f64,
    /// Its sampling variance on the analysis scale.
    pub variance: f64,
    /// Its relative weight in the pooled value, in percent.
    pub weight_percent: f64,
}

/// A row left out at the user's request (invalid rows skipped), with every reason.
#[derive(Debug, Clone, PartialEq)]
pub struct SkippedRow {
    /// Spreadsheet row number.
    pub row: usize,
    /// Each problem, as `column X: reason` (or the bare reason for a whole-row problem).
    pub reasons: Vec<Message>,
}

/// Results on the coefficient's own scale.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoefficientScale {
    /// The back-transformed pooled value.
    pub estimate: f64,
    /// The back-transformed confidence interval.
    pub ci: BackInterval,
    /// The back-transformed prediction interval, when there is one.
    pub pi: Option<BackInterval>,
    /// With τ² at zero: the prediction interval at the upper end of τ²'s CI, back-transformed.
    pub pi_at_tau2_upper: Option<BackInterval>,
}

/// A benchmark: the pooled coefficients of prior studies and the expected range for a
/// new study.
#[derive(Debug, Clone)]
pub struct Benchmark {
    /// The sheet and how much of it was used.
    pub source: SheetSummary,
    /// Transform used.
    pub transform: TransformKind,
    /// Whether the transform was chosen by the user.
    pub transform_chosen: bool,
    /// Families of the coefficients pooled.
    pub families: Vec<CoefficientFamily>,
    /// Coefficient types pooled, with counts.
    pub coef_types: BTreeMap<&'static str, usize>,
    /// Pooled studies, in sheet order.
    pub studies: Vec<StudyEffect>,
    /// Rows left out, in sheet order.
    pub skipped: Vec<SkippedRow>,
    /// The respondents of the pooled studies, each sample counted once (at its largest n).
    pub n_total: u64,
    /// Pooled samples without a sample size.
    pub n_missing: usize,
    /// Rows of the sheet that were pooled (before any composites were formed).
    pub k_rows: usize,
    /// Samples among them.
    pub k_samples: usize,
    /// Clusters among them.
    pub k_clusters: usize,
    /// The pooling result on the analysis scale.
    pub pool: PoolResult,
    /// The results on the coefficient scale (`None` for already-transformed input).
    pub coefficient: Option<CoefficientScale>,
    /// Every warning, sheet-level first.
    pub warnings: Vec<Warning>,
}

/// The studies of a coding sheet, checked against the transform and put on its scale.
#[derive(Debug, Clone)]
pub struct Prepared {
    /// The sheet and how much of it was used.
    pub source: SheetSummary,
    /// Names of the sheet's other (moderator) columns.
    pub extra_columns: Vec<String>,
    /// Header name of each standard column present.
    pub columns: BTreeMap<Role, String>,
    /// Transform used.
    pub transform: TransformKind,
    /// Whether the transform was chosen by the user.
    pub transform_chosen: bool,
    /// The usable studies, in sheet order.
    pub records: Vec<StudyRecord>,
    /// Their values on the analysis scale.
    pub y: Vec<f64>,
    /// Their sampling variances on the analysis scale.
    pub v: Vec<f64>,
    /// Rows left out, in sheet order.
    pub skipped: Vec<SkippedRow>,
    /// Which rows share a sample or a cluster (when some do).
    grouping: Option<Grouping>,
    /// For composites of samples (one study per sample): the columns whose values differ
    /// between the rows of one sample, each with the first such sample and its rows; such
    /// a column cannot be a moderator of the composites.
    pub varying_within_sample: Vec<(ColumnRef, String, Vec<usize>)>,
    /// Sheet-level warnings.
    pub warnings: Vec<Warning>,
}

impl Prepared {
    /// True when rows of the sheet share a sample or a cluster.
    pub fn grouped(&self) -> bool {
        self.grouping.is_some()
    }

    /// Which rows share a sample or a cluster, when the sheet says.
    pub fn grouping(&self) -> Option<Grouping> {
        self.grouping.clone()
    }

    /// One study per sample, for the models fitted to composites (dependence aggregate):
    /// each sample's rows averaged on the analysis scale with the variance of a mean of
    /// estimates correlated at `r`, listed under the sample's name at its first row; the
    /// composites are taken as independent (a warning says when several share a cluster).
    /// A sheet whose rows share nothing is returned as it is.
    pub fn aggregated(&self, r: f64) -> Prepared {
        let Some(g) = &self.grouping else {
            return self.clone();
        };
        let options = DependenceOptions {
            sampling_correlation: r,
            ..DependenceOptions::default()
        };
        let (records, y, v) = composite_studies(
            self.records.clone(),
            &self.y,
            &self.v,
            g,
            &options,
            self.transform.get(),
        );
        let mut warnings = self.warnings.clone();
        if g.clusters() < records.len() {
            warnings.push(Warning::ClusterDependenceRemains {
                samples: records.len(),
                clusters: g.clusters(),
            });
        }
        Prepared {
            records,
            y,
            v,
            grouping: None,
            varying_within_sample: self.varying_columns(g),
            warnings,
            ..self.clone_shell()
        }
    }

    /// The columns whose values differ between the rows of one sample.
    fn varying_columns(&self, g: &Grouping) -> Vec<(ColumnRef, String, Vec<usize>)> {
        let mut columns: Vec<ColumnRef> = [
            Role::Items,
            Role::CoefType,
            Role::Sd,
            Role::SdMetric,
            Role::ScaleMin,
            Role::ScaleMax,
        ]
        .into_iter()
        .filter(|r| self.columns.contains_key(r))
        .map(ColumnRef::Standard)
        .collect();
        columns.extend((0..self.extra_columns.len()).map(ColumnRef::Other));
        let mut members: Vec<Vec<usize>> = vec![Vec::new(); g.samples()];
        for (i, &s) in g.sample.iter().enumerate() {
            members[s].push(i);
        }
        let mut out = Vec::new();
        for c in columns {
            let differing = members.iter().find(|m| {
                let first = self.records[m[0]].value(c);
                m.iter().any(|&i| self.records[i].value(c) != first)
            });
            if let Some(m) = differing {
                let r = &self.records[m[0]];
                out.push((
                    c,
                    r.sample.clone().unwrap_or_else(|| r.label.clone()),
                    m.iter().map(|&i| self.records[i].row).collect(),
                ));
            }
        }
        out
    }

    /// The grouping of the studies at `indices` (in that order), when the sheet groups
    /// its rows.
    pub fn grouping_of(&self, indices: &[usize]) -> Option<Grouping> {
        self.grouping.as_ref().map(|g| groups::restrict(g, indices))
    }

    /// The same sheet restricted to the studies at `indices` (in that order).
    pub fn subset(&self, indices: &[usize]) -> Prepared {
        let grouping = self.grouping_of(indices).filter(groups::shares_any);
        Prepared {
            records: indices.iter().map(|&i| self.records[i].clone()).collect(),
            y: indices.iter().map(|&i| self.y[i]).collect(),
            v: indices.iter().map(|&i| self.v[i]).collect(),
            warnings: Vec::new(),
            grouping,
            ..self.clone_shell()
        }
    }

    fn clone_shell(&self) -> Prepared {
        Prepared {
            source: self.source.clone(),
            extra_columns: self.extra_columns.clone(),
            columns: self.columns.clone(),
            transform: self.transform,
            transform_chosen: self.transform_chosen,
            records: Vec::new(),
            y: Vec::new(),
            v: Vec::new(),
            skipped: self.skipped.clone(),
            grouping: None,
            varying_within_sample: self.varying_within_sample.clone(),
            warnings: Vec::new(),
        }
    }

    /// The sheet's file name as the user gave it.
    pub fn file(&self) -> &str {
        &self.source.file
    }

    /// The column label used in messages for a standard column.
    pub fn column_label(&self, role: Role) -> String {
        match self.columns.get(&role) {
            Some(h) if h != role.name() => format!("{h} (used as {role})"),
            Some(h) => h.clone(),
            None => role.name().to_string(),
        }
    }
}

/// Check a coding sheet against the transform and put every usable study on its scale.
///
/// Fails, listing every problem, unless `skip_invalid` is set; fails also when fewer than
/// two studies remain.
pub fn prepare(sheet: CodingSheet, options: &BenchmarkOptions) -> Result<Prepared> {
    let source = sheet.summary();
    prepare_from(sheet, source, options)
}

/// [`prepare`] for a sheet already cut to a subset, with the summary that says so.
pub fn prepare_from(
    mut sheet: CodingSheet,
    source: SheetSummary,
    options: &BenchmarkOptions,
) -> Result<Prepared> {
    let mut warnings = Vec::new();
    let (transform, transform_chosen) = choose_transform(&sheet, options, &mut warnings)?;
    let tr = transform.get();
    check_needed_columns(&sheet, transform)?;

    // Check every parsed row against the transform.
    let mut problems = sheet.problems.clone();
    // Filtered in place: the records are not copied.
    let mut usable = std::mem::take(&mut sheet.records);
    usable.retain(|rec| {
        let unmet = tr.check(&study_input(rec));
        for u in &unmet {
            let label = sheet.column_label(role_of(u.field));
            problems.push(CellProblem::cell(rec.row, label, u.reason.as_str()));
        }
        unmet.is_empty()
    });
    check_partial_rows(&sheet, tr, &mut problems);
    problems.sort_by_key(|p| p.row);
    let values = keep_computable(&mut usable, transform, &mut problems);
    problems.sort_by_key(|p| p.row);
    if !problems.is_empty() && !options.skip_invalid {
        return Err(Error::InvalidSheet {
            file: sheet.file.clone(),
            problems,
        });
    }
    let skipped = group_skipped(&problems);
    if !skipped.is_empty() {
        warnings.push(Warning::RowsSkipped {
            count: skipped.len(),
        });
    }
    if usable.len() < 2 && !skipped.is_empty() {
        let mut m = msg![format!(
            "{}: only {} could be used, and a benchmark needs at least two; these rows were \
             left out:",
            sheet.file,
            crate::format::count(usable.len() as u64, "row", "rows")
        )];
        for s in &skipped {
            m = m.followed_by(format!("\n  {}: row {}: ", sheet.file, s.row));
            m = m.then(join_reasons(&s.reasons));
        }
        return Err(Error::CannotAnalyse(m));
    }

    // Rows are grouped when at least two share a sample or a cluster; a sheet whose sample
    // and cluster cells are empty or all different is pooled as one of independent rows.
    let columns = sheet.has(Role::Sample) || sheet.has(Role::Cluster);
    let mut grouping = None;
    if columns {
        let g = groups::grouping(&usable);
        let (split, notes) = groups::check(&usable, &g, &sheet.column_label(Role::Cluster));
        if !split.is_empty() {
            return Err(Error::InvalidSheet {
                file: sheet.file.clone(),
                problems: split,
            });
        }
        warnings.extend(notes);
        grouping = Some(g).filter(groups::shares_any);
    }
    sheet_warnings(&sheet, &usable, transform, &mut warnings);

    let (y, v): (Vec<f64>, Vec<f64>) = values.into_iter().unzip();
    Ok(Prepared {
        source,
        extra_columns: sheet.extra_columns.clone(),
        columns: sheet.columns.clone(),
        transform,
        transform_chosen,
        records: usable,
        y,
        v,
        skipped,
        grouping,
        varying_within_sample: Vec::new(),
        warnings,
    })
}

/// Fail when the sheet lacks a column the transform cannot do without.
fn check_needed_columns(sheet: &CodingSheet, transform: TransformKind) -> Result<()> {
    let mut needed = vec![Role::Coef];
    match transform {
        TransformKind::None => needed.push(Role::Var),
        TransformKind::FisherZ => needed.push(Role::N),
        _ => needed.extend([Role::N, Role::Items]),
    }
    let missing: Vec<&str> = needed
        .iter()
        .filter(|r| !sheet.has(**r))
        .map(|r| r.name())
        .collect();
    if missing.is_empty() {
        return Ok(());
    }
    Err(Error::InvalidSheet {
        file: sheet.file.clone(),
        problems: vec![CellProblem::row(
            1,
            msg![
                given(Setting::Transform, transform.name()),
                format!(
                    " needs the {} {} and the sheet has none; add them, or map the sheet's own \
                     names with ",
                    if missing.len() == 1 {
                        "column"
                    } else {
                        "columns"
                    },
                    missing.join(", ")
                ),
                given(Setting::ColumnMap, "ROLE=NAME")
            ],
        )],
    })
}

/// The sheet column behind a transform's input.
fn role_of(f: InputField) -> Role {
    match f {
        InputField::Coef => Role::Coef,
        InputField::N => Role::N,
        InputField::Items => Role::Items,
        InputField::Var => Role::Var,
    }
}

/// Check what could be read of the rows that did not parse, so that every problem of the
/// file is reported at once (a placeholder coefficient stands in for one that failed).
fn check_partial_rows(
    sheet: &CodingSheet,
    tr: &dyn CoefficientTransform,
    problems: &mut Vec<CellProblem>,
) {
    for part in &sheet.partial {
        let input = StudyInput {
            coef: part.coef.unwrap_or(0.5),
            n: part.n.map(|n| n as f64),
            items: part.items.map(f64::from),
            var: part.var,
        };
        for u in tr.check(&input) {
            let role = role_of(u.field);
            let placeholder = role == Role::Coef && part.coef.is_none();
            if !placeholder && !part.failed.contains(&role) {
                problems.push(CellProblem::cell(
                    part.row,
                    sheet.column_label(role),
                    u.reason.as_str(),
                ));
            }
        }
    }
}

/// Keep the studies with a finite value and a positive, finite variance on the
/// transform's scale, returning those values; the others become problems.
fn keep_computable(
    usable: &mut Vec<StudyRecord>,
    transform: TransformKind,
    problems: &mut Vec<CellProblem>,
) -> Vec<(f64, f64)> {
    let tr = transform.get();
    let mut values = Vec::with_capacity(usable.len());
    usable.retain(|rec| {
        let input = study_input(rec);
        let (y, v) = (tr.effect(&input).0, tr.variance(&input));
        if y.is_finite() && v.is_finite() && v > 0.0 {
            values.push((y, v));
            true
        } else {
            problems.push(CellProblem::row(
                rec.row,
                format!(
                    "the study's value on the {} scale ({y}) or its sampling variance ({v}) cannot \
                     be computed; check coef, n and items",
                    transform.name()
                ),
            ));
            false
        }
    });
    values
}

/// Reasons joined by "; " into one message.
pub fn join_reasons(reasons: &[Message]) -> Message {
    let mut m = Message::default();
    for (i, r) in reasons.iter().enumerate() {
        if i > 0 {
            m = m.followed_by("; ");
        }
        m = m.then(r.clone());
    }
    m
}

/// Build a benchmark from a coding sheet.
pub fn build(sheet: CodingSheet, options: &BenchmarkOptions) -> Result<Benchmark> {
    let prepared = prepare(sheet, options)?;
    from_prepared(prepared, &options.pool, &options.dependence)
}

/// Pool prepared studies into a benchmark; rows that the sheet groups into samples and
/// clusters are pooled as `dependence` says.
pub fn from_prepared(
    prepared: Prepared,
    options: &PoolOptions,
    dependence: &DependenceOptions,
) -> Result<Benchmark> {
    let grouping = prepared.grouping();
    let Prepared {
        source,
        transform,
        transform_chosen,
        records,
        y,
        v,
        skipped,
        mut warnings,
        ..
    } = prepared;
    let tr = transform.get();
    // Without a grouping every row is its own sample and its own cluster (a sheet whose
    // rows share no cluster shares no sample either).
    let counted = grouping
        .clone()
        .unwrap_or_else(|| Grouping::independent(records.len()));
    let (n_total, n_missing) = groups::respondents(&records, &counted);
    let (k_rows, k_samples, k_clusters) = (records.len(), counted.samples(), counted.clusters());
    let pooled = match &grouping {
        Some(g) => pool_dependent(&y, &v, g, options, dependence)?,
        None => pool(&y, &v, options)?,
    };
    warnings.extend(pooled.warnings.iter().cloned());
    let coefficient = coefficient_scale(tr, &pooled, &mut warnings);

    let mut coef_types = BTreeMap::new();
    let mut families = Vec::new();
    for r in &records {
        *coef_types.entry(r.coef_type.name()).or_insert(0) += 1;
        if !families.contains(&r.coef_type.family()) {
            families.push(r.coef_type.family());
        }
    }
    let aggregated = pooled
        .dependence
        .as_ref()
        .is_some_and(|d| d.method == DependenceMethod::Aggregate);
    let (records, y, v) = match (&grouping, aggregated) {
        (Some(g), true) => composite_studies(records, &y, &v, g, dependence, tr),
        _ => (records, y, v),
    };
    let studies = records
        .into_iter()
        .zip(y.iter().zip(&v))
        .zip(&pooled.weights_percent)
        .map(
            |((record, (&effect, &variance)), &weight_percent)| StudyEffect {
                record,
                effect,
                variance,
                weight_percent,
            },
        )
        .collect();

    Ok(Benchmark {
        source,
        transform,
        transform_chosen,
        families,
        coef_types,
        studies,
        skipped,
        n_total,
        n_missing,
        k_rows,
        k_samples,
        k_clusters,
        pool: pooled,
        coefficient,
        warnings,
    })
}

/// One study per sample: the sample's composite on the analysis scale, listed under the
/// sample's name at its first row, with its largest n and the composite mapped back.
fn composite_studies(
    records: Vec<StudyRecord>,
    y: &[f64],
    v: &[f64],
    g: &Grouping,
    dependence: &DependenceOptions,
    tr: &dyn CoefficientTransform,
) -> (Vec<StudyRecord>, Vec<f64>, Vec<f64>) {
    let (ys, vs, rows) = composites(y, v, &g.sample, dependence.sampling_correlation);
    let out = rows
        .iter()
        .zip(&ys)
        .map(|(members, &yc)| {
            let mut r = records[members[0]].clone();
            if let Some(s) = &r.sample {
                r.label = s.clone();
                r.label_given = true;
            }
            r.n = members.iter().filter_map(|&i| records[i].n).max();
            if let Some(c) = tr.back(Transformed(yc)) {
                r.coef = c.0;
            }
            r
        })
        .collect();
    (out, ys, vs)
}

/// What a transform needs to know about a study record.
pub fn study_input(r: &StudyRecord) -> StudyInput {
    StudyInput {
        coef: r.coef,
        n: r.n.map(|n| n as f64),
        items: r.items.map(f64::from),
        var: r.var,
    }
}

fn choose_transform(
    sheet: &CodingSheet,
    options: &BenchmarkOptions,
    warnings: &mut Vec<Warning>,
) -> Result<(TransformKind, bool)> {
    let rows_of = |family: CoefficientFamily| -> Vec<usize> {
        sheet
            .records
            .iter()
            .filter(|r| r.coef_type.family() == family)
            .map(|r| r.row)
            .collect()
    };
    let ic = rows_of(CoefficientFamily::InternalConsistency);
    let corr = rows_of(CoefficientFamily::Correlation);
    if options.transform == Some(TransformKind::None) {
        return Ok((TransformKind::None, true));
    }
    let mixed = !ic.is_empty() && !corr.is_empty();
    if mixed {
        if !options.allow_mixed_types {
            return Err(Error::cannot(msg![
                format!(
                    "{}: the sheet mixes internal-consistency coefficients ({}) and \
                     correlation-type coefficients ({}); they answer different questions and \
                     have different default transforms. Pool them separately (for example with ",
                    sheet.file,
                    crate::warning::list_rows(&ic),
                    crate::warning::list_rows(&corr)
                ),
                given(Setting::Subset, "coef_type=alpha"),
                "), or ask for ",
                Setting::MixedTypes,
                " together with ",
                Setting::Transform,
                " to pool them on one scale"
            ]));
        }
        let Some(t) = options.transform else {
            return Err(Error::setting(
                Setting::MixedTypes,
                msg![
                    Setting::MixedTypes,
                    " needs ",
                    Setting::Transform,
                    " as well: say on which scale the two kinds of coefficients are to be pooled"
                ],
            ));
        };
        warnings.push(Warning::MixedFamiliesPooled);
        push_mismatch(t, &ic, &corr, warnings);
        return Ok((t, true));
    }
    let family = if corr.is_empty() {
        CoefficientFamily::InternalConsistency
    } else {
        CoefficientFamily::Correlation
    };
    match options.transform {
        Some(t) => {
            push_mismatch(t, &ic, &corr, warnings);
            Ok((t, true))
        }
        None => Ok((family.default_transform(), false)),
    }
}

fn push_mismatch(t: TransformKind, ic: &[usize], corr: &[usize], warnings: &mut Vec<Warning>) {
    if let Some(designed) = t.designed_for() {
        let other = match designed {
            CoefficientFamily::InternalConsistency => corr,
            CoefficientFamily::Correlation => ic,
        };
        if !other.is_empty() {
            warnings.push(Warning::TransformFamilyMismatch {
                transform: t.name().to_string(),
                designed_for: designed.describe().to_string(),
                rows: other.to_vec(),
            });
        }
    }
}

fn group_skipped(problems: &[CellProblem]) -> Vec<SkippedRow> {
    let mut out: Vec<SkippedRow> = Vec::new();
    for p in problems {
        let Some(row) = p.row else { continue };
        let reason = match &p.column {
            Some(c) => p.reason.clone().prefixed(format!("column {c}: ")),
            None => p.reason.clone(),
        };
        match out.last_mut() {
            Some(last) if last.row == row => last.reasons.push(reason),
            _ => out.push(SkippedRow {
                row,
                reasons: vec![reason],
            }),
        }
    }
    out
}

fn sheet_warnings(
    sheet: &CodingSheet,
    usable: &[StudyRecord],
    transform: TransformKind,
    warnings: &mut Vec<Warning>,
) {
    warnings.extend(sheet.reading_notes.iter().cloned());
    if !sheet.empty_rows.is_empty() {
        warnings.push(Warning::EmptyRowsIgnored {
            rows: sheet.empty_rows.clone(),
        });
    }
    if transform != TransformKind::None {
        let negative: Vec<usize> = usable
            .iter()
            .filter(|r| r.coef < 0.0)
            .map(|r| r.row)
            .collect();
        if !negative.is_empty() {
            warnings.push(Warning::NegativeCoefficients { rows: negative });
        }
        let with_var: Vec<usize> = usable
            .iter()
            .filter(|r| r.var.is_some())
            .map(|r| r.row)
            .collect();
        if !with_var.is_empty() {
            warnings.push(Warning::VarColumnUnused {
                rows: with_var,
                transform: transform.name().to_string(),
            });
        }
    }
    // First row of each label; rows of the labels seen more than once.
    let mut first: std::collections::HashMap<&str, usize> =
        std::collections::HashMap::with_capacity(usable.len());
    let mut repeated: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
    for r in usable.iter().filter(|r| r.label_given) {
        match first.entry(r.label.as_str()) {
            std::collections::hash_map::Entry::Vacant(e) => {
                e.insert(r.row);
            }
            std::collections::hash_map::Entry::Occupied(e) => repeated
                .entry(r.label.as_str())
                .or_insert_with(|| vec![*e.get()])
                .push(r.row),
        }
    }
    let mut dups: Vec<(&str, Vec<usize>)> = repeated.into_iter().collect();
    dups.sort_by_key(|(_, rows)| rows[0]);
    for (label, rows) in dups {
        warnings.push(Warning::DuplicateLabel {
            label: label.to_string(),
            rows,
        });
    }
}

fn coefficient_scale(
    tr: &dyn CoefficientTransform,
    pooled: &PoolResult,
    warnings: &mut Vec<Warning>,
) -> Option<CoefficientScale> {
    let estimate = tr.back(Transformed(pooled.estimate))?.0;
    let ci = back_interval(
        tr,
        Transformed(pooled.ci.lower),
        Transformed(pooled.ci.upper),
    )?;
    if ci.capped {
        warnings.push(Warning::IntervalCapped {
            interval: "confidence interval".into(),
        });
    }
    let pi = pooled
        .prediction
        .interval()
        .and_then(|p| back_interval(tr, Transformed(p.lower), Transformed(p.upper)));
    if pi.map(|p| p.capped).unwrap_or(false) {
        warnings.push(Warning::IntervalCapped {
            interval: "prediction interval".into(),
        });
    }
    if let Some(i) = pi
        && i.lower < 0.0
    {
        warnings.push(Warning::RangeBelowZero { lower: i.lower });
    }
    let pi_at_tau2_upper = pooled
        .prediction_at_tau2_upper
        .and_then(|p| back_interval(tr, Transformed(p.lower), Transformed(p.upper)));
    Some(CoefficientScale {
        estimate: estimate.min(crate::transform::COEFFICIENT_MAX),
        ci,
        pi,
        pi_at_tau2_upper,
    })
}

/// The coefficient types in a benchmark, e.g. "alpha" or "alpha and omega".
pub fn describe_types(b: &Benchmark) -> String {
    let names: Vec<&str> = b.coef_types.keys().copied().collect();
    match names.len() {
        0 => String::new(),
        1 => names[0].to_string(),
        _ => {
            let (last, first) = names.split_last().expect("two or more");
            format!("{} and {last}", first.join(", "))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sheet::{SheetOptions, parse_coding_sheet};

    fn sheet(text: &str) -> CodingSheet {
        parse_coding_sheet("t.csv", text.as_bytes(), &SheetOptions::default()).unwrap()
    }

    #[test]
    fn all_problems_are_listed_together() {
        let s = sheet("study,coef,n,items\nA,1.07,100,6\nB,0.8,2,1\nC,0.7,90,6\nD,x,80,5\n");
        let e = build(s, &BenchmarkOptions::default()).unwrap_err();
        let msg = e.to_string();
        assert!(
            msg.contains(
                "row 2, column coef: 1.07 is not a reliability coefficient (it must be below 1)"
            ),
            "{msg}"
        );
        assert!(msg.contains("row 3, column n:"), "{msg}");
        assert!(msg.contains("row 3, column items:"), "{msg}");
        assert!(msg.contains("row 5, column coef:"), "{msg}");
        assert!(e.is_bad_input());
    }

    #[test]
    fn skip_invalid_lists_rows() {
        let s = sheet("study,coef,n,items\nA,1.07,100,6\nB,0.8,120,6\nC,0.7,90,6\nD,0.75,80,6\n");
        let opts = BenchmarkOptions {
            skip_invalid: true,
            ..BenchmarkOptions::default()
        };
        let b = build(s, &opts).unwrap();
        assert_eq!(b.studies.len(), 3);
        assert_eq!(b.skipped.len(), 1);
        assert_eq!(b.skipped[0].row, 2);
        assert!(
            b.skipped[0].reasons[0]
                .to_string()
                .starts_with("column coef:")
        );
    }

    #[test]
    fn mixed_families_are_refused_unless_allowed() {
        let text = "coef,n,items,coef_type\n0.8,100,6,alpha\n0.7,90,6,retest\n0.75,80,6,alpha\n";
        assert!(build(sheet(text), &BenchmarkOptions::default()).is_err());
        let opts = BenchmarkOptions {
            allow_mixed_types: true,
            transform: Some(TransformKind::Bonett),
            ..BenchmarkOptions::default()
        };
        let b = build(sheet(text), &opts).unwrap();
        assert!(
            b.warnings
                .iter()
                .any(|w| matches!(w, Warning::MixedFamiliesPooled))
        );
    }

    #[test]
    fn default_transform_follows_the_family() {
        let b = build(
            sheet("coef,n,coef_type\n0.8,100,retest\n0.7,90,retest\n0.6,50,retest\n"),
            &BenchmarkOptions::default(),
        )
        .unwrap();
        assert_eq!(b.transform, TransformKind::FisherZ);
        let c = b.coefficient.unwrap();
        assert!(c.ci.lower < c.estimate && c.estimate < c.ci.upper);
    }
}
