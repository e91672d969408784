//! The one entry point every face calls: [`Settings`] in, a typed [`Analysis`] out.
//!
//! A face (the command line, a browser page) resolves its inputs into `Settings` once and
//! calls [`run`]; every output — readable text, JSON, the paragraphs, the report page and
//! its figures — is rendered from the `Analysis` it returns. Nothing here prints, and no
//! part of a result travels as untyped data.

mod compare;
mod correction;
mod explain;
mod icc;
mod items;
pub mod settings;
mod sheet;

pub use compare::Comparison;
pub use correction::{Correction, ScoreItems};
pub use explain::Explained;
pub use icc::IccOutcome;
pub use items::{ItemsOutcome, OrdinalPart};
pub use settings::*;

use crate::benchmark::{Benchmark, Prepared, from_prepared};
use crate::error::Result;
use crate::placement::{Conditions, Placement, place};
use crate::plan::{SampleSize, n_for_test, n_for_width};
use crate::pool::FitOptions;
use crate::warning::Warning;

/// A long task a run reports progress on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Task {
    /// Permutations of a meta-regression.
    Permutations,
    /// Bootstrap replicates.
    Bootstrap,
    /// Monte Carlo draws.
    Draws,
    /// Leave-one-out refits.
    Influence,
    /// The one-factor models of an item set.
    FactorModels,
}

impl Task {
    /// The task in a word, for a progress display.
    pub fn name(self) -> &'static str {
        match self {
            Task::Permutations => "permutations",
            Task::Bootstrap => "bootstrap",
            Task::Draws => "draws",
            Task::Influence => "studies left out in turn",
            Task::FactorModels => "one-factor models",
        }
    }
}

/// Where a run reports the progress of its long tasks (a face shows it or not).
pub trait Progress: Sync {
    /// A task of `total` steps starts.
    fn start(&self, task: Task, total: u64);
    /// `steps` more steps are done.
    fn advance(&self, steps: u64);
    /// The task has ended.
    fn finish(&self);
    /// True once whoever watches has asked the run to stop (the browser page's stop
    /// button): the permutation test then ends early and the run fails with a message
    /// that says so.
    fn stop_asked(&self) -> bool {
        false
    }
}

/// Progress that nobody watches.
#[derive(Debug, Clone, Copy, Default)]
pub struct Silent;

impl Progress for Silent {
    fn start(&self, _: Task, _: u64) {}
    fn advance(&self, _: u64) {}
    fn finish(&self) {}
}

/// Run a long task under a progress display.
pub(crate) fn with_progress<T>(
    progress: &dyn Progress,
    task: Task,
    total: usize,
    work: impl FnOnce(&(dyn Fn(usize) + Sync)) -> T,
) -> T {
    progress.start(task, total as u64);
    let out = work(&|d| progress.advance(d as u64));
    progress.finish();
    out
}

/// A sample size and what it was planned for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlanOutcome {
    /// What was planned.
    pub plan: PlanSettings,
    /// The sample size.
    pub size: SampleSize,
}

/// Everything one run found, part by part (a part is `None` when it was not asked for).
#[derive(Debug, Clone)]
pub struct Analysis {
    /// The settings the run was given.
    pub settings: Settings,
    /// The coding sheet, read and checked, its studies on the analysis scale (one composite
    /// per sample under dependence aggregate, as the models other than the benchmark saw
    /// them).
    pub prepared: Option<Prepared>,
    /// The SHA-256 of the coding sheet's bytes (hex).
    pub sheet_sha256: Option<String>,
    /// The pooled benchmark.
    pub benchmark: Option<Benchmark>,
    /// The explanation of the differences between studies.
    pub explanation: Option<Explained>,
    /// Where the new study falls.
    pub placement: Option<Placement>,
    /// The what-if correction.
    pub correction: Option<Correction>,
    /// Reliability from raw item data.
    pub items: Option<ItemsOutcome>,
    /// Intraclass correlations of a table of scores.
    pub icc: Option<IccOutcome>,
    /// Tests of equality for alphas.
    pub comparison: Option<Comparison>,
    /// A sample size.
    pub plan: Option<PlanOutcome>,
}

impl Analysis {
    /// Every warning of the run, each once, in the order the parts ran.
    pub fn warnings(&self) -> Vec<Warning> {
        let mut all: Vec<Warning> = Vec::new();
        let parts: [&[Warning]; 7] = [
            self.benchmark.as_ref().map_or(&[], |b| &b.warnings),
            self.explanation.as_ref().map_or(&[], |e| &e.warnings),
            self.placement.as_ref().map_or(&[], |p| &p.warnings),
            self.correction.as_ref().map_or(&[], |c| c.warnings()),
            self.items.as_ref().map_or(&[], |i| &i.warnings),
            self.icc.as_ref().map_or(&[], |i| &i.warnings),
            self.comparison.as_ref().map_or(&[], |c| &c.warnings),
        ];
        for w in parts.into_iter().flatten() {
            if !all.contains(w) {
                all.push(w.clone());
            }
        }
        all
    }

    /// The fit options of the benchmark model.
    pub fn fit_options(&self) -> FitOptions {
        fit_options(&self.settings)
    }
}

/// The fit options of the benchmark model (with τ²'s interval).
pub(crate) fn fit_options(s: &Settings) -> FitOptions {
    FitOptions {
        model: s.model.model,
        ci: s.model.interval,
        level: s.level,
        tau2_interval: true,
        dependence: s.model.dependence,
    }
}

/// Run every part the settings ask for. The coding sheet is read and checked once;
/// every part that uses it starts from the same prepared studies.
pub fn run(settings: &Settings, progress: &dyn Progress) -> Result<Analysis> {
    settings.check_bounds()?;
    let needs_sheet = settings.benchmark
        || settings.explain.is_some()
        || settings.new_study.is_some()
        || settings
            .correction
            .as_ref()
            .is_some_and(correction::uses_this_benchmark);
    let (prepared, sheet_sha256) = match (&settings.sheet, needs_sheet) {
        (Some(sheet), true) => {
            let (p, sha) = sheet::read_and_prepare(sheet, &settings.benchmark_options())?;
            (Some(p), Some(sha))
        }
        _ => (None, None),
    };
    let benchmark = match (&prepared, settings.benchmark) {
        (Some(p), true) => Some(from_prepared(
            p.clone(),
            &settings.pool_options(),
            &settings.model.dependence,
        )?),
        _ => None,
    };
    // Composites of each sample for the models other than the benchmark's own (which forms
    // them itself, at every sampling correlation of its sensitivity table).
    let modelled = prepared.map(|p| {
        let dep = &settings.model.dependence;
        match crate::pool::dependence::method_in_force(dep, p.grouped()) {
            crate::pool::dependence::DependenceMethod::Aggregate => {
                p.aggregated(dep.sampling_correlation)
            }
            _ => p,
        }
    });
    let prepared_for_models = &modelled;
    let explanation = match (prepared_for_models, &settings.explain) {
        (Some(p), Some(e)) => Some(explain::explain(p, settings, e, progress)?),
        _ => None,
    };
    let placement = match (prepared_for_models, &settings.new_study) {
        (Some(p), Some(n)) => Some(place(
            p,
            &n.study,
            &Conditions {
                moderators: &settings.moderators.specs,
                at: &n.at,
                centring: settings.moderators.centring,
                spread_metric: settings.moderators.spread_metric,
                in_cluster: n.in_cluster.as_deref(),
            },
            &fit_options(settings),
        )?),
        _ => None,
    };
    let correction = match &settings.correction {
        Some(c) => Some(correction::correct(
            c,
            prepared_for_models.as_ref(),
            settings,
            progress,
        )?),
        None => None,
    };
    let items = match &settings.items {
        Some(i) => Some(items::items(i, settings, progress)?),
        None => None,
    };
    let icc = match &settings.icc {
        Some(i) => Some(icc::icc(i, settings)?),
        None => None,
    };
    let comparison = match &settings.comparison {
        Some(c) => Some(compare::compare(c, settings)?),
        None => None,
    };
    let plan = match settings.plan {
        Some(p) => Some(PlanOutcome {
            plan: p,
            size: plan(&p, settings)?,
        }),
        None => None,
    };
    Ok(Analysis {
        settings: settings.clone(),
        // The studies as the explanation, the placement and the correction saw them (one
        // composite per sample under dependence aggregate; the benchmark lists its own).
        prepared: modelled,
        sheet_sha256,
        benchmark,
        explanation,
        placement,
        correction,
        items,
        icc,
        comparison,
        plan,
    })
}

fn plan(p: &PlanSettings, s: &Settings) -> Result<SampleSize> {
    match *p {
        PlanSettings::Width {
            items,
            planning,
            width,
        } => n_for_width(planning, width, items, s.level),
        PlanSettings::Test {
            items,
            planning,
            null,
            power,
            significance,
            one_sided,
        } => n_for_test(null, planning, items, significance, power, one_sided),
    }
}
