//! Tests of equality for independent reliability coefficients from summary values.

use crate::dist::{chi2_sf, f_cdf, f_sf};
use crate::error::{Error, Result};
use crate::setting::Setting;
use crate::setting::msg;
use crate::transform::{CoefficientTransform, HakstianWhalen, StudyInput};

/// One sample's coefficient alpha.
#[derive(Debug, Clone, PartialEq)]
pub struct AlphaSample {
    /// A label.
    pub label: String,
    /// Alpha.
    pub alpha: f64,
    /// Respondents.
    pub n: u64,
    /// Items.
    pub items: u32,
}

impl AlphaSample {
    fn check(&self) -> Result<()> {
        let bad = |why: String| {
            Err(Error::setting(
                Setting::Samples,
                format!("sample {}: {why}", self.label),
            ))
        };
        if !(self.alpha.is_finite() && self.alpha < 1.0 && self.alpha > -1.0) {
            return bad(format!(
                "alpha {} must lie above −1 and below 1",
                self.alpha
            ));
        }
        if self.n < 3 {
            return bad(format!("n = {} is too small (at least 3)", self.n));
        }
        if self.items < 2 {
            return bad(format!(
                "{}: alpha needs at least 2",
                crate::format::count(self.items, "item", "items")
            ));
        }
        Ok(())
    }
}

/// Feldt's test of two independent alphas.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FeldtTest {
    /// W = (1 − α̂₁)/(1 − α̂₂).
    pub w: f64,
    /// Numerator degrees of freedom, n₂ − 1.
    pub df1: f64,
    /// Denominator degrees of freedom, n₁ − 1.
    pub df2: f64,
    /// Two-sided p value: 2 min(P(F ≤ W), P(F ≥ W)).
    pub p: f64,
}

/// Feldt's two-sample test: W = (1 − α̂₁)/(1 − α̂₂) against F(n₂ − 1, n₁ − 1).
///
/// Since (1 − α)/(1 − α̂) ~ F(n − 1, (n − 1)(k − 1)), 1 − α̂ behaves like (1 − α) over a
/// χ²(n − 1)/(n − 1) variable, so the ratio W puts sample 2's χ² in the numerator: its
/// degrees of freedom are (n₂ − 1, n₁ − 1). (The order F(n₁ − 1, n₂ − 1) that the issue
/// quoted from memory gives a test of the wrong size when the samples differ in size.)
///
/// # References
/// Feldt, L. S. (1969). A test of the hypothesis that Cronbach's alpha or Kuder-Richardson
/// coefficient twenty is the same for two tests. *Psychometrika*, 34(3), 363–373.
pub fn feldt_two_sample(a: &AlphaSample, b: &AlphaSample) -> Result<FeldtTest> {
    a.check()?;
    b.check()?;
    let w = (1.0 - a.alpha) / (1.0 - b.alpha);
    let (df1, df2) = ((b.n - 1) as f64, (a.n - 1) as f64);
    // Each tail on its own, so that a tiny tail is not lost to 1 − (almost 1).
    let p = (2.0 * f_sf(w, df1, df2).min(f_cdf(w, df1, df2))).min(1.0);
    Ok(FeldtTest { w, df1, df2, p })
}

/// The Hakstian–Whalen test of m independent alphas.
#[derive(Debug, Clone, PartialEq)]
pub struct HakstianWhalenTest {
    /// Each sample's T = (1 − α̂)^(1/3).
    pub t: Vec<f64>,
    /// Each sample's sampling variance of T.
    pub v: Vec<f64>,
    /// The inverse-variance weighted mean of T.
    pub t_bar: f64,
    /// χ² = Σ (Tᵢ − T̄)²/Vᵢ.
    pub chi2: f64,
    /// m − 1.
    pub df: f64,
    /// p value.
    pub p: f64,
}

/// The Hakstian–Whalen k-sample test.
///
/// # References
/// Hakstian, A. R., & Whalen, T. E. (1976). A k-sample significance test for independent
/// alpha coefficients. *Psychometrika*, 41(2), 219–231.
pub fn hakstian_whalen_test(samples: &[AlphaSample]) -> Result<HakstianWhalenTest> {
    if samples.len() < 2 {
        return Err(Error::setting(
            Setting::Samples,
            msg![
                "a test of equality needs at least two samples (a coding sheet, or ",
                Setting::Samples,
                " twice)"
            ],
        ));
    }
    for s in samples {
        s.check()?;
    }
    let inputs: Vec<StudyInput> = samples
        .iter()
        .map(|s| StudyInput {
            coef: s.alpha,
            n: Some(s.n as f64),
            items: Some(f64::from(s.items)),
            var: None,
        })
        .collect();
    let t: Vec<f64> = inputs.iter().map(|i| HakstianWhalen.effect(i).0).collect();
    let v: Vec<f64> = inputs.iter().map(|i| HakstianWhalen.variance(i)).collect();
    let sw: f64 = v.iter().map(|x| 1.0 / x).sum();
    let t_bar = t.iter().zip(&v).map(|(t, v)| t / v).sum::<f64>() / sw;
    let chi2: f64 = t.iter().zip(&v).map(|(t, v)| (t - t_bar).powi(2) / v).sum();
    let df = (samples.len() - 1) as f64;
    Ok(HakstianWhalenTest {
        t,
        v,
        t_bar,
        chi2,
        df,
        p: chi2_sf(chi2, df),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn s(alpha: f64, n: u64, items: u32) -> AlphaSample {
        AlphaSample {
            label: "x".into(),
            alpha,
            n,
            items,
        }
    }

    #[test]
    fn equal_alphas_give_no_evidence() {
        let f = feldt_two_sample(&s(0.8, 100, 10), &s(0.8, 100, 10)).unwrap();
        assert!((f.w - 1.0).abs() < 1e-15 && (f.p - 1.0).abs() < 1e-9);
        let h = hakstian_whalen_test(&[s(0.8, 100, 10), s(0.8, 100, 10)]).unwrap();
        assert!(h.chi2.abs() < 1e-20 && h.p > 0.999);
    }

    #[test]
    fn bad_values_are_refused() {
        assert!(feldt_two_sample(&s(1.2, 100, 10), &s(0.8, 100, 10)).is_err());
        assert!(hakstian_whalen_test(&[s(0.8, 100, 10)]).is_err());
        assert!(hakstian_whalen_test(&[s(0.8, 2, 10), s(0.7, 100, 10)]).is_err());
    }
}
