//! Reliability from raw item data: read, analysed, and omega bootstrapped on request.

use super::settings::{FactorSpec, ItemSettings, Settings};
use super::{Progress, Task, with_progress};
use crate::error::Result;
use crate::items::bootstrap::{OmegaBootstrap, bootstrap_omega};
use crate::items::multidimensional::{FactorGroups, MultidimensionalAnalysis, analyze_structure};
use crate::items::polychoric::{categorical_omega, ordinal_alpha, ordinal_items};
use crate::items::{
    ItemAnalysis, ItemData, analyze, analyze_with, read_items, read_items_from_bytes,
};
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
    /// The items taken as ordinal, when asked for: the polychoric correlations and ordinal
    /// alpha, or why they could not be computed.
    pub ordinal: Option<std::result::Result<OrdinalPart, String>>,
    /// The bifactor and correlated-factors models, when groups of items were given, or why
    /// they could not be fitted.
    pub multidimensional: Option<std::result::Result<MultidimensionalAnalysis, String>>,
    /// Every warning (the reading's and the bootstrap's).
    pub warnings: Vec<Warning>,
}

/// The items taken as ordinal.
#[derive(Debug, Clone)]
pub struct OrdinalPart {
    /// The polychoric correlation matrix (two-step maximum likelihood).
    pub polychoric: nalgebra::DMatrix<f64>,
    /// Ordinal alpha: alpha of that matrix.
    pub alpha: f64,
    /// Categorical omega (Green & Yang 2009) from a one-factor model of the polychoric
    /// matrix, or why it could not be computed.
    pub omega: std::result::Result<f64, String>,
}

/// Items from which the factor fits are shown as progress (they take seconds only for
/// hundreds of items).
const PROGRESS_ITEMS: usize = 100;

pub(crate) fn items(
    i: &ItemSettings,
    s: &Settings,
    progress: &dyn Progress,
) -> Result<ItemsOutcome> {
    let mut read = i.read.clone();
    read.keep_rows = i.bootstrap.is_some() || i.ordinal;
    let data = match &i.bytes {
        Some(b) => read_items_from_bytes(&i.path, b, &read)?,
        None => read_items(&i.path, &read)?,
    };
    let analysis = if data.moments.k() >= PROGRESS_ITEMS {
        with_progress(progress, Task::FactorModels, 2, |tick| {
            analyze_with(&data, s.level, tick)
        })?
    } else {
        analyze(&data, s.level)?
    };
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
    let ordinal = match (i.ordinal, &data.rows) {
        (true, Some(rows)) => Some(
            ordinal_items(rows, data.names.len(), &data.names)
                .map(|o| OrdinalPart {
                    alpha: ordinal_alpha(&o.polychoric),
                    omega: ordinal_omega(&o, rows),
                    polychoric: o.polychoric,
                })
                .map_err(|e| e.to_string()),
        ),
        (true, None) => Some(Err("the rows were not kept".to_string())),
        (false, _) => None,
    };
    let multidimensional = if i.factors.is_empty() {
        None
    } else {
        let groups = resolve_groups(&i.factors, &data.names)?;
        Some(structure(&data, groups, &mut warnings))
    };
    Ok(ItemsOutcome {
        data,
        analysis,
        bootstrap,
        ordinal,
        multidimensional,
        warnings,
    })
}

/// Categorical omega from the one-factor model of the polychoric matrix (maximum likelihood
/// on the matrix, so the loadings are standardized) and the sample variance of the observed
/// sum of `rows`.
fn ordinal_omega(
    o: &crate::items::polychoric::OrdinalItems,
    rows: &[f64],
) -> std::result::Result<f64, String> {
    use crate::items::factor::{FactorModel, fit_one_factor};
    let r = &o.polychoric;
    let k = r.nrows();
    if r.clone().cholesky().is_none() {
        return Err(
            "the polychoric matrix is not positive definite (pairs estimated one by \
                    one need not fit together), so no factor model of it is fitted"
                .into(),
        );
    }
    let fit = fit_one_factor(r, FactorModel::Congeneric).map_err(|e| e.to_string())?;
    if !fit.stop.converged() {
        return Err(format!(
            "the one-factor model of the polychoric matrix did not converge ({} iterations)",
            fit.iterations
        ));
    }
    if !fit.heywood.is_empty() {
        return Err(
            "the one-factor model of the polychoric matrix is improper (a uniqueness \
                    at zero), so categorical omega is not trustworthy"
                .into(),
        );
    }
    let n = rows.len() / k;
    let sums: Vec<f64> = rows.chunks(k).map(|r| r.iter().sum()).collect();
    let mean = sums.iter().sum::<f64>() / n as f64;
    let var = sums.iter().map(|s| (s - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
    Ok(categorical_omega(o, &fit.loadings, var))
}

/// The groups of items as indices, or an error naming the item or group at fault: every
/// item analysed in exactly one group, every item named among those analysed.
fn resolve_groups(specs: &[FactorSpec], names: &[String]) -> Result<FactorGroups> {
    let bad = |m: crate::Message| {
        let m = m.prefixed(": ").prefixed(crate::Setting::FactorGroups);
        crate::Error::setting(crate::Setting::FactorGroups, m)
    };
    let mut of_item: Vec<Option<usize>> = vec![None; names.len()];
    for (g, spec) in specs.iter().enumerate() {
        for item in &spec.items {
            let Some(i) = names.iter().position(|n| n == item) else {
                return Err(bad(format!(
                    "group {} names {item:?}, which is not among the items analysed ({})",
                    spec.name,
                    crate::format::quote_list(names, 12)
                )
                .into()));
            };
            if let Some(h) = of_item[i] {
                return Err(bad(format!(
                    "item {item} is in two groups ({} and {}); each item belongs to one",
                    specs[h].name, spec.name
                )
                .into()));
            }
            of_item[i] = Some(g);
        }
    }
    let left: Vec<String> = (0..names.len())
        .filter(|&i| of_item[i].is_none())
        .map(|i| names[i].clone())
        .collect();
    if !left.is_empty() {
        return Err(bad(crate::setting::msg![
            format!(
                "{} {} in no group; every item analysed belongs to exactly one (choose the \
                 items analysed with ",
                crate::format::quote_list(&left, 12),
                if left.len() == 1 { "is" } else { "are" }
            ),
            crate::Setting::ItemColumns,
            ")"
        ]));
    }
    Ok(FactorGroups {
        names: specs.iter().map(|s| s.name.clone()).collect(),
        of_item: of_item.into_iter().map(|g| g.unwrap_or(0)).collect(),
    })
}

/// The multidimensional models, or why none can be fitted (too many items, too few
/// respondents).
fn structure(
    data: &ItemData,
    groups: FactorGroups,
    warnings: &mut Vec<Warning>,
) -> std::result::Result<MultidimensionalAnalysis, String> {
    let (k, n) = (data.moments.k(), data.n_used() as f64);
    if k > crate::limits::MAX_STRUCTURE_ITEMS {
        return Err(format!(
            "with {} items (more than {}) the bifactor and correlated-factors models are not \
             fitted (a bound on time, see docs/limits.md)",
            crate::format::thousands(k as u64),
            crate::limits::MAX_STRUCTURE_ITEMS
        ));
    }
    if n <= k as f64 {
        return Err(format!(
            "with {n} respondents and {k} items the items' covariance matrix is singular, so \
             no factor model can be fitted"
        ));
    }
    let m = analyze_structure(&data.moments.cov, n, groups, &data.names);
    for (what, fit) in [
        ("the bifactor model", &m.bifactor),
        ("the correlated-factors model", &m.correlated),
    ] {
        if let Ok(f) = fit
            && !f.stop.converged()
        {
            warnings.push(Warning::ItemModelNotConverged {
                what: what.into(),
                iterations: f.iterations,
            });
        }
    }
    Ok(m)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{Progress, Task};
    use std::sync::Mutex;

    /// What a progress display was told.
    #[derive(Default)]
    struct Recorder(Mutex<Vec<(Task, u64, u64)>>);

    impl Progress for Recorder {
        fn start(&self, task: Task, total: u64) {
            self.0.lock().unwrap().push((task, total, 0));
        }
        fn advance(&self, steps: u64) {
            if let Some(last) = self.0.lock().unwrap().last_mut() {
                last.2 += steps;
            }
        }
        fn finish(&self) {}
    }

    /// A wide item set shows the one-factor fits as a task of two steps, both done; a
    /// narrow one shows nothing.
    #[test]
    fn wide_item_sets_report_the_factor_fits() {
        let dir = std::env::temp_dir().join(format!("relyard-progress-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        for (k, shown) in [(120usize, true), (5, false)] {
            let mut text: String = (1..=k)
                .map(|i| format!("q{i}"))
                .collect::<Vec<_>>()
                .join(",");
            text.push('\n');
            let mut state: u64 = 88_172_645_463_325_252;
            let mut next = move || {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                state
            };
            for _ in 0..300usize {
                let common = next() % 3;
                let row: Vec<String> = (0..k)
                    .map(|_| (1 + common + next() % 3).to_string())
                    .collect();
                text.push_str(&row.join(","));
                text.push('\n');
            }
            let path = dir.join(format!("items{k}.csv"));
            std::fs::write(&path, text).unwrap();
            let settings = Settings {
                items: Some(ItemSettings {
                    path,
                    ..ItemSettings::default()
                }),
                ..Settings::default()
            };
            let recorder = Recorder::default();
            items(settings.items.as_ref().unwrap(), &settings, &recorder).unwrap();
            let seen = recorder.0.into_inner().unwrap();
            if shown {
                assert_eq!(seen, vec![(Task::FactorModels, 2, 2)]);
            } else {
                assert!(seen.is_empty(), "{seen:?}");
            }
        }
        let _ = std::fs::remove_dir_all(&dir);
    }
}
