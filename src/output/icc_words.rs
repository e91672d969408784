//! What the intraclass correlations mean, in words shared by the readable faces and the
//! JSON document: which form fits test–retest and which fits raters, and the caution about
//! decisions about individuals.

/// Which form fits a test–retest design.
pub const ICC_TEST_RETEST: &str = "Columns are occasions (test–retest): report the two-way \
mixed, absolute-agreement, single-measure form — the same people, these occasions, a score \
that should be the same on another occasion (so a shift of the mean between occasions counts \
against it), and one administration is what a study uses.";

/// Which forms fit raters.
pub const ICC_RATERS: &str = "Columns are raters: the two-way random form when the raters \
stand for others who could have rated (the one-way form when each target had its own \
raters), absolute agreement when scores must be interchangeable between raters (consistency \
when only their order matters), single measures when one rater will score each target in \
use, average measures when the mean of this many raters will.";

/// The caution for decisions about individuals.
pub const ICC_INDIVIDUALS_CAUTION: &str = "Where scores inform decisions about individuals \
(clinical, educational, personnel), higher reliability is needed than for research use, \
and a person's score must change by more than the smallest detectable change before the \
change exceeds measurement error; professional testing standards and local practice govern \
such decisions.";
