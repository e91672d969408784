//! The benchmark model fitted for a study with given moderator values: the one owner of
//! "the design plus the new study's row", for the placement and a benchmark used as a
//! reliability; the multilevel model when the sheet's rows share samples or clusters.

use super::dependent::{self, multilevel_grouping};
use super::{Centring, Design, ModeratorSpec, build_design};
use crate::benchmark::Prepared;
use crate::error::{Error, Result};
use crate::pool::{FitOptions, MetaData, ModelFit, fit_model};
use crate::setting::{Setting, msg};
use std::collections::BTreeMap;

/// A model fitted for a study with given moderator values: the fit, its design (none
/// without moderators) and the study's design row.
#[derive(Debug, Clone)]
pub struct FitAt {
    /// The fit (intercept only without moderators).
    pub fit: ModelFit,
    /// The design, when there are moderators.
    pub design: Option<Design>,
    /// The study's design row.
    pub x0: Vec<f64>,
    /// The multilevel fit behind `fit`, when the sheet's rows share samples or clusters.
    pub dependent: Option<Box<super::DependentExplanation>>,
}

/// Fit the benchmark model for a study with the moderator values `at` (intercept only when
/// `moderators` is empty): the one owner of "the design plus the new study's row". `setting`
/// names where the values came from in messages.
pub fn fit_at(
    p: &Prepared,
    moderators: &[ModeratorSpec],
    at: &BTreeMap<String, String>,
    centring: Centring,
    options: &FitOptions,
    setting: Setting,
) -> Result<FitAt> {
    if moderators.is_empty() {
        if !at.is_empty() {
            return Err(Error::setting(
                setting,
                msg![
                    setting,
                    " sets moderator values, but no ",
                    Setting::Moderators,
                    " was given"
                ],
            ));
        }
        let all: Vec<usize> = (0..p.records.len()).collect();
        if let Some(g) = multilevel_grouping(p, &all, options) {
            let design = build_design(p, &[], centring)?;
            let ex = dependent::explain_dependent(p, design, options, &options.dependence, &g)?;
            return Ok(FitAt {
                fit: ex.fit,
                design: None,
                x0: vec![1.0],
                dependent: ex.dependent,
            });
        }
        let data = MetaData::intercept_only(p.y.clone(), p.v.clone())?;
        return Ok(FitAt {
            fit: fit_model(&data, options)?,
            design: None,
            x0: vec![1.0],
            dependent: None,
        });
    }
    let design = build_design(p, moderators, centring)?;
    let x0 = design.row_for(at, p.source.format, setting)?;
    if let Some(g) = multilevel_grouping(p, &design.used, options) {
        let ex = dependent::explain_dependent(p, design, options, &options.dependence, &g)?;
        return Ok(FitAt {
            fit: ex.fit,
            design: Some(ex.design),
            x0,
            dependent: ex.dependent,
        });
    }
    let (y, v) = design.effects(&p.y, &p.v);
    let data = MetaData::with_design(y, v, design.x.clone())?;
    Ok(FitAt {
        fit: fit_model(&data, options)?,
        design: Some(design),
        x0,
        dependent: None,
    })
}
