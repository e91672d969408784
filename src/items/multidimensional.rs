//! Scales with subscales: a bifactor model (a general factor and orthogonal group factors)
//! and a correlated-factors model, both fitted by maximum likelihood; omega total, omega
//! hierarchical, each subscale's omega and omega-hierarchical-subscale, and the explained
//! common variance.
//!
//! # References
//! Rodriguez, A., Reise, S. P., & Haviland, M. G. (2016). Evaluating bifactor models:
//! calculating and interpreting statistical indices. *Psychological Methods*, 21(2),
//! 137–150.
//! Reise, S. P. (2012). The rediscovery of bifactor measurement models. *Multivariate
//! Behavioral Research*, 47(5), 667–696.

use super::factor::{ModelFitIndices, fit_indices_of};
use crate::error::{Error, Result};
use crate::numeric::{MinimizeStop, bfgs};
use nalgebra::DMatrix;

/// Smallest uniqueness allowed, as a share of the item's variance (as in the one-factor fit).
const UNIQUENESS_FLOOR: f64 = 1e-6;
/// A uniqueness below this share of the item's variance is reported as a Heywood case.
const HEYWOOD_SHARE: f64 = 1e-3;
/// Gradient tolerance of the fits.
const GRADIENT_TOLERANCE: f64 = 1e-9;
/// Iteration limit of the fits.
const MAX_ITERATIONS: usize = 10_000;

/// Which item belongs to which group (subscale).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FactorGroups {
    /// The groups' names, in the order given.
    pub names: Vec<String>,
    /// Each item's group (an index into `names`).
    pub of_item: Vec<usize>,
}

impl FactorGroups {
    /// Number of groups.
    pub fn count(&self) -> usize {
        self.names.len()
    }

    /// The items of group `g`, in the items' order.
    pub fn members(&self, g: usize) -> Vec<usize> {
        (0..self.of_item.len())
            .filter(|&i| self.of_item[i] == g)
            .collect()
    }
}

/// Which multidimensional structure.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Structure {
    /// A general factor on every item and one group factor per subscale, all uncorrelated.
    Bifactor,
    /// One factor per subscale, the factors correlated.
    Correlated,
}

/// A fitted multidimensional model, in the items' raw metric.
#[derive(Debug, Clone, PartialEq)]
pub struct StructuredFit {
    /// Which model.
    pub structure: Structure,
    /// Loadings on the general factor (bifactor; empty for the correlated model).
    pub general: Vec<f64>,
    /// Each item's loading on its own group factor.
    pub specific: Vec<f64>,
    /// The group factors' correlations (the identity for the bifactor model).
    pub correlations: DMatrix<f64>,
    /// Uniquenesses.
    pub uniquenesses: Vec<f64>,
    /// The minimized discrepancy F = ln|Σ| − ln|S| + tr(SΣ⁻¹) − k.
    pub discrepancy: f64,
    /// Free parameters.
    pub free_parameters: usize,
    /// Iterations used.
    pub iterations: usize,
    /// Why the fit stopped.
    pub stop: MinimizeStop,
    /// Items whose uniqueness sits at or near zero (Heywood cases).
    pub heywood: Vec<usize>,
}

/// One subscale's coefficients from the bifactor model.
#[derive(Debug, Clone, PartialEq)]
pub struct SubscaleOmega {
    /// The group's name.
    pub name: String,
    /// Its items.
    pub items: Vec<usize>,
    /// Omega of the subscale's sum: the share of its variance due to the general and its
    /// group factor.
    pub omega: f64,
    /// Omega-hierarchical-subscale: the share due to its group factor alone.
    pub omega_hierarchical_subscale: f64,
}

/// The coefficients of a fitted bifactor model.
#[derive(Debug, Clone, PartialEq)]
pub struct BifactorOmegas {
    /// Omega total: the share of the total score's variance due to all common factors.
    pub omega_total: f64,
    /// Omega hierarchical: the share due to the general factor alone.
    pub omega_hierarchical: f64,
    /// Explained common variance of the general factor (standardized loadings).
    pub ecv: f64,
    /// Each subscale.
    pub subscales: Vec<SubscaleOmega>,
}

/// The implied covariance matrix of a structure.
fn implied(
    groups: &FactorGroups,
    general: &[f64],
    specific: &[f64],
    phi: &DMatrix<f64>,
    psi: &[f64],
) -> DMatrix<f64> {
    let k = specific.len();
    let g = &groups.of_item;
    DMatrix::from_fn(k, k, |i, j| {
        let common = if general.is_empty() {
            0.0
        } else {
            general[i] * general[j]
        };
        let own = specific[i] * specific[j] * phi[(g[i], g[j])];
        common + own + if i == j { psi[i] } else { 0.0 }
    })
}

/// The parameters of one evaluation, unpacked.
struct Parameters {
    general: Vec<f64>,
    specific: Vec<f64>,
    phi: DMatrix<f64>,
    psi: Vec<f64>,
}

/// How a parameter vector is laid out: [general (bifactor), specific, factor correlations
/// (correlated; the strict lower triangle by rows), t] with ψᵢ = Sᵢᵢ(ε + exp tᵢ).
struct Layout<'a> {
    structure: Structure,
    groups: &'a FactorGroups,
    var: Vec<f64>,
}

impl Layout<'_> {
    fn k(&self) -> usize {
        self.var.len()
    }

    fn pairs(&self) -> Vec<(usize, usize)> {
        let m = self.groups.count();
        match self.structure {
            Structure::Bifactor => Vec::new(),
            Structure::Correlated => (1..m).flat_map(|a| (0..a).map(move |b| (a, b))).collect(),
        }
    }

    fn n_general(&self) -> usize {
        match self.structure {
            Structure::Bifactor => self.k(),
            Structure::Correlated => 0,
        }
    }

    fn unpack(&self, x: &[f64]) -> Parameters {
        let (k, m, ng) = (self.k(), self.groups.count(), self.n_general());
        let pairs = self.pairs();
        let mut phi = DMatrix::identity(m, m);
        for (p, &(a, b)) in pairs.iter().enumerate() {
            phi[(a, b)] = x[ng + k + p];
            phi[(b, a)] = x[ng + k + p];
        }
        let t0 = ng + k + pairs.len();
        Parameters {
            general: x[..ng].to_vec(),
            specific: x[ng..ng + k].to_vec(),
            phi,
            psi: (0..k)
                .map(|i| self.var[i] * (UNIQUENESS_FLOOR + x[t0 + i].exp()))
                .collect(),
        }
    }
}

/// The discrepancy F and its gradient with respect to the packed parameters. With
/// G = Σ⁻¹(Σ − S)Σ⁻¹, dF = tr(G dΣ): ∂F/∂gᵢ = 2(Gg)ᵢ; ∂F/∂sᵢ = 2Σⱼ Gᵢⱼ φ(gᵢ, gⱼ) sⱼ;
/// ∂F/∂φ_ab = 2Σ_{i∈a, j∈b} Gᵢⱼ sᵢ sⱼ; ∂F/∂ψᵢ = Gᵢᵢ.
fn objective(layout: &Layout, s: &DMatrix<f64>, log_det_s: f64, x: &[f64]) -> (f64, Vec<f64>) {
    let bad = (f64::INFINITY, vec![0.0; x.len()]);
    if x.iter().any(|v| !v.is_finite()) {
        return bad;
    }
    let p = layout.unpack(x);
    let sigma = implied(layout.groups, &p.general, &p.specific, &p.phi, &p.psi);
    let Some(chol) = sigma.cholesky() else {
        return bad;
    };
    let log_det: f64 = crate::numeric::cholesky_log_det(&chol);
    let inv = chol.inverse();
    let inv_s = &inv * s;
    let f = log_det - log_det_s + inv_s.trace() - layout.k() as f64;
    let g = &inv - &inv_s * &inv;
    let (k, ng) = (layout.k(), layout.n_general());
    let of = &layout.groups.of_item;
    let mut grad = Vec::with_capacity(x.len());
    if ng > 0 {
        let gg = &g * nalgebra::DVector::from_column_slice(&p.general);
        grad.extend(gg.iter().map(|v| 2.0 * v));
    }
    for i in 0..k {
        let v: f64 = (0..k)
            .map(|j| g[(i, j)] * p.phi[(of[i], of[j])] * p.specific[j])
            .sum();
        grad.push(2.0 * v);
    }
    for (a, b) in layout.pairs() {
        let mut v = 0.0;
        for i in 0..k {
            if of[i] != a {
                continue;
            }
            for j in 0..k {
                if of[j] == b {
                    v += g[(i, j)] * p.specific[i] * p.specific[j];
                }
            }
        }
        grad.push(2.0 * v);
    }
    let t0 = x.len() - k;
    grad.extend((0..k).map(|i| g[(i, i)] * layout.var[i] * x[t0 + i].exp()));
    (f, grad)
}

/// Starting values from the squared multiple correlations hᵢ: bifactor gᵢ = √(0.6hᵢSᵢᵢ),
/// sᵢ = √(0.3hᵢSᵢᵢ); correlated sᵢ = √(0.9hᵢSᵢᵢ), every φ = 0.5; ψᵢ = (1 − hᵢ)Sᵢᵢ.
fn start_values(layout: &Layout, s: &DMatrix<f64>) -> Vec<f64> {
    let k = layout.k();
    let inv = s.clone().try_inverse();
    let h: Vec<f64> = (0..k)
        .map(|i| match &inv {
            Some(m) => (1.0 - 1.0 / (layout.var[i] * m[(i, i)])).clamp(0.05, 0.95),
            None => 0.5,
        })
        .collect();
    let share = |i: usize, c: f64| (c * h[i] * layout.var[i]).sqrt();
    let mut x: Vec<f64> = Vec::new();
    match layout.structure {
        Structure::Bifactor => {
            x.extend((0..k).map(|i| share(i, 0.6)));
            x.extend((0..k).map(|i| share(i, 0.3)));
        }
        Structure::Correlated => {
            x.extend((0..k).map(|i| share(i, 0.9)));
            x.extend(layout.pairs().iter().map(|_| 0.5));
        }
    }
    x.extend((0..k).map(|i| ((1.0 - h[i]) - UNIQUENESS_FLOOR).max(1e-3).ln()));
    x
}

/// Whether the groups identify `structure`, and why not: every group needs at least two
/// items (three in the bifactor model, where a two-item group factor's loadings appear only
/// as their product), and there must be at least two groups.
pub fn identification_problem(groups: &FactorGroups, structure: Structure) -> Option<String> {
    if groups.count() < 2 {
        return Some(
            "a multidimensional model needs at least two groups of items (with one group it \
             is the one-factor model)"
                .into(),
        );
    }
    let need = match structure {
        Structure::Bifactor => 3,
        Structure::Correlated => 2,
    };
    let small: Vec<&str> = (0..groups.count())
        .filter(|&g| groups.members(g).len() < need)
        .map(|g| groups.names[g].as_str())
        .collect();
    if small.is_empty() {
        return None;
    }
    Some(match structure {
        Structure::Bifactor => format!(
            "the bifactor model needs at least three items in each group (a group factor on two \
             items is not identified); {} {} fewer",
            small.join(", "),
            if small.len() == 1 { "has" } else { "have" }
        ),
        Structure::Correlated => format!(
            "a factor needs at least two items; {} {} fewer",
            small.join(", "),
            if small.len() == 1 { "has" } else { "have" }
        ),
    })
}

/// Fit a bifactor or correlated-factors model to a covariance matrix by maximum likelihood
/// (BFGS with the analytic gradient; the matrix divided by its mean variance first, which
/// does not change the discrepancy). Signs are fixed so that each factor's loadings sum to
/// a positive number.
///
/// # References
/// Jöreskog, K. G. (1969). A general approach to confirmatory maximum likelihood factor
/// analysis. *Psychometrika*, 34(2), 183–202.
pub fn fit_structure(
    cov: &DMatrix<f64>,
    groups: &FactorGroups,
    structure: Structure,
) -> Result<StructuredFit> {
    if let Some(why) = identification_problem(groups, structure) {
        return Err(Error::cannot(why));
    }
    let k = cov.nrows();
    let scale = cov.trace() / k as f64;
    let s = cov / scale;
    let log_det_s = match s.clone().cholesky() {
        Some(c) => crate::numeric::cholesky_log_det(&c),
        None => {
            return Err(Error::cannot(
                "the items' covariance matrix is singular, so no factor model can be fitted",
            ));
        }
    };
    let layout = Layout {
        structure,
        groups,
        var: (0..k).map(|i| s[(i, i)]).collect(),
    };
    let x0 = start_values(&layout, &s);
    let m = bfgs(
        |x| objective(&layout, &s, log_det_s, x),
        &x0,
        GRADIENT_TOLERANCE,
        MAX_ITERATIONS,
    );
    let mut p = layout.unpack(&m.x);
    orient(groups, &mut p);
    let root = scale.sqrt();
    Ok(StructuredFit {
        structure,
        general: p.general.iter().map(|l| l * root).collect(),
        specific: p.specific.iter().map(|l| l * root).collect(),
        correlations: p.phi,
        heywood: (0..k)
            .filter(|&i| p.psi[i] < HEYWOOD_SHARE * layout.var[i])
            .collect(),
        uniquenesses: p.psi.iter().map(|v| v * scale).collect(),
        discrepancy: m.value,
        free_parameters: m.x.len(),
        iterations: m.iterations,
        stop: m.stop,
    })
}

/// Turn each factor so that its loadings sum to a positive number (the implied matrix does
/// not change: a group factor's correlations turn with it).
fn orient(groups: &FactorGroups, p: &mut Parameters) {
    if p.general.iter().sum::<f64>() < 0.0 {
        p.general.iter_mut().for_each(|v| *v = -*v);
    }
    for g in 0..groups.count() {
        let members = groups.members(g);
        if members.iter().map(|&i| p.specific[i]).sum::<f64>() < 0.0 {
            members.iter().for_each(|&i| p.specific[i] = -p.specific[i]);
            for h in 0..groups.count() {
                if h != g {
                    p.phi[(g, h)] = -p.phi[(g, h)];
                    p.phi[(h, g)] = -p.phi[(h, g)];
                }
            }
        }
    }
}

impl StructuredFit {
    /// The fit indices of the model: χ² = (n − 1)F on k(k + 1)/2 − q df, RMSEA and CFI.
    pub fn indices(&self, cov: &DMatrix<f64>, n: f64) -> ModelFitIndices {
        let k = cov.nrows() as f64;
        let df = k * (k + 1.0) / 2.0 - self.free_parameters as f64;
        fit_indices_of(cov, self.discrepancy, df, n)
    }

    /// The bifactor model's coefficients for the unit-weighted total score and each
    /// subscale's sum, with variances implied by the model (as omega of the one-factor
    /// model): with A = Σgᵢ, B_s = Σ_{i∈s} sᵢ and U = Σψᵢ, ω_t = (A² + Σ B_s²)/(A² + Σ B_s² + U),
    /// ω_h = A²/(A² + Σ B_s² + U); for a subscale, ω_s = (A_s² + B_s²)/(A_s² + B_s² + U_s)
    /// and ω_hs = B_s²/(A_s² + B_s² + U_s); ECV = Σg̃ᵢ²/(Σg̃ᵢ² + Σs̃ᵢ²) with standardized
    /// loadings (Rodriguez, Reise & Haviland 2016). `None` for the correlated model.
    pub fn omegas(&self, cov: &DMatrix<f64>, groups: &FactorGroups) -> Option<BifactorOmegas> {
        if self.structure != Structure::Bifactor {
            return None;
        }
        let sum = |items: &[usize], v: &[f64]| items.iter().map(|&i| v[i]).sum::<f64>();
        let all: Vec<usize> = (0..self.specific.len()).collect();
        let a = sum(&all, &self.general);
        let group_parts: f64 = (0..groups.count())
            .map(|g| sum(&groups.members(g), &self.specific).powi(2))
            .sum();
        let total = a * a + group_parts + sum(&all, &self.uniquenesses);
        let subscales = (0..groups.count())
            .map(|g| {
                let items = groups.members(g);
                let (ag, bg) = (sum(&items, &self.general), sum(&items, &self.specific));
                let var = ag * ag + bg * bg + sum(&items, &self.uniquenesses);
                SubscaleOmega {
                    name: groups.names[g].clone(),
                    omega: (ag * ag + bg * bg) / var,
                    omega_hierarchical_subscale: bg * bg / var,
                    items,
                }
            })
            .collect();
        let squared =
            |v: &[f64]| -> f64 { v.iter().enumerate().map(|(i, l)| l * l / cov[(i, i)]).sum() };
        let (general, spec) = (squared(&self.general), squared(&self.specific));
        Some(BifactorOmegas {
            omega_total: (a * a + group_parts) / total,
            omega_hierarchical: a * a / total,
            ecv: general / (general + spec),
            subscales,
        })
    }

    /// The pairs of factors whose estimated correlation is at or beyond ±1 (an improper
    /// solution: maximum likelihood does not hold the correlations inside (−1, 1)), as
    /// "a and b".
    pub fn improper_correlations(&self, groups: &FactorGroups) -> Vec<String> {
        let m = self.correlations.nrows();
        (1..m)
            .flat_map(|a| (0..a).map(move |b| (b, a)))
            .filter(|&(a, b)| self.correlations[(a, b)].abs() >= 1.0)
            .map(|(a, b)| format!("{}–{}", groups.names[a], groups.names[b]))
            .collect()
    }

    /// Loadings in the standardized metric (λ/√Sᵢᵢ): general (empty for the correlated
    /// model) and own group factor.
    pub fn standardized(&self, cov: &DMatrix<f64>) -> (Vec<f64>, Vec<f64>) {
        let st = |v: &[f64]| -> Vec<f64> {
            v.iter()
                .enumerate()
                .map(|(i, l)| l / cov[(i, i)].sqrt())
                .collect()
        };
        (st(&self.general), st(&self.specific))
    }
}

/// A general factor counts as strong when ω_h ≥ 0.80 and ECV ≥ 0.70 (values recalled from
/// Rodriguez, Reise & Haviland 2016, not confirmed in a readable source here; a rule of
/// thumb, not a standard).
pub const STRONG_OMEGA_H: f64 = 0.80;
/// See [`STRONG_OMEGA_H`].
pub const STRONG_ECV: f64 = 0.70;

/// How strong the general factor is, for the reading.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum GeneralFactor {
    /// ω_h and ECV both at or above their limits: the total score reads as one trait.
    Strong,
    /// Below either limit: report the subscales.
    NotStrong,
}

/// Everything `relyard items --factor` adds.
#[derive(Debug, Clone)]
pub struct MultidimensionalAnalysis {
    /// The groups.
    pub groups: FactorGroups,
    /// The bifactor model, or why it was not fitted.
    pub bifactor: std::result::Result<StructuredFit, String>,
    /// The correlated-factors model, or why it was not fitted.
    pub correlated: std::result::Result<StructuredFit, String>,
    /// The bifactor model's fit.
    pub fit_bifactor: Option<ModelFitIndices>,
    /// The correlated-factors model's fit.
    pub fit_correlated: Option<ModelFitIndices>,
    /// The bifactor coefficients.
    pub omegas: Option<BifactorOmegas>,
    /// How strong the general factor is (with the coefficients).
    pub general_factor: Option<GeneralFactor>,
    /// The reading in words: which score to interpret and which coefficient to carry.
    pub reading: String,
}

/// Fit both models to a covariance matrix of `n` respondents and read them. `names` are the
/// items' names (for the reading).
pub fn analyze_structure(
    cov: &DMatrix<f64>,
    n: f64,
    groups: FactorGroups,
    names: &[String],
) -> MultidimensionalAnalysis {
    let fit = |s| fit_structure(cov, &groups, s).map_err(|e| e.to_string());
    let bifactor = fit(Structure::Bifactor);
    let correlated = fit(Structure::Correlated);
    let omegas = bifactor.as_ref().ok().and_then(|f| f.omegas(cov, &groups));
    let general_factor = omegas.as_ref().map(|o| {
        if o.omega_hierarchical >= STRONG_OMEGA_H && o.ecv >= STRONG_ECV {
            GeneralFactor::Strong
        } else {
            GeneralFactor::NotStrong
        }
    });
    let mut reading = read_structure(&bifactor, &omegas, general_factor, &groups, names);
    if let Ok(f) = &correlated {
        let over = f.improper_correlations(&groups);
        if !over.is_empty() {
            reading.push_str(&format!(
                "; in the correlated-factors model {} correlate at or beyond ±1 (an improper \
                 solution): those subscales are not distinct factors in these data",
                crate::format::and_list(&over)
            ));
        }
    }
    MultidimensionalAnalysis {
        fit_bifactor: bifactor.as_ref().ok().map(|f| f.indices(cov, n)),
        fit_correlated: correlated.as_ref().ok().map(|f| f.indices(cov, n)),
        groups,
        bifactor,
        correlated,
        omegas,
        general_factor,
        reading,
    }
}

/// A value with three decimals, as the reading shows it.
fn fx(x: f64) -> String {
    crate::format::fixed(x, 3)
}

/// Omega-hierarchical-subscale from which a subscale has enough reliable variance of its own
/// to be interpreted apart from the general factor (0.50; recalled from Reise, Bonifay &
/// Haviland 2013, Journal of Personality Assessment 95, 129–140, not confirmed in a
/// readable source here; a rule of thumb).
pub const OWN_SUBSCALE: f64 = 0.50;

/// The reading when the general factor is not strong: the subscales with enough variance of
/// their own are reported; the others mostly repeat the general factor.
fn read_not_strong(o: &BifactorOmegas, figures: &str, hs: &str) -> String {
    let own: Vec<String> = o
        .subscales
        .iter()
        .filter(|s| s.omega_hierarchical_subscale >= OWN_SUBSCALE)
        .map(|s| s.name.clone())
        .collect();
    let lead = format!(
        "the general factor is not strong enough for the total score to be read as one trait \
         ({figures}; common limits 0.80 and 0.70)"
    );
    if own.is_empty() {
        return format!(
            "{lead}, yet no subscale has much reliable variance of its own beyond it \
             (omega-hierarchical-subscale {hs}, below the common limit 0.50): the subscale \
             scores mostly repeat the general factor. Report the total score with omega \
             hierarchical ({}) beside omega total ({}) and do not read the subscales as \
             distinct traits; carry omega total into a benchmark of reported total-score \
             coefficients, and omega hierarchical into a correction only if the construct is \
             the general trait alone (it gives a larger correction)",
            fx(o.omega_hierarchical),
            fx(o.omega_total)
        );
    }
    let rest = if own.len() == o.subscales.len() {
        String::new()
    } else {
        "; the others mostly repeat the general factor and are better not read as distinct \
         traits"
            .to_string()
    };
    format!(
        "{lead}: report the subscales with enough reliable variance of their own to be read \
         apart from the general factor (omega-hierarchical-subscale at least 0.50): {}, each \
         with its omega, carrying a subscale's omega into a benchmark or a correction of that \
         subscale's correlations{rest}; omega-hierarchical-subscale ranges {hs}",
        crate::format::and_list(&own)
    )
}

/// The subscales whose own reliable variance is large enough to read them apart from the
/// general factor, as words for the strong-factor reading.
fn own_subscales_words(o: &BifactorOmegas, hs: &str) -> String {
    let own: Vec<String> = o
        .subscales
        .iter()
        .filter(|s| s.omega_hierarchical_subscale >= OWN_SUBSCALE)
        .map(|s| s.name.clone())
        .collect();
    if own.is_empty() {
        format!(
            "The subscales' own reliable variance beyond the general factor is small \
             (omega-hierarchical-subscale {hs}), so their scores add little to the total"
        )
    } else {
        format!(
            "Beside it, {} {} reliable variance of its own (omega-hierarchical-subscale at \
             least 0.50; all range {hs}), so {} may also be reported",
            crate::format::and_list(&own),
            if own.len() == 1 { "keeps" } else { "keep" },
            if own.len() == 1 {
                "that subscale"
            } else {
                "those subscales"
            }
        )
    }
}

/// The reading: which score to interpret and which coefficient to carry forward.
fn read_structure(
    bifactor: &std::result::Result<StructuredFit, String>,
    omegas: &Option<BifactorOmegas>,
    strength: Option<GeneralFactor>,
    groups: &FactorGroups,
    names: &[String],
) -> String {
    let (fit, o, strength) = match (bifactor, omegas, strength) {
        (Ok(f), Some(o), Some(s)) => (f, o, s),
        (Err(why), _, _) => {
            return format!(
                "no bifactor model, so no omega hierarchical: {why}; the correlated-factors \
                 model, where fitted, describes the subscales"
            );
        }
        _ => return "no bifactor coefficients".into(),
    };
    let range = |v: Vec<f64>| {
        let lo = v.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        if (hi - lo).abs() < 5e-4 {
            fx(lo)
        } else {
            format!("{} to {}", fx(lo), fx(hi))
        }
    };
    let hs = range(
        o.subscales
            .iter()
            .map(|s| s.omega_hierarchical_subscale)
            .collect(),
    );
    let figures = format!(
        "omega hierarchical {} of omega total {}, explained common variance {}",
        fx(o.omega_hierarchical),
        fx(o.omega_total),
        fx(o.ecv)
    );
    let mut text = match strength {
        GeneralFactor::Strong => format!(
            "the general factor is strong ({figures}; common limits 0.80 and 0.70): the total \
             score can be read as one trait. Carry omega total ({}) into a benchmark of \
             reported total-score coefficients and into a correction of the total score's \
             correlations; omega hierarchical ({}) is the total score's reliability for the \
             general trait alone and, used in a correction, gives a larger one. {}",
            fx(o.omega_total),
            fx(o.omega_hierarchical),
            own_subscales_words(o, &hs)
        ),
        GeneralFactor::NotStrong => read_not_strong(o, &figures, &hs),
    };
    if groups.count() == 2 {
        text.push_str(
            "; with only two group factors the bifactor model is weakly identified (the \
             general and group loadings can trade off), so read its coefficients with caution",
        );
    }
    if !fit.heywood.is_empty() {
        let items: Vec<&str> = fit.heywood.iter().map(|&i| names[i].as_str()).collect();
        text.push_str(&format!(
            "; the bifactor solution is improper (the uniqueness of {} is at zero), so its \
             coefficients are not trustworthy",
            items.join(", ")
        ));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    fn groups(sizes: &[usize]) -> FactorGroups {
        FactorGroups {
            names: (0..sizes.len()).map(|g| format!("g{g}")).collect(),
            of_item: sizes
                .iter()
                .enumerate()
                .flat_map(|(g, &n)| std::iter::repeat_n(g, n))
                .collect(),
        }
    }

    /// The analytic gradient equals central differences of the discrepancy, for both
    /// structures.
    #[test]
    fn gradient_matches_finite_differences() {
        let gr = groups(&[3, 3, 2]);
        let b = DMatrix::from_fn(8, 12, |i, j| ((i * 7 + j * 5) % 11) as f64 / 6.0 - 0.8);
        let s = &b * b.transpose() / 12.0 + DMatrix::identity(8, 8) * 0.5;
        let log_det_s = 2.0
            * s.clone()
                .cholesky()
                .unwrap()
                .l()
                .diagonal()
                .map(f64::ln)
                .sum();
        for structure in [Structure::Bifactor, Structure::Correlated] {
            let layout = Layout {
                structure,
                groups: &gr,
                var: (0..8).map(|i| s[(i, i)]).collect(),
            };
            let x0: Vec<f64> = start_values(&layout, &s)
                .iter()
                .enumerate()
                .map(|(i, v)| v + 0.01 * (i % 5) as f64)
                .collect();
            let (_, grad) = objective(&layout, &s, log_det_s, &x0);
            for p in 0..x0.len() {
                let h = 1e-6;
                let mut up = x0.clone();
                up[p] += h;
                let mut down = x0.clone();
                down[p] -= h;
                let fd = (objective(&layout, &s, log_det_s, &up).0
                    - objective(&layout, &s, log_det_s, &down).0)
                    / (2.0 * h);
                assert!(
                    (fd - grad[p]).abs() < 1e-6,
                    "{structure:?} parameter {p}: {} vs {fd}",
                    grad[p]
                );
            }
        }
    }
}
