//! Prose: the paragraphs a researcher can adapt for a paper, the methods text of the
//! report, and the one list of references they cite.

mod benchmark;
pub mod dependence;
mod items;
mod methods;
mod placement;

pub use benchmark::{benchmark_paragraph, differences_sentence, equal_values_words, share_words};
pub use items::items_paragraph;
pub use methods::{MethodsItem, interval_words, methods};
pub use placement::{ordinal, placement_paragraph, spread_conclusion};

/// A paragraph and the references it cites.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Paragraph {
    /// The paragraph.
    pub text: String,
    /// The works it cites, in alphabetical order of their citations.
    pub references: Vec<Reference>,
}

impl Paragraph {
    /// A paragraph citing `references` (sorted and each once).
    pub fn new(text: String, mut references: Vec<Reference>) -> Self {
        references.sort_by_key(|r| r.citation());
        references.dedup();
        Paragraph { text, references }
    }

    /// The full citations, alphabetical.
    pub fn citations(&self) -> Vec<String> {
        self.references
            .iter()
            .map(|r| r.citation().to_string())
            .collect()
    }
}

/// Every work relyard's prose cites: the one list of references.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
#[non_exhaustive]
pub enum Reference {
    /// Bonett (2002), the ln(1 − α) transformation.
    Bonett2002,
    /// Hakstian & Whalen (1976).
    HakstianWhalen1976,
    /// Fisher (1921).
    Fisher1921,
    /// Viechtbauer (2005), ML and REML.
    Viechtbauer2005,
    /// Viechtbauer (2007), the Q-profile interval.
    Viechtbauer2007,
    /// DerSimonian & Laird (1986).
    DerSimonianLaird1986,
    /// Paule & Mandel (1982).
    PauleMandel1982,
    /// Sidik & Jonkman (2005).
    SidikJonkman2005,
    /// Hedges & Olkin (1985).
    HedgesOlkin1985,
    /// Knapp & Hartung (2003).
    KnappHartung2003,
    /// Röver, Knapp & Friede (2015).
    RoverKnappFriede2015,
    /// Higgins, Thompson & Spiegelhalter (2009), the prediction interval.
    HigginsThompsonSpiegelhalter2009,
    /// Higgins & Thompson (2002), I² and H².
    HigginsThompson2002,
    /// Spearman (1904), the correction for attenuation.
    Spearman1904,
    /// Hunter & Schmidt (2004).
    HunterSchmidt2004,
    /// Sterne & Egger (2001), the precision plot's axes.
    SterneEgger2001,
    /// The reporting checklist for reliability generalization meta-analyses.
    SanchezMeca2021,
    /// Thompson & Higgins (2002), meta-regression.
    ThompsonHiggins2002,
    /// Pustejovsky & Tipton (2022), the correlated-and-hierarchical-effects working model.
    PustejovskyTipton2022,
    /// Tipton (2015), small-sample robust variance estimation (CR2, Satterthwaite df).
    Tipton2015,
    /// Cheung (2014), three-level meta-analysis and I² at each level.
    Cheung2014,
    /// Borenstein, Hedges, Higgins & Rothstein (2009), composites of dependent estimates.
    Borenstein2009,
    /// Self & Liang (1987), likelihood-ratio tests on the boundary.
    SelfLiang1987,
    /// Tipton & Pustejovsky (2015), the approximate Hotelling test.
    TiptonPustejovsky2015,
    /// Feldt (1965), the interval for alpha.
    Feldt1965,
    /// McDonald (1999), omega.
    McDonald1999,
    /// Rodriguez, Reise & Haviland (2016), bifactor indices.
    RodriguezReiseHaviland2016,
    /// Green & Yang (2009), categorical omega.
    GreenYang2009,
}

impl Reference {
    /// The full citation.
    pub fn citation(self) -> &'static str {
        use Reference::*;
        match self {
            Bonett2002 => {
                "Bonett, D. G. (2002). Sample size requirements for testing and \
                estimating coefficient alpha. Journal of Educational and Behavioral Statistics, \
                27(4), 335–340."
            }
            HakstianWhalen1976 => {
                "Hakstian, A. R., & Whalen, T. E. (1976). A k-sample \
                significance test for independent alpha coefficients. Psychometrika, 41(2), \
                219–231."
            }
            Fisher1921 => {
                "Fisher, R. A. (1921). On the \"probable error\" of a coefficient of \
                correlation deduced from a small sample. Metron, 1, 3–32."
            }
            Viechtbauer2005 => {
                "Viechtbauer, W. (2005). Bias and efficiency of meta-analytic \
                variance estimators in the random-effects model. Journal of Educational and \
                Behavioral Statistics, 30(3), 261–293."
            }
            Viechtbauer2007 => {
                "Viechtbauer, W. (2007). Confidence intervals for the amount of \
                heterogeneity in meta-analysis. Statistics in Medicine, 26(1), 37–52."
            }
            DerSimonianLaird1986 => {
                "DerSimonian, R., & Laird, N. (1986). Meta-analysis in \
                clinical trials. Controlled Clinical Trials, 7(3), 177–188."
            }
            PauleMandel1982 => {
                "Paule, R. C., & Mandel, J. (1982). Consensus values and \
                weighting factors. Journal of Research of the National Bureau of Standards, \
                87(5), 377–385."
            }
            SidikJonkman2005 => {
                "Sidik, K., & Jonkman, J. N. (2005). Simple heterogeneity \
                variance estimation for meta-analysis. Journal of the Royal Statistical \
                Society, Series C, 54(2), 367–384."
            }
            HedgesOlkin1985 => {
                "Hedges, L. V., & Olkin, I. (1985). Statistical methods for \
                meta-analysis. Orlando, FL: Academic Press."
            }
            KnappHartung2003 => {
                "Knapp, G., & Hartung, J. (2003). Improved tests for a random \
                effects meta-regression with a single covariate. Statistics in Medicine, \
                22(17), 2693–2710."
            }
            RoverKnappFriede2015 => {
                "Röver, C., Knapp, G., & Friede, T. (2015). \
                Hartung-Knapp-Sidik-Jonkman approach and its modification for random-effects \
                meta-analysis with few studies. BMC Medical Research Methodology, 15, 99."
            }
            HigginsThompsonSpiegelhalter2009 => {
                "Higgins, J. P. T., Thompson, S. G., & \
                Spiegelhalter, D. J. (2009). A re-evaluation of random-effects meta-analysis. \
                Journal of the Royal Statistical Society, Series A, 172(1), 137–159."
            }
            HigginsThompson2002 => {
                "Higgins, J. P. T., & Thompson, S. G. (2002). Quantifying \
                heterogeneity in a meta-analysis. Statistics in Medicine, 21(11), 1539–1558."
            }
            Spearman1904 => {
                "Spearman, C. (1904). The proof and measurement of association \
                between two things. American Journal of Psychology, 15(1), 72–101."
            }
            HunterSchmidt2004 => {
                "Hunter, J. E., & Schmidt, F. L. (2004). Methods of \
                meta-analysis: Correcting error and bias in research findings (2nd ed.). \
                Thousand Oaks, CA: Sage."
            }
            SterneEgger2001 => {
                "Sterne, J. A. C., & Egger, M. (2001). Funnel plots for \
                detecting bias in meta-analysis: Guidelines on choice of axis. Journal of \
                Clinical Epidemiology, 54(10), 1046–1055."
            }
            // The checklist's 30 items in eight sections are as the authors' unit publishes
            // them (um.es/metaanalysis/REGEMA.php); the journal, volume and pages are the
            // project's best recollection and were not found in a stored source.
            SanchezMeca2021 => {
                "Sánchez-Meca, J., Marín-Martínez, F., López-López, J. A., \
                Núñez-Núñez, R. M., Rubio-Aparicio, M., López-García, J. J., López-Pina, J. A., \
                Blázquez-Rincón, D. M., López-Ibáñez, C., & López-Nicolás, R. (2021). \
                Improving the reporting quality of reliability generalization meta-analyses: \
                The REGEMA checklist. Research Synthesis Methods, 12(4), 516–536."
            }
            ThompsonHiggins2002 => {
                "Thompson, S. G., & Higgins, J. P. T. (2002). How should \
                meta-regression analyses be undertaken and interpreted? Statistics in \
                Medicine, 21(11), 1559–1573."
            }
            PustejovskyTipton2022 => {
                "Pustejovsky, J. E., & Tipton, E. (2022). Meta-analysis with \
                robust variance estimation: Expanding the range of working models. Prevention \
                Science, 23(3), 425–438."
            }
            Tipton2015 => {
                "Tipton, E. (2015). Small sample adjustments for robust variance \
                estimation with meta-regression. Psychological Methods, 20(3), 375–393."
            }
            Cheung2014 => {
                "Cheung, M. W.-L. (2014). Modeling dependent effect sizes with \
                three-level meta-analyses: A structural equation modeling approach. \
                Psychological Methods, 19(2), 211–229."
            }
            SelfLiang1987 => {
                "Self, S. G., & Liang, K.-Y. (1987). Asymptotic properties of maximum \
                likelihood estimators and likelihood ratio tests under nonstandard conditions. \
                Journal of the American Statistical Association, 82(398), 605–610."
            }
            TiptonPustejovsky2015 => {
                "Tipton, E., & Pustejovsky, J. E. (2015). Small-sample \
                adjustments for tests of moderators and model fit using robust variance \
                estimation in meta-regression. Journal of Educational and Behavioral \
                Statistics, 40(6), 604–634."
            }
            Feldt1965 => {
                "Feldt, L. S. (1965). The approximate sampling distribution of \
                Kuder-Richardson reliability coefficient twenty. Psychometrika, 30(3), 357–370."
            }
            McDonald1999 => {
                "McDonald, R. P. (1999). Test theory: A unified treatment. \
                Mahwah, NJ: Erlbaum."
            }
            RodriguezReiseHaviland2016 => {
                "Rodriguez, A., Reise, S. P., & Haviland, M. G. (2016). \
                Evaluating bifactor models: Calculating and interpreting statistical indices. \
                Psychological Methods, 21(2), 137–150."
            }
            GreenYang2009 => {
                "Green, S. B., & Yang, Y. (2009). Reliability of summed item \
                scores using structural equation modeling: An alternative to coefficient \
                alpha. Psychometrika, 74(1), 155–167."
            }
            Borenstein2009 => {
                "Borenstein, M., Hedges, L. V., Higgins, J. P. T., & Rothstein, \
                H. R. (2009). Introduction to meta-analysis. Chichester, UK: Wiley."
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Citations are written out whole: no run of spaces from line continuations, and each
    /// ends with a full stop.
    #[test]
    fn citations_are_whole() {
        use Reference::*;
        for r in [
            Bonett2002,
            SanchezMeca2021,
            RoverKnappFriede2015,
            PustejovskyTipton2022,
            Tipton2015,
            Cheung2014,
            Borenstein2009,
            SelfLiang1987,
            TiptonPustejovsky2015,
            HigginsThompsonSpiegelhalter2009,
        ] {
            let c = r.citation();
            assert!(!c.contains("  ") && c.ends_with('.'), "{c}");
        }
        let p = Paragraph::new("x".into(), vec![Fisher1921, Bonett2002, Fisher1921]);
        assert_eq!(p.references, [Bonett2002, Fisher1921]);
    }
}
