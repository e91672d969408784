//! The rows of a multilevel fit, grouped cluster by cluster, and the per-cluster algebra
//! of the (restricted) likelihood: every quantity is a sum over clusters of small dense
//! products, so that no k × k matrix is ever formed.

use crate::error::{Error, Result};
use nalgebra::{DMatrix, DVector};

/// Which rows share respondents (a sample) and which share a cluster (a paper, lab, data
/// set or research group).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Grouping {
    /// The cluster of each row, numbered from 0.
    pub cluster: Vec<usize>,
    /// The sample of each row, numbered from 0; rows of one sample share a cluster.
    pub sample: Vec<usize>,
}

impl Grouping {
    /// Number of clusters.
    pub fn clusters(&self) -> usize {
        self.cluster.iter().max().map_or(0, |m| m + 1)
    }

    /// Number of samples.
    pub fn samples(&self) -> usize {
        self.sample.iter().max().map_or(0, |m| m + 1)
    }

    /// Every row its own sample and its own cluster.
    pub fn independent(k: usize) -> Grouping {
        Grouping {
            cluster: (0..k).collect(),
            sample: (0..k).collect(),
        }
    }

    /// The rows of each cluster, in input order, clusters in order of first appearance.
    pub fn cluster_rows(&self) -> Vec<Vec<usize>> {
        let mut rows = vec![Vec::new(); self.clusters()];
        for (i, &c) in self.cluster.iter().enumerate() {
            rows[c].push(i);
        }
        rows.retain(|r| !r.is_empty());
        rows
    }
}

/// One cluster's rows in the permuted arrays and the sample of each.
#[derive(Debug, Clone)]
pub(crate) struct Block {
    /// First row in the permuted arrays.
    pub start: usize,
    /// Rows.
    pub len: usize,
    /// The sample of each row numbered within the cluster from 0, in order of first
    /// appearance (equal numbers share respondents).
    pub local: Vec<usize>,
    /// Samples in the cluster.
    pub samples: usize,
}

/// Effects, sampling variances, the design and the grouping, stored cluster by cluster.
#[derive(Debug, Clone)]
pub struct NestedData {
    pub(crate) y: Vec<f64>,
    pub(crate) v: Vec<f64>,
    pub(crate) x: DMatrix<f64>,
    pub(crate) blocks: Vec<Block>,
    /// The input row of each permuted row.
    pub(crate) order: Vec<usize>,
    /// Samples.
    pub(crate) samples: usize,
}

impl NestedData {
    /// Group the rows; `x` is the k × p design.
    pub fn new(y: &[f64], v: &[f64], x: &DMatrix<f64>, grouping: &Grouping) -> Result<Self> {
        let k = y.len();
        if v.len() != k
            || x.nrows() != k
            || grouping.cluster.len() != k
            || grouping.sample.len() != k
        {
            return Err(Error::cannot(
                "effects, variances, design rows and groups differ in number",
            ));
        }
        if y.iter().any(|e| !e.is_finite()) || v.iter().any(|s| !(s.is_finite() && *s > 0.0)) {
            return Err(Error::cannot(
                "every effect must be finite and every sampling variance a finite number above 0",
            ));
        }
        let rows = grouping.cluster_rows();
        let order: Vec<usize> = rows.iter().flatten().copied().collect();
        let mut blocks = Vec::with_capacity(rows.len());
        let mut start = 0;
        for r in &rows {
            let mut seen: Vec<usize> = Vec::new();
            let local = r
                .iter()
                .map(|&i| grouping.sample[i])
                .map(|s| match seen.iter().position(|t| *t == s) {
                    Some(at) => at,
                    None => {
                        seen.push(s);
                        seen.len() - 1
                    }
                })
                .collect();
            blocks.push(Block {
                start,
                len: r.len(),
                local,
                samples: seen.len(),
            });
            start += r.len();
        }
        let xp = DMatrix::from_fn(k, x.ncols(), |i, j| x[(order[i], j)]);
        Ok(NestedData {
            y: order.iter().map(|&i| y[i]).collect(),
            v: order.iter().map(|&i| v[i]).collect(),
            x: xp,
            blocks,
            order,
            samples: grouping.samples(),
        })
    }

    /// Rows.
    pub fn k(&self) -> usize {
        self.y.len()
    }

    /// Coefficients.
    pub fn p(&self) -> usize {
        self.x.ncols()
    }

    /// Clusters.
    pub fn clusters(&self) -> usize {
        self.blocks.len()
    }

    /// Samples.
    pub fn samples(&self) -> usize {
        self.samples
    }

    /// Rows in the largest cluster.
    pub fn largest_cluster(&self) -> usize {
        self.blocks.iter().map(|b| b.len).max().unwrap_or(0)
    }

    /// The same data with effects divided by √s and variances by s, s the median
    /// sampling variance (so that tolerances are relative to the typical variance), and
    /// the effects centred at their mean when the design has an intercept: for the
    /// estimation of the variances only (β̂ is taken from the unscaled data).
    pub(crate) fn rescaled(&self) -> (NestedData, f64) {
        let s = crate::numeric::select_quantile(&mut self.v.clone(), 0.5);
        let root = s.sqrt();
        let mut out = self.clone();
        // With an intercept, centring the effects changes only the intercept, not the
        // likelihood of the variances: it spares the quadratic forms a cancellation.
        let centre = if (0..self.k()).all(|i| self.x[(i, 0)] == 1.0) {
            self.y.iter().sum::<f64>() / self.k() as f64
        } else {
            0.0
        };
        out.y.iter_mut().for_each(|y| *y = (*y - centre) / root);
        out.v.iter_mut().for_each(|v| *v /= s);
        (out, s)
    }

    /// The design rows of a block.
    pub(crate) fn x_of(&self, b: &Block) -> DMatrix<f64> {
        self.x.rows(b.start, b.len).into_owned()
    }

    /// The effects of a block.
    pub(crate) fn y_of(&self, b: &Block) -> DVector<f64> {
        DVector::from_column_slice(&self.y[b.start..b.start + b.len])
    }

    /// The marginal covariance of a block, S + τ²_within·I + τ²_cluster·J.
    pub(crate) fn marginal_cov(&self, b: &Block, r: f64, theta: [f64; 2]) -> DMatrix<f64> {
        let v = &self.v[b.start..b.start + b.len];
        DMatrix::from_fn(b.len, b.len, |i, j| {
            row_covariance((v[i], v[j]), (i == j, b.local[i] == b.local[j]), r, theta)
        })
    }
}

/// The covariance of two rows of one cluster under the model, the definition of the working
/// model: vᵢ + τ²_within + τ²_cluster for a row with itself; r·√(vᵢvⱼ) + τ²_cluster for two
/// rows of one sample; τ²_cluster otherwise. `(same_row, same_sample)` say which. The
/// likelihood pass inverts the same matrix in factored form ([`Factored`]; checked against
/// this one in a unit test).
pub fn row_covariance(
    (vi, vj): (f64, f64),
    (same_row, same_sample): (bool, bool),
    r: f64,
    theta: [f64; 2],
) -> f64 {
    let sampling = if same_row {
        vi + theta[1]
    } else if same_sample {
        r * (vi * vj).sqrt()
    } else {
        0.0
    };
    sampling + theta[0]
}

/// The error of a cluster whose covariance matrix is not positive definite.
pub(crate) fn not_positive_definite() -> Error {
    Error::cannot(
        "a cluster's covariance matrix is not positive definite (check the sampling \
         correlation and the sampling variances)",
    )
}

/// The inverse and log-determinant of a positive-definite block.
pub(crate) fn inverse_and_log_det(m: DMatrix<f64>) -> Result<(DMatrix<f64>, f64)> {
    let chol = nalgebra::Cholesky::new(m).ok_or_else(not_positive_definite)?;
    let log_det = 2.0
        * chol
            .l_dirty()
            .diagonal()
            .iter()
            .map(|d| d.ln())
            .sum::<f64>();
    Ok((chol.inverse(), log_det))
}

/// The (restricted) log-likelihood and, when asked, its score and expected information
/// in (τ²_cluster, τ²_within), at one point.
#[derive(Debug, Clone)]
pub(crate) struct Evaluation {
    /// Log-likelihood without its constant.
    pub log_lik: f64,
    /// Generalized least-squares coefficients at this point.
    pub beta: DVector<f64>,
    /// Their model-based covariance (XᵀV⁻¹X)⁻¹.
    pub cov: DMatrix<f64>,
    /// r'V⁻¹r with r the residuals.
    pub quad: f64,
    /// Score in (τ²_cluster, τ²_within).
    pub score: [f64; 2],
    /// Expected information.
    pub info: [[f64; 2]; 2],
}

/// Clusters per unit of parallel work: the partial sums of a chunk are added in chunk
/// order, so that results do not depend on the number of threads.
pub(crate) const CLUSTERS_PER_CHUNK: usize = 256;

/// Sums over clusters that the likelihood, its score and its information are made of,
/// all in one pass (p × p matrices flat, column by column). The quantities that depend on
/// β̂ — r'Wr, Σ(1ᵀWr)² and Σ‖Wr‖² with r = y − Xβ̂ — are quadratic in β, so their parts
/// are summed before β̂ is known.
#[derive(Clone)]
struct Sums {
    log_det: f64,
    /// XᵀWX, XᵀWy, yᵀWy.
    a: Vec<f64>,
    b: Vec<f64>,
    y_w_y: f64,
    /// Σ(1ᵀWy)², Σ(1ᵀWy)·XᵀW1, and B_c = Σ XᵀW1(XᵀW1)ᵀ.
    sy2: f64,
    sy_xu: Vec<f64>,
    b_c: Vec<f64>,
    /// yᵀW²y, XᵀW²y and B_w = XᵀW²X.
    y_w2_y: f64,
    x_w2_y: Vec<f64>,
    b_w: Vec<f64>,
    /// Σ1ᵀW1 and Σ tr W.
    tr_w: [f64; 2],
    /// Σ(1ᵀW1)², Σ‖W1‖², Σ‖W‖²_F.
    t1: [f64; 3],
    /// K_cc = Σ(1ᵀW1)·XᵀW1(XᵀW1)ᵀ, K_ww = XᵀW³X, K_cw = Σ XᵀW1·(XᵀW²1)ᵀ.
    k_cc: Vec<f64>,
    k_ww: Vec<f64>,
    k_cw: Vec<f64>,
}

impl Sums {
    fn zeros(p: usize) -> Sums {
        let m = vec![0.0; p * p];
        let v = vec![0.0; p];
        Sums {
            log_det: 0.0,
            a: m.clone(),
            b: v.clone(),
            y_w_y: 0.0,
            sy2: 0.0,
            sy_xu: v.clone(),
            b_c: m.clone(),
            y_w2_y: 0.0,
            x_w2_y: v,
            b_w: m.clone(),
            tr_w: [0.0; 2],
            t1: [0.0; 3],
            k_cc: m.clone(),
            k_ww: m.clone(),
            k_cw: m,
        }
    }

    fn add(&mut self, o: &Sums) {
        self.log_det += o.log_det;
        self.y_w_y += o.y_w_y;
        self.sy2 += o.sy2;
        self.y_w2_y += o.y_w2_y;
        for i in 0..2 {
            self.tr_w[i] += o.tr_w[i];
        }
        for i in 0..3 {
            self.t1[i] += o.t1[i];
        }
        let pairs = [
            (&mut self.a, &o.a),
            (&mut self.b, &o.b),
            (&mut self.sy_xu, &o.sy_xu),
            (&mut self.b_c, &o.b_c),
            (&mut self.x_w2_y, &o.x_w2_y),
            (&mut self.b_w, &o.b_w),
            (&mut self.k_cc, &o.k_cc),
            (&mut self.k_ww, &o.k_ww),
            (&mut self.k_cw, &o.k_cw),
        ];
        for (a, b) in pairs {
            a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
        }
    }
}

/// Scratch buffers of one worker, reused from cluster to cluster.
#[derive(Default)]
struct Scratch {
    /// Per row: 1/dᵢ and gᵢ = √vᵢ/dᵢ (dᵢ the diagonal part of the covariance).
    dinv: Vec<f64>,
    g: Vec<f64>,
    /// Per sample of the cluster: r_s of its rank-one term, and a dot product.
    rs: Vec<f64>,
    dots: Vec<f64>,
    /// a = M⁻¹1, M⁻¹a, W1 and Wy; WX and W²X column by column.
    a: Vec<f64>,
    ma: Vec<f64>,
    u: Vec<f64>,
    wy: Vec<f64>,
    x: Vec<f64>,
    wx: Vec<f64>,
    wwx: Vec<f64>,
    ones: Vec<f64>,
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// One cluster's inverse covariance in factored form. The covariance is
/// V = D + Σ_s R·s_s s_sᵀ + τ²_cluster·11ᵀ, with D diagonal, dᵢ = (1 − R)vᵢ + τ²_within, and
/// s_s the standard errors √vᵢ of the rows of sample s (zero elsewhere): a diagonal matrix,
/// one rank-one term per sample (the samples' rows do not overlap) and one for the cluster.
/// Two Sherman–Morrison steps invert it: M = D + Σ_s R·s_s s_sᵀ is block-diagonal by sample,
/// M⁻¹ = D⁻¹ − Σ_s r_s g_s g_sᵀ with g_s = D⁻¹s_s and r_s = R / (1 + R·s_sᵀD⁻¹s_s); then
/// W = V⁻¹ = M⁻¹ − c·aaᵀ with a = M⁻¹1 and c = τ²_cluster / (1 + τ²_cluster·1ᵀa). Every
/// product with W costs O(rows), and log det V = Σ log dᵢ + Σ_s log(1 + R·s_sᵀD⁻¹s_s)
/// + log(1 + τ²_cluster·1ᵀa) (the matrix determinant lemma).
struct Factored<'a> {
    b: &'a Block,
    dinv: &'a [f64],
    g: &'a [f64],
    rs: &'a [f64],
    a: &'a [f64],
    c: f64,
}

impl Factored<'_> {
    /// out = M⁻¹·x; `dots` is per-sample scratch.
    fn apply_m(&self, x: &[f64], dots: &mut [f64], out: &mut [f64]) {
        dots.iter_mut().for_each(|d| *d = 0.0);
        for (i, &s) in self.b.local.iter().enumerate() {
            dots[s] += self.g[i] * x[i];
        }
        for (i, &s) in self.b.local.iter().enumerate() {
            out[i] = self.dinv[i] * x[i] - self.rs[s] * self.g[i] * dots[s];
        }
    }

    /// out = W·x.
    fn apply(&self, x: &[f64], dots: &mut [f64], out: &mut [f64]) {
        self.apply_m(x, dots, out);
        let ax = self.c * dot(self.a, x);
        out.iter_mut().zip(self.a).for_each(|(o, a)| *o -= ax * a);
    }
}

/// One cluster's factored inverse: fills the per-row and per-sample parts of `k` (1/dᵢ, gᵢ,
/// r_s and a = M⁻¹1) and returns log det V, 1ᵀa and 1 + τ²_cluster·1ᵀa.
fn factor(
    d: &NestedData,
    b: &Block,
    (r, theta): (f64, [f64; 2]),
    k: &mut Scratch,
) -> Result<(f64, f64, f64)> {
    let (n, m) = (b.len, b.samples);
    for buf in [&mut k.dinv, &mut k.g, &mut k.a] {
        buf.resize(n, 0.0);
    }
    k.rs.clear();
    k.rs.resize(m, 0.0);
    k.dots.resize(m, 0.0);
    let vs = &d.v[b.start..b.start + n];
    // log det V as the log of a running product (one logarithm per cluster, not per row),
    // taken and restarted before the product can leave the range of a float.
    let mut log_det = 0.0;
    let mut product = 1.0;
    let mut times = |x: f64| {
        product *= x;
        if !(1e-150..=1e150).contains(&product) {
            log_det += product.ln();
            product = 1.0;
        }
    };
    for (i, &v) in vs.iter().enumerate() {
        let di = (1.0 - r) * v + theta[1];
        if !(di > 0.0 && di.is_finite()) {
            return Err(not_positive_definite());
        }
        times(di);
        k.dinv[i] = 1.0 / di;
        k.g[i] = v.sqrt() / di;
        // s_sᵀD⁻¹s_s, gathered in rs for now.
        k.rs[b.local[i]] += v / di;
    }
    for q in k.rs.iter_mut() {
        let one_plus = 1.0 + r * *q;
        times(one_plus);
        *q = r / one_plus;
    }
    // a = M⁻¹1.
    k.ones.clear();
    k.ones.resize(n, 1.0);
    let f = Factored {
        b,
        dinv: &k.dinv,
        g: &k.g,
        rs: &k.rs,
        a: &[],
        c: 0.0,
    };
    f.apply_m(&k.ones, &mut k.dots, &mut k.a);
    let m1: f64 = k.a.iter().sum();
    let one_plus = 1.0 + theta[0] * m1;
    times(one_plus);
    Ok((log_det + product.ln(), m1, one_plus))
}

/// The weight of each row in the pooled value's estimate, W1 (row sums of each cluster's
/// inverse covariance), in the permuted order, cluster by cluster in parallel.
pub(crate) fn row_weights(d: &NestedData, r: f64, theta: [f64; 2]) -> Result<Vec<f64>> {
    use rayon::prelude::*;
    let parts: Vec<Result<Vec<f64>>> = d
        .blocks
        .par_chunks(CLUSTERS_PER_CHUNK)
        .map(|chunk| {
            let mut k = Scratch::default();
            let mut out = Vec::new();
            for b in chunk {
                let (_, _, one_plus) = factor(d, b, (r, theta), &mut k)?;
                out.extend(k.a.iter().map(|a| a / one_plus));
            }
            Ok(out)
        })
        .collect();
    let mut all = Vec::with_capacity(d.k());
    for part in parts {
        all.extend(part?);
    }
    Ok(all)
}

/// Add one cluster's parts to `s`, from its covariance inverted in factored form.
fn add_cluster(
    d: &NestedData,
    b: &Block,
    (r, theta): (f64, [f64; 2]),
    k: &mut Scratch,
    s: &mut Sums,
) -> Result<()> {
    let (n, p) = (b.len, d.p());
    let (log_det, m1, one_plus) = factor(d, b, (r, theta), k)?;
    for buf in [&mut k.ma, &mut k.u, &mut k.wy] {
        buf.resize(n, 0.0);
    }
    for buf in [&mut k.x, &mut k.wx, &mut k.wwx] {
        buf.resize(n * p, 0.0);
    }
    s.log_det += log_det;
    let c = theta[0] / one_plus;
    let f = Factored {
        b,
        dinv: &k.dinv,
        g: &k.g,
        rs: &k.rs,
        a: &k.a,
        c,
    };
    // W1 = a(1 − c·1ᵀa) = a / (1 + τ²_cluster·1ᵀa).
    k.u.iter_mut()
        .zip(&k.a)
        .for_each(|(u, a)| *u = a / one_plus);
    let s1 = m1 / one_plus;
    // tr W = Σ 1/dᵢ − Σ_s r_s‖g_s‖² − c‖a‖², and ‖W‖²_F = ‖M⁻¹‖²_F − 2c·aᵀM⁻¹a + c²‖a‖⁴,
    // with ‖M⁻¹‖²_F = Σ_s (Σ 1/dᵢ² − 2r_s Σ gᵢ²/dᵢ + r_s²(Σ gᵢ²)²).
    let mut tr_m = 0.0;
    let mut norm_m = 0.0;
    k.dots.iter_mut().for_each(|x| *x = 0.0);
    for (i, &sm) in b.local.iter().enumerate() {
        let (di, gi) = (k.dinv[i], k.g[i]);
        tr_m += di - k.rs[sm] * gi * gi;
        norm_m += di * di - 2.0 * k.rs[sm] * gi * gi * di;
        k.dots[sm] += gi * gi;
    }
    norm_m +=
        k.rs.iter()
            .zip(&k.dots)
            .map(|(r, g2)| r * r * g2 * g2)
            .sum::<f64>();
    let aa = dot(&k.a, &k.a);
    f.apply_m(&k.a, &mut k.dots, &mut k.ma);
    let ama = dot(&k.a, &k.ma);
    s.tr_w[1] += tr_m - c * aa;
    let norm_w = norm_m - 2.0 * c * ama + c * c * aa * aa;
    let y = &d.y[b.start..b.start + n];
    f.apply(y, &mut k.dots, &mut k.wy);
    for j in 0..p {
        for i in 0..n {
            k.x[j * n + i] = d.x[(b.start + i, j)];
        }
        let col = j * n..(j + 1) * n;
        f.apply(&k.x[col.clone()], &mut k.dots, &mut k.wx[col.clone()]);
        f.apply(&k.wx[col.clone()], &mut k.dots, &mut k.wwx[col]);
    }
    let sy: f64 = dot(&k.u, y);
    s.tr_w[0] += s1;
    s.t1[0] += s1 * s1;
    s.t1[1] += dot(&k.u, &k.u);
    s.t1[2] += norm_w;
    s.y_w_y += dot(y, &k.wy);
    s.sy2 += sy * sy;
    s.y_w2_y += dot(&k.wy, &k.wy);
    let col = |j: usize| -> std::ops::Range<usize> { j * n..(j + 1) * n };
    for j in 0..p {
        let wxj = &k.wx[col(j)];
        let xu_j: f64 = dot(&k.x[col(j)], &k.u);
        s.b[j] += dot(wxj, y);
        s.sy_xu[j] += sy * xu_j;
        s.x_w2_y[j] += dot(wxj, &k.wy);
        for l in 0..p {
            let at = l * p + j;
            let wxl = &k.wx[col(l)];
            let xu_l: f64 = dot(&k.x[col(l)], &k.u);
            s.a[at] += dot(&k.x[col(l)], wxj);
            s.b_c[at] += xu_j * xu_l;
            s.b_w[at] += dot(wxj, wxl);
            s.k_cc[at] += s1 * xu_j * xu_l;
            s.k_ww[at] += dot(wxj, &k.wwx[col(l)]);
            s.k_cw[at] += xu_j * dot(wxl, &k.u);
        }
    }
    Ok(())
}

/// Evaluate the likelihood at θ = (τ²_cluster, τ²_within) with sampling correlation `r`.
///
/// With W = V⁻¹ (block-diagonal), A = XᵀWX, P = W − WXA⁻¹XᵀW and D_c = J (ones within a
/// cluster), D_w = I the derivatives of V: score_r = −½ tr(PD_r) + ½ rᵀW D_r W r and
/// information ½ tr(PD_rPD_s), with tr(PD_r) = tr(WD_r) − tr(A⁻¹XᵀWD_rWX) and
/// tr(PD_rPD_s) = tr(WD_rWD_s) − 2 tr(A⁻¹XᵀWD_rWD_sWX) + tr(A⁻¹XᵀWD_rWX·A⁻¹XᵀWD_sWX);
/// for ML the A terms are left out. Each trace is a sum over clusters, computed in one
/// pass over parallel chunks of clusters.
///
/// # References
/// Harville, D. A. (1977). Maximum likelihood approaches to variance component estimation
/// and to related problems. *Journal of the American Statistical Association*, 72(358),
/// 320–338.
pub(crate) fn evaluate(
    d: &NestedData,
    r: f64,
    theta: [f64; 2],
    restricted: bool,
    derivatives: bool,
) -> Result<Evaluation> {
    use rayon::prelude::*;
    let p = d.p();
    let partial: Vec<Result<Sums>> = d
        .blocks
        .par_chunks(CLUSTERS_PER_CHUNK)
        .map(|chunk| {
            let mut scratch = Scratch::default();
            let mut sums = Sums::zeros(p);
            for b in chunk {
                add_cluster(d, b, (r, theta), &mut scratch, &mut sums)?;
            }
            Ok(sums)
        })
        .collect();
    let mut s = Sums::zeros(p);
    for part in partial {
        s.add(&part?);
    }
    let (cov, log_det_a) = inverse_and_log_det(DMatrix::from_column_slice(p, p, &s.a))
        .map_err(|_| Error::cannot("the design is singular: a coefficient cannot be estimated"))?;
    let beta = &cov * DVector::from_column_slice(&s.b);
    // A quadratic form c − 2βᵀv + βᵀMβ.
    let form = |c: f64, v: &[f64], m: &[f64]| {
        let v = DVector::from_column_slice(v);
        let m = DMatrix::from_column_slice(p, p, m);
        c - 2.0 * beta.dot(&v) + (beta.transpose() * m * &beta)[(0, 0)]
    };
    let quad = form(s.y_w_y, &s.b, &s.a);
    let mut log_lik = -0.5 * (s.log_det + quad);
    if restricted {
        log_lik -= 0.5 * log_det_a;
    }
    let (score, info) = if derivatives {
        let qdq = [
            form(s.sy2, &s.sy_xu, &s.b_c),
            form(s.y_w2_y, &s.x_w2_y, &s.b_w),
        ];
        score_and_info(&s, qdq, &cov, restricted)
    } else {
        ([0.0; 2], [[0.0; 2]; 2])
    };
    Ok(Evaluation {
        log_lik,
        beta,
        cov,
        quad,
        score,
        info,
    })
}

fn score_and_info(
    s: &Sums,
    qdq: [f64; 2],
    cov: &DMatrix<f64>,
    restricted: bool,
) -> ([f64; 2], [[f64; 2]; 2]) {
    let p = cov.nrows();
    let m = |v: &[f64]| DMatrix::from_column_slice(p, p, v);
    let mut score = [0.0; 2];
    let mut info = [[0.0; 2]; 2];
    // T1 = tr(W D_r W D_s): cc = Σ(1ᵀW1)², cw = Σ‖W1‖², ww = Σ‖W‖²_F.
    let t1 = [[s.t1[0], s.t1[1]], [s.t1[1], s.t1[2]]];
    let ab = [cov * m(&s.b_c), cov * m(&s.b_w)];
    let k = [
        [(cov * m(&s.k_cc)).trace(), (cov * m(&s.k_cw)).trace()],
        [(cov * m(&s.k_cw)).trace(), (cov * m(&s.k_ww)).trace()],
    ];
    for r in 0..2 {
        let tr_pd = if restricted {
            s.tr_w[r] - ab[r].trace()
        } else {
            s.tr_w[r]
        };
        score[r] = -0.5 * tr_pd + 0.5 * qdq[r];
        for c in 0..2 {
            let mut v = t1[r][c];
            if restricted {
                v += -2.0 * k[r][c] + (&ab[r] * &ab[c]).trace();
            }
            info[r][c] = 0.5 * v;
        }
    }
    (score, info)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The factored inverse against the dense one (nalgebra's Cholesky) on a cluster whose
    /// samples interleave: W·x for a vector, and the log-determinant.
    #[test]
    fn factored_inverse_matches_the_dense_inverse() {
        let y = [0.3, -0.1, 0.4, 0.2, 0.0, 0.5, -0.2];
        let v = [0.02, 0.05, 0.01, 0.04, 0.03, 0.06, 0.02];
        let x = DMatrix::from_fn(7, 2, |i, j| if j == 0 { 1.0 } else { i as f64 * 0.3 });
        let grouping = Grouping {
            cluster: vec![0; 7],
            sample: vec![0, 1, 0, 2, 1, 0, 3],
        };
        let d = NestedData::new(&y, &v, &x, &grouping).unwrap();
        let b = &d.blocks[0];
        let (r, theta) = (0.6, [0.03, 0.01]);
        let (w, log_det) = inverse_and_log_det(d.marginal_cov(b, r, theta)).unwrap();
        let mut sums = Sums::zeros(2);
        let mut k = Scratch::default();
        add_cluster(&d, b, (r, theta), &mut k, &mut sums).unwrap();
        assert!((sums.log_det - log_det).abs() < 1e-12);
        let yv = DVector::from_column_slice(&d.y);
        assert!((sums.y_w_y - (yv.transpose() * &w * &yv)[(0, 0)]).abs() < 1e-10);
        let wy = &w * &yv;
        for (a, b) in k.wy.iter().zip(wy.iter()) {
            assert!((a - b).abs() < 1e-10 * b.abs().max(1.0));
        }
        assert!((sums.tr_w[1] - w.trace()).abs() < 1e-10);
        assert!((sums.t1[2] - w.norm_squared()).abs() < 1e-8 * w.norm_squared());
        assert!((sums.tr_w[0] - w.sum()).abs() < 1e-10);
        let xw2x = d.x.transpose() * &w * &w * &w * &d.x;
        for (a, b) in sums.k_ww.iter().zip(xw2x.iter()) {
            assert!((a - b).abs() < 1e-8 * b.abs().max(1.0));
        }
    }
}
