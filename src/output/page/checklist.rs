//! A checklist against the reporting guideline for reliability generalization
//! meta-analyses: which items a relyard report covers and which the author must still
//! supply.
//!
//! # References
//! Sánchez-Meca, J., Marín-Martínez, F., López-López, J. A., Núñez-Núñez, R. M.,
//! Rubio-Aparicio, M., López-García, J. J., López-Pina, J. A., Blázquez-Rincón, D. M.,
//! López-Ibáñez, C., & López-Nicolás, R. (2021). Improving the reporting quality of
//! reliability generalization meta-analyses: The REGEMA checklist. *Research Synthesis
//! Methods*, 12(4), 516–536.
//!
//! What was confirmed in a stored source: the authors' unit's page
//! (um.es/metaanalysis/REGEMA.php) says the checklist has 30 items — 1 for the title, 1
//! for the abstract, 2 for the introduction, 14 for the methods, 6 for the results, 4 for
//! the discussion, 1 for funding and 1 for the protocol. Not confirmed: the journal, volume
//! and pages above (the project's best recollection; an earlier citation as Psicothema
//! 33(2), 306–315 was not confirmed either), and the items' wording and order below, which
//! are our paraphrase.

use super::Section;
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
    /// What the report holds for it, or what the author must add.
    pub note: String,
    /// The report's section that holds it (its title), when there is one; only sections
    /// the report has are named.
    pub where_in_report: Option<&'static str>,
    /// That section's anchor in report.html.
    #[serde(skip)]
    pub anchor: Option<String>,
}

/// What the run did, for the checklist.
#[derive(Debug, Clone, Default)]
pub struct RunScope {
    /// The sections the report has.
    pub sections: Vec<Section>,
    /// Influence (leave-one-out) diagnostics were run.
    pub influence: bool,
}

/// The checklist for a run: each item's pointer goes to a section the report has, or to
/// none (and an item whose section is missing is not counted as covered).
pub fn checklist(scope: &RunScope) -> Vec<ChecklistItem> {
    use Coverage::*;
    let has = |s: Section| scope.sections.contains(&s);
    let mods = if has(Section::Moderators) {
        Covered
    } else {
        NotRun
    };
    let item = |number, section, item, coverage: Coverage, note: &str| ChecklistItem {
        number,
        section,
        item,
        coverage,
        note: note.to_string(),
        where_in_report: None,
        anchor: None,
    };
    let at = |mut i: ChecklistItem, s: Section| {
        if has(s) {
            i.where_in_report = Some(s.title());
            i.anchor = Some(s.id());
        } else if matches!(i.coverage, Covered | Partly) {
            i.coverage = NotRun;
        }
        i
    };
    vec![
        item(
            1,
            "Title",
            "Identify the paper as a reliability generalization meta-analysis",
            Author,
            "the title is yours",
        ),
        at(
            item(
                2,
                "Abstract",
                "A structured abstract: aims, sources, methods, main results, conclusions",
                Partly,
                "the paragraph for the paper holds the main results",
            ),
            Section::Benchmark,
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
        at(
            item(
                7,
                "Method",
                "Study characteristics coded as moderators, including score means and SDs",
                Partly,
                "the coding sheet's columns are listed; define each in your paper",
            ),
            Section::Sheet,
        ),
        item(
            8,
            "Method",
            "How the consistency of coding was checked",
            Author,
            "double coding and agreement",
        ),
        at(
            item(
                9,
                "Method",
                "Which reliability coefficients were extracted, for which scores",
                Partly,
                "coefficient types and counts",
            ),
            Section::Sheet,
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
        at(
            item(
                12,
                "Method",
                "Whether and how coefficients were transformed",
                Covered,
                "transformation, with its sampling variance",
            ),
            Section::Methods,
        ),
        at(
            item(
                13,
                "Method",
                "The statistical model and the estimator of between-study variance",
                Covered,
                "model, τ² estimator, interval method",
            ),
            Section::Methods,
        ),
        at(
            item(
                14,
                "Method",
                "The weighting scheme",
                Covered,
                "inverse-variance weights 1/(vᵢ + τ²)",
            ),
            Section::Methods,
        ),
        at(
            item(
                15,
                "Method",
                "How heterogeneity was assessed",
                Covered,
                "Q, I², τ² with its Q-profile interval, prediction interval",
            ),
            Section::Methods,
        ),
        at(
            item(
                16,
                "Method",
                "How moderators were analysed",
                mods,
                "mixed-effects meta-regression; the score-variance test",
            ),
            Section::Methods,
        ),
        at(
            item(
                17,
                "Method",
                "Additional analyses (small-study effects, sensitivity, outliers)",
                Partly,
                if scope.influence {
                    "precision plot; influence diagnostics"
                } else {
                    "precision plot (relyard explain adds leave-one-out diagnostics)"
                },
            ),
            Section::Benchmark,
        ),
        at(
            item(
                18,
                "Method",
                "The software used",
                Covered,
                "relyard version, options, input checksum",
            ),
            Section::Software,
        ),
        item(
            19,
            "Results",
            "Study selection, ideally with a flow diagram",
            Author,
            "numbers screened and included",
        ),
        at(
            item(
                20,
                "Results",
                "The mean reliability with its interval, heterogeneity, and a forest plot",
                Covered,
                "the pooled value, its interval, heterogeneity and the forest plot",
            ),
            Section::Benchmark,
        ),
        at(
            item(
                21,
                "Results",
                "Results of the moderator analyses",
                mods,
                "the moderators' model, figures and the score-spread test",
            ),
            Section::Moderators,
        ),
        at(
            item(
                22,
                "Results",
                "Results of the additional analyses",
                Partly,
                "precision plot; interpret any asymmetry in your paper",
            ),
            Section::Benchmark,
        ),
        item(
            23,
            "Results",
            "Comparison of studies that induced and reported reliability",
            Author,
            "reliability induction",
        ),
        at(
            item(
                24,
                "Results",
                "The study-level data",
                Covered,
                "results.json lists every coded study with its weight",
            ),
            Section::Software,
        ),
        at(
            item(
                25,
                "Discussion",
                "Summary of the main findings",
                Partly,
                "the paragraph for the paper",
            ),
            Section::Benchmark,
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
        let all = RunScope {
            sections: Section::ALL.to_vec(),
            influence: false,
        };
        let c = checklist(&RunScope {
            sections: Section::ALL
                .iter()
                .copied()
                .filter(|s| *s != Section::Moderators)
                .collect(),
            influence: false,
        });
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
        let with = checklist(&all);
        assert_eq!(with[15].coverage, Coverage::Covered);
        // Pointers name only sections the report has.
        let bare = checklist(&RunScope {
            sections: vec![Section::Benchmark],
            influence: false,
        });
        assert!(bare.iter().all(|i| {
            i.where_in_report
                .is_none_or(|w| w == Section::Benchmark.title())
        }));
        assert_eq!(bare[11].coverage, Coverage::NotRun);
    }
}
