//! Intraclass correlations from a persons × occasions (or targets × raters) table: the
//! forms of McGraw & Wong (1996) — one-way random, two-way random and two-way mixed;
//! consistency and absolute agreement; single and average measures — from one two-way
//! analysis of variance, each with its F-based confidence interval and its F test of ρ = 0,
//! and the standard error of measurement and smallest detectable change.
//!
//! # References
//! McGraw, K. O., & Wong, S. P. (1996). Forming inferences about some intraclass correlation
//! coefficients. *Psychological Methods*, 1(1), 30–46.
//! Shrout, P. E., & Fleiss, J. L. (1979). Intraclass correlations: Uses in assessing rater
//! reliability. *Psychological Bulletin*, 86(2), 420–428.

use crate::dist::{f_quantile, f_sf};
use crate::error::{Error, Result};
use crate::level::Level;
use serde::Serialize;

/// The model behind a form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum IccModel {
    /// Each target rated by a different set of raters (or occasions not the same for all).
    OneWay,
    /// Raters (occasions) a random sample of possible ones.
    TwoWayRandom,
    /// These raters (occasions) only.
    TwoWayMixed,
}

/// What agreement means.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum IccType {
    /// Scores that differ by a constant count as agreeing (rater or occasion means ignored).
    Consistency,
    /// Scores must be equal (differences in rater or occasion means count against).
    Agreement,
}

/// One measurement or the mean of the k.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum IccUnit {
    /// The reliability of one rater's (occasion's) score.
    Single,
    /// The reliability of the mean of the k scores.
    Average,
}

impl IccModel {
    /// The model's name.
    pub fn name(self) -> &'static str {
        match self {
            IccModel::OneWay => "one-way",
            IccModel::TwoWayRandom => "two-way-random",
            IccModel::TwoWayMixed => "two-way-mixed",
        }
    }
}

impl IccType {
    /// The type's name.
    pub fn name(self) -> &'static str {
        match self {
            IccType::Consistency => "consistency",
            IccType::Agreement => "agreement",
        }
    }
}

impl IccUnit {
    /// The unit's name.
    pub fn name(self) -> &'static str {
        match self {
            IccUnit::Single => "single",
            IccUnit::Average => "average",
        }
    }
}

/// One intraclass correlation with its interval and test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IccForm {
    /// The model.
    pub model: IccModel,
    /// Consistency or absolute agreement.
    pub kind: IccType,
    /// Single or average measures.
    pub unit: IccUnit,
    /// The estimate.
    pub value: f64,
    /// The confidence interval at the run's level.
    pub ci: (f64, f64),
    /// The F statistic of the test of ρ = 0, its degrees of freedom and p.
    pub f: f64,
    /// Numerator degrees of freedom.
    pub df1: f64,
    /// Denominator degrees of freedom.
    pub df2: f64,
    /// P(F(df1, df2) > f).
    pub p: f64,
}

/// The mean squares of the persons × occasions table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeanSquares {
    /// Between rows (persons, targets): MSR on n − 1 df.
    pub rows: f64,
    /// Within rows (one-way): MSW on n(k − 1) df.
    pub within: f64,
    /// Between columns (occasions, raters): MSC on k − 1 df.
    pub columns: f64,
    /// Residual (two-way): MSE on (n − 1)(k − 1) df.
    pub error: f64,
}

/// Every form for one table, the standard error of measurement and the smallest detectable
/// change.
#[derive(Debug, Clone, PartialEq)]
pub struct IccAnalysis {
    /// Rows (persons, targets) with every cell.
    pub n: usize,
    /// Columns (occasions, raters).
    pub k: usize,
    /// The mean squares.
    pub mean_squares: MeanSquares,
    /// Standard deviation of all the scores (every cell of the table).
    pub sd: f64,
    /// The forms: one-way (single, average), then two-way random and two-way mixed, each
    /// consistency (single, average) and agreement (single, average).
    pub forms: Vec<IccForm>,
    /// SEM = SD·√(1 − ICC(A,1)): the standard error of measurement from the two-way
    /// agreement form for single measures (the form for test–retest and for one rater).
    pub sem: f64,
    /// The smallest detectable change, 1.96·√2·SEM (at 95%, whatever the run's level).
    pub sdc: f64,
}

/// The mean squares of an n × k table given row by row (`cells.len() == n·k`).
pub fn mean_squares(cells: &[f64], n: usize, k: usize) -> MeanSquares {
    let (nf, kf) = (n as f64, k as f64);
    let grand = cells.iter().sum::<f64>() / (nf * kf);
    let row_mean = |i: usize| cells[i * k..(i + 1) * k].iter().sum::<f64>() / kf;
    let col_mean = |j: usize| (0..n).map(|i| cells[i * k + j]).sum::<f64>() / nf;
    let ss_total: f64 = cells.iter().map(|x| (x - grand).powi(2)).sum();
    let ss_rows: f64 = kf * (0..n).map(|i| (row_mean(i) - grand).powi(2)).sum::<f64>();
    let ss_cols: f64 = nf * (0..k).map(|j| (col_mean(j) - grand).powi(2)).sum::<f64>();
    let ss_error = (ss_total - ss_rows - ss_cols).max(0.0);
    let ss_within = (ss_total - ss_rows).max(0.0);
    MeanSquares {
        rows: ss_rows / (nf - 1.0),
        within: ss_within / (nf * (kf - 1.0)),
        columns: ss_cols / (kf - 1.0),
        error: ss_error / ((nf - 1.0) * (kf - 1.0)),
    }
}

/// The Spearman–Brown step from one measurement to the mean of k: ρ_k = kρ/(1 + (k − 1)ρ).
/// The average-measure forms are this step of the single-measure ones (McGraw & Wong 1996,
/// Table 4), and so are their interval limits (the step is increasing).
fn stepped(rho: f64, k: f64) -> f64 {
    k * rho / (1.0 + (k - 1.0) * rho)
}

/// Every intraclass correlation of the n × k table in `cells` (row by row) at `level`.
pub fn icc(cells: &[f64], n: usize, k: usize, level: Level) -> Result<IccAnalysis> {
    if k < 2 {
        return Err(Error::cannot(
            "an intraclass correlation needs at least two columns (occasions or raters)",
        ));
    }
    if n < 3 {
        return Err(Error::cannot(format!(
            "an intraclass correlation needs at least three rows with every column given; \
             {n} have them"
        )));
    }
    if cells.len() != n * k || cells.iter().any(|x| !x.is_finite()) {
        return Err(Error::Numerical(
            "the table is not n × k finite values".into(),
        ));
    }
    let ms = mean_squares(cells, n, k);
    let (nf, kf) = (n as f64, k as f64);
    if !(ms.within > 0.0 && ms.error > 0.0) {
        return Err(Error::cannot(
            "every row's scores agree exactly (no variance within rows): an intraclass \
             correlation is not defined",
        ));
    }
    let alpha = 1.0 - level.value();
    let upper_q = |d1: f64, d2: f64| f_quantile(1.0 - alpha / 2.0, d1, d2);
    let mut forms = Vec::with_capacity(10);

    // One-way: F = MSR/MSW on (n − 1, n(k − 1)).
    let (d1, d2) = (nf - 1.0, nf * (kf - 1.0));
    let f1 = ms.rows / ms.within;
    let (fl, fu) = (f1 / upper_q(d1, d2), f1 * upper_q(d2, d1));
    let single = |f: f64| (f - 1.0) / (f + kf - 1.0);
    let one = (ms.rows - ms.within) / (ms.rows + (kf - 1.0) * ms.within);
    let p1 = f_sf(f1, d1, d2);
    for unit in [IccUnit::Single, IccUnit::Average] {
        let step = |r: f64| match unit {
            IccUnit::Single => r,
            IccUnit::Average => stepped(r, kf),
        };
        forms.push(IccForm {
            model: IccModel::OneWay,
            kind: IccType::Agreement,
            unit,
            value: step(one),
            ci: (step(single(fl)), step(single(fu))),
            f: f1,
            df1: d1,
            df2: d2,
            p: p1,
        });
    }

    // Two-way: F = MSR/MSE on (n − 1, (n − 1)(k − 1)) for both types (the test of ρ = 0).
    let (d1, d2) = (nf - 1.0, (nf - 1.0) * (kf - 1.0));
    let f2 = ms.rows / ms.error;
    let p2 = f_sf(f2, d1, d2);
    let consistency = (ms.rows - ms.error) / (ms.rows + (kf - 1.0) * ms.error);
    let (fl, fu) = (f2 / upper_q(d1, d2), f2 * upper_q(d2, d1));
    let consistency_ci = (single(fl), single(fu));
    let agreement = (ms.rows - ms.error)
        / (ms.rows + (kf - 1.0) * ms.error + kf * (ms.columns - ms.error) / nf);
    let agreement_ci = agreement_interval(&ms, nf, kf, agreement, alpha);
    for model in [IccModel::TwoWayRandom, IccModel::TwoWayMixed] {
        for (kind, value, ci) in [
            (IccType::Consistency, consistency, consistency_ci),
            (IccType::Agreement, agreement, agreement_ci),
        ] {
            for unit in [IccUnit::Single, IccUnit::Average] {
                let step = |r: f64| match unit {
                    IccUnit::Single => r,
                    IccUnit::Average => stepped(r, kf),
                };
                forms.push(IccForm {
                    model,
                    kind,
                    unit,
                    value: step(value),
                    ci: (step(ci.0), step(ci.1)),
                    f: f2,
                    df1: d1,
                    df2: d2,
                    p: p2,
                });
            }
        }
    }
    let sd = {
        let mean = cells.iter().sum::<f64>() / cells.len() as f64;
        (cells.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (cells.len() as f64 - 1.0)).sqrt()
    };
    let sem = sd * (1.0 - agreement).max(0.0).sqrt();
    Ok(IccAnalysis {
        n,
        k,
        mean_squares: ms,
        sd,
        forms,
        sem,
        sdc: 1.96 * 2f64.sqrt() * sem,
    })
}

/// The interval of ICC(A,1), whose F ratio has no exact distribution: Satterthwaite's
/// degrees of freedom v for the linear combination of MSC and MSE in its denominator
/// (McGraw & Wong 1996, Table 7, case 2A):
/// a = kρ̂/(n(1 − ρ̂)), b = 1 + kρ̂(n − 1)/(n(1 − ρ̂)),
/// v = (a·MSC + b·MSE)² / ((a·MSC)²/(k − 1) + (b·MSE)²/((n − 1)(k − 1))),
/// L = n(MSR − F*·MSE) / (F*(k·MSC + (kn − k − n)MSE) + n·MSR) with F* = F₁₋α/₂(n − 1, v),
/// U = n(F**·MSR − MSE) / (k·MSC + (kn − k − n)MSE + n·F**·MSR) with F** = F₁₋α/₂(v, n − 1).
fn agreement_interval(ms: &MeanSquares, n: f64, k: f64, rho: f64, alpha: f64) -> (f64, f64) {
    let a = k * rho / (n * (1.0 - rho));
    let b = 1.0 + k * rho * (n - 1.0) / (n * (1.0 - rho));
    let v = (a * ms.columns + b * ms.error).powi(2)
        / ((a * ms.columns).powi(2) / (k - 1.0) + (b * ms.error).powi(2) / ((n - 1.0) * (k - 1.0)));
    let f_star = f_quantile(1.0 - alpha / 2.0, n - 1.0, v);
    let f_2star = f_quantile(1.0 - alpha / 2.0, v, n - 1.0);
    let mix = k * ms.columns + (k * n - k - n) * ms.error;
    let lower = n * (ms.rows - f_star * ms.error) / (f_star * mix + n * ms.rows);
    let upper = n * (f_2star * ms.rows - ms.error) / (mix + n * f_2star * ms.rows);
    (lower, upper)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Shrout & Fleiss (1979, Table 2): 6 targets rated by 4 judges. The table and the six
    /// printed coefficients (.17, .29, .71, .44, .62, .91) are recalled from memory, not
    /// read from the paper; the reproduction of all six to two decimals from this table
    /// supports both.
    const SHROUT_FLEISS: [f64; 24] = [
        9.0, 2.0, 5.0, 8.0, //
        6.0, 1.0, 3.0, 2.0, //
        8.0, 4.0, 6.0, 8.0, //
        7.0, 1.0, 2.0, 6.0, //
        10.0, 5.0, 6.0, 9.0, //
        6.0, 2.0, 4.0, 7.0,
    ];

    fn form(a: &IccAnalysis, model: IccModel, kind: IccType, unit: IccUnit) -> IccForm {
        *a.forms
            .iter()
            .find(|f| f.model == model && f.kind == kind && f.unit == unit)
            .unwrap()
    }

    #[test]
    fn the_six_forms_of_shrout_and_fleiss_are_reproduced() {
        let a = icc(&SHROUT_FLEISS, 6, 4, Level::new(0.95).unwrap()).unwrap();
        let round2 = |x: f64| (x * 100.0).round() / 100.0;
        use IccModel::*;
        use IccType::*;
        use IccUnit::*;
        // ICC(1,1), ICC(2,1), ICC(3,1); ICC(1,4), ICC(2,4), ICC(3,4).
        for (m, t, u, want) in [
            (OneWay, Agreement, Single, 0.17),
            (TwoWayRandom, Agreement, Single, 0.29),
            (TwoWayMixed, Consistency, Single, 0.71),
            (OneWay, Agreement, Average, 0.44),
            (TwoWayRandom, Agreement, Average, 0.62),
            (TwoWayMixed, Consistency, Average, 0.91),
        ] {
            assert_eq!(round2(form(&a, m, t, u).value), want, "{m:?} {t:?} {u:?}");
        }
    }

    #[test]
    fn average_forms_are_the_spearman_brown_step_of_single_ones_and_intervals_hold_them() {
        let a = icc(&SHROUT_FLEISS, 6, 4, Level::new(0.9).unwrap()).unwrap();
        for f in a.forms.iter().filter(|f| f.unit == IccUnit::Single) {
            let avg = form(&a, f.model, f.kind, IccUnit::Average);
            assert!((avg.value - stepped(f.value, 4.0)).abs() < 1e-12);
            for x in [f, &avg] {
                assert!(x.ci.0 < x.value && x.value < x.ci.1, "{x:?}");
            }
        }
        // Random and mixed give the same numbers (McGraw & Wong 1996, Table 4).
        for f in a.forms.iter().filter(|f| f.model == IccModel::TwoWayRandom) {
            assert_eq!(
                form(&a, IccModel::TwoWayMixed, f.kind, f.unit).value,
                f.value
            );
        }
        assert!((a.sdc - 1.96 * 2f64.sqrt() * a.sem).abs() < 1e-12);
    }

    #[test]
    fn too_little_data_is_refused() {
        let l = Level::new(0.95).unwrap();
        assert!(icc(&[1.0, 2.0, 3.0, 4.0], 2, 2, l).is_err());
        assert!(icc(&[1.0, 2.0, 3.0], 3, 1, l).is_err());
        assert!(icc(&[1.0, 1.0, 2.0, 2.0, 3.0, 3.0], 3, 2, l).is_err());
    }
}
