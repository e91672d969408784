//! A checklist against the reporting guideline for reliability generalization
//! meta-analyses: which items a relyard report covers and which the author must still
//! supply.
//!
//! # References
//! Sánchez-Meca, J., Marín-Martínez, F., López-López, J. A., Núñez-Núñez, R. M.,
//! Rubio-Aparicio, M., López-García, J. J., López-Pina, J. A., Blázquez-Rincón, D. M.,
//! López-Ibáñez, C., & López-Nicolás, R. (2021). Improving the reporting quality of
//! reliability generalization meta-analyses: The REGEMA checklist. *Psicothema*, 33(2),
//! 306–315.
//!
//! The guideline has 30 items (title 1, abstract 1, introduction 2, method 14, results 6,
//! discussion 4, funding 1, protocol 1; confirmed from the authors' unit's page). The
//! items' order and wording below are paraphrased from memory of the paper's table and
//! should be checked against it.

use serde::Serialize;

/// How far the report covers an item.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Coverage {
    /// The report holds what the item asks for.
    Covered,
    /// The report holds part of it; the author adds the rest.
    Partly,
    /// Only the author can supply it.
    Author,
    /// The analysis it needs was not run this time.
    NotRun,
}

impl Coverage {
    /// Words for the report.
    pub fn label(self) -> &'static str {
        match self {
            Coverage::Covered => "in this report",
            Coverage::Partly => "partly in this report",
            Coverage::Author => "for the author",
            Coverage::NotRun => "not run",
        }
    }
}

/// One item of the checklist.
#[derive(Debug, Clone, Serialize)]
pub struct ChecklistItem {
    /// Item number.
    pub number: u32,
    /// Section of the paper.
    pub section: &'static str,
    /// What the item asks for (paraphrased).
    pub item: &'static str,
    /// How far this report covers it.
    pub coverage: Coverage,
    /// Where in the report, or what the author must add.
    pub note: String,
}

/// What the run did, for the checklist.
#[derive(Debug, Clone, Copy, Default)]
pub struct RunScope {
    /// Moderators were analysed.
    pub moderators: bool,
    /// The score-spread test was run.
    pub score_spread: bool,
    /// Influence (leave-one-out) diagnostics were run.
    pub influence: bool,
}

/// The checklist for a run.
pub fn checklist(scope: RunScope) -> Vec<ChecklistItem> {
    use Coverage::*;
    let mods = if scope.moderators || scope.score_spread {
        Covered
    } else {
        NotRun
    };
    let item = |number, section, item, coverage, note: &str| ChecklistItem {
        number,
        section,
        item,
        coverage,
        note: note.to_string(),
    };
    vec![
        item(
            1,
            "Title",
            "Identify the paper as a reliability generalization meta-analysis",
            Author,
            "the title is yours",
        ),
        item(
            2,
            "Abstract",
            "A structured abstract: aims, sources, methods, main results, conclusions",
            Partly,
            "the paragraph for the paper holds the main results",
        ),
        item(
            3,
            "Introduction",
            "The construct, the test and its versions, and earlier evidence on its reliability",
            Author,
            "background of the measure",
        ),
        item(
            4,
            "Introduction",
            "The aims of the meta-analysis",
            Author,
            "your objectives",
        ),
        item(
            5,
            "Method",
            "Criteria for including studies",
            Author,
            "eligibility criteria",
        ),
        item(
            6,
            "Method",
            "Search strategy and sources",
            Author,
            "databases, terms, dates, other sources",
        ),
        item(
            7,
            "Method",
            "Study characteristics coded as moderators, including score means and SDs",
            Partly,
            "the coding sheet's columns are listed under Data; define each in your paper",
        ),
        item(
            8,
            "Method",
            "How the consistency of coding was checked",
            Author,
            "double coding and agreement",
        ),
        item(
            9,
            "Method",
            "Which reliability coefficients were extracted, for which scores",
            Partly,
            "coefficient types and counts are in the Benchmark section",
        ),
        item(
            10,
            "Method",
            "How studies that induced reliability (cited it rather than computed it) were handled",
            Author,
            "reliability induction",
        ),
        item(
            11,
            "Method",
            "What was coded from inducing studies for comparison",
            Author,
            "reliability induction",
        ),
        item(
            12,
            "Method",
            "Whether and how coefficients were transformed",
            Covered,
            "Methods: transformation, with its sampling variance",
        ),
        item(
            13,
            "Method",
            "The statistical model and the estimator of between-study variance",
            Covered,
            "Methods: model, τ² estimator, interval method",
        ),
        item(
            14,
            "Method",
            "The weighting scheme",
            Covered,
            "Methods: inverse-variance weights 1/(vᵢ + τ²)",
        ),
        item(
            15,
            "Method",
            "How heterogeneity was assessed",
            Covered,
            "Methods: Q, I², τ² with its Q-profile interval, prediction interval",
        ),
        item(
            16,
            "Method",
            "How moderators were analysed",
            mods,
            "Methods: mixed-effects meta-regression; the score-variance test",
        ),
        item(
            17,
            "Method",
            "Additional analyses (small-study effects, sensitivity, outliers)",
            Partly,
            if scope.influence {
                "precision plot; influence diagnostics"
            } else {
                "precision plot (run relyard explain --influence for leave-one-out diagnostics)"
            },
        ),
        item(
            18,
            "Method",
            "The software used",
            Covered,
            "Software and reproducibility: relyard version, options, input checksum",
        ),
        item(
            19,
            "Results",
            "Study selection, ideally with a flow diagram",
            Author,
            "numbers screened and included",
        ),
        item(
            20,
            "Results",
            "The mean reliability with its interval, heterogeneity, and a forest plot",
            Covered,
            "Benchmark section and forest plot",
        ),
        item(
            21,
            "Results",
            "Results of the moderator analyses",
            mods,
            "Moderators section",
        ),
        item(
            22,
            "Results",
            "Results of the additional analyses",
            Partly,
            "precision plot; interpret any asymmetry in your paper",
        ),
        item(
            23,
            "Results",
            "Comparison of studies that induced and reported reliability",
            Author,
            "reliability induction",
        ),
        item(
            24,
            "Results",
            "The study-level data",
            Covered,
            "results.json lists every coded study with its weight",
        ),
        item(
            25,
            "Discussion",
            "Summary of the main findings",
            Partly,
            "the paragraph for the paper",
        ),
        item(
            26,
            "Discussion",
            "How far the findings generalize",
            Author,
            "populations and settings covered",
        ),
        item(
            27,
            "Discussion",
            "Limitations",
            Author,
            "limitations of the studies and of the synthesis",
        ),
        item(
            28,
            "Discussion",
            "Implications for test use and for research",
            Author,
            "implications",
        ),
        item(
            29,
            "Funding",
            "Funding and conflicts of interest",
            Author,
            "funding",
        ),
        item(
            30,
            "Protocol",
            "Whether a protocol exists and where",
            Author,
            "protocol or registration",
        ),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 30 items in the guideline's section sizes; moderator items follow the run.
    #[test]
    fn thirty_items_in_their_sections() {
        let c = checklist(RunScope::default());
        assert_eq!(c.len(), 30);
        let count = |s: &str| c.iter().filter(|i| i.section == s).count();
        assert_eq!(
            [
                count("Title"),
                count("Abstract"),
                count("Introduction"),
                count("Method")
            ],
            [1, 1, 2, 14]
        );
        assert_eq!(
            [
                count("Results"),
                count("Discussion"),
                count("Funding"),
                count("Protocol")
            ],
            [6, 4, 1, 1]
        );
        assert!(
            c.iter()
                .enumerate()
                .all(|(i, it)| it.number as usize == i + 1)
        );
        assert_eq!(c[15].coverage, Coverage::NotRun);
        let with = checklist(RunScope {
            moderators: true,
            ..RunScope::default()
        });
        assert_eq!(with[15].coverage, Coverage::Covered);
    }
}
