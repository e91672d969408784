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
    /// The sample of each row (any numbering; equal numbers share respondents).
    pub sample: Vec<usize>,
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
            blocks.push(Block {
                start,
                len: r.len(),
                sample: r.iter().map(|&i| grouping.sample[i]).collect(),
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
            row_covariance((v[i], v[j]), (i == j, b.sample[i] == b.sample[j]), r, theta)
        })
    }
}

/// The covariance of two rows of one cluster under the model, the one owner of the working
/// model: vᵢ + τ²_within + τ²_cluster for a row with itself; r·√(vᵢvⱼ) + τ²_cluster for two
/// rows of one sample; τ²_cluster otherwise. `(same_row, same_sample)` say which.
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

/// The inverse and log-determinant of a positive-definite block.
pub(crate) fn inverse_and_log_det(m: DMatrix<f64>) -> Result<(DMatrix<f64>, f64)> {
    let chol = nalgebra::Cholesky::new(m).ok_or_else(|| {
        Error::cannot(
            "a cluster's covariance matrix is not positive definite (check the sampling \
             correlation and the sampling variances)",
        )
    })?;
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

/// Cholesky factorization in place of the n × n symmetric matrix `a` (column-major, lower
/// triangle used); false when it is not positive definite.
fn cholesky_in_place(a: &mut [f64], n: usize) -> bool {
    for j in 0..n {
        let mut d = a[j * n + j];
        for k in 0..j {
            d -= a[k * n + j] * a[k * n + j];
        }
        if !(d > 0.0 && d.is_finite()) {
            return false;
        }
        let d = d.sqrt();
        a[j * n + j] = d;
        for i in j + 1..n {
            let mut s = a[j * n + i];
            for k in 0..j {
                s -= a[k * n + i] * a[k * n + j];
            }
            a[j * n + i] = s / d;
        }
    }
    true
}

/// W = V⁻¹ from the lower Cholesky factor L (column-major): L⁻¹ by forward substitution,
/// then W = L⁻ᵀL⁻¹. Writes W (full, symmetric) into `w`; `linv` is scratch.
fn inverse_from_cholesky(l: &[f64], n: usize, linv: &mut [f64], w: &mut [f64]) {
    linv.iter_mut().for_each(|x| *x = 0.0);
    for c in 0..n {
        // Column c of L⁻¹: solve L z = e_c (z is 0 above row c).
        linv[c * n + c] = 1.0 / l[c * n + c];
        for i in c + 1..n {
            let mut s = 0.0;
            for k in c..i {
                s -= l[k * n + i] * linv[c * n + k];
            }
            linv[c * n + i] = s / l[i * n + i];
        }
    }
    // W[a][b] = Σ_k L⁻¹[k][a] L⁻¹[k][b], k ≥ max(a, b).
    for a in 0..n {
        for b in 0..=a {
            let mut s = 0.0;
            for k in a..n {
                s += linv[a * n + k] * linv[b * n + k];
            }
            w[a * n + b] = s;
            w[b * n + a] = s;
        }
    }
}

/// Scratch buffers of one worker, reused from cluster to cluster.
#[derive(Default)]
struct Scratch {
    v: Vec<f64>,
    linv: Vec<f64>,
    w: Vec<f64>,
    x: Vec<f64>,
    u: Vec<f64>,
    wy: Vec<f64>,
    wx: Vec<f64>,
    wwx: Vec<f64>,
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// out = W·col for the n × n matrix W (column-major).
fn mat_vec(w: &[f64], n: usize, col: &[f64], out: &mut [f64]) {
    out.iter_mut().for_each(|o| *o = 0.0);
    for (c, &xc) in col.iter().enumerate() {
        if xc != 0.0 {
            for (o, wc) in out.iter_mut().zip(&w[c * n..(c + 1) * n]) {
                *o += wc * xc;
            }
        }
    }
}

/// Invert one cluster's marginal covariance and add its parts to `s`.
fn add_cluster(
    d: &NestedData,
    b: &Block,
    (r, theta): (f64, [f64; 2]),
    k: &mut Scratch,
    s: &mut Sums,
) -> Result<()> {
    let (n, p) = (b.len, d.p());
    for buf in [&mut k.v, &mut k.linv, &mut k.w] {
        buf.resize(n * n, 0.0);
    }
    for buf in [&mut k.x, &mut k.wx, &mut k.wwx] {
        buf.resize(n * p, 0.0);
    }
    k.u.resize(n, 0.0);
    k.wy.resize(n, 0.0);
    let vs = &d.v[b.start..b.start + n];
    for j in 0..n {
        for i in j..n {
            let same = (i == j, b.sample[i] == b.sample[j]);
            k.v[j * n + i] = row_covariance((vs[i], vs[j]), same, r, theta);
        }
    }
    if !cholesky_in_place(&mut k.v, n) {
        return Err(Error::cannot(
            "a cluster's covariance matrix is not positive definite (check the sampling \
             correlation and the sampling variances)",
        ));
    }
    s.log_det += 2.0 * (0..n).map(|j| k.v[j * n + j].ln()).sum::<f64>();
    inverse_from_cholesky(&k.v, n, &mut k.linv, &mut k.w);
    let w = &k.w;
    k.u.iter_mut().for_each(|x| *x = 0.0);
    let mut norm_w = 0.0;
    for c in 0..n {
        for i in 0..n {
            let x = w[c * n + i];
            k.u[i] += x;
            norm_w += x * x;
        }
        s.tr_w[1] += w[c * n + c];
    }
    let y = &d.y[b.start..b.start + n];
    mat_vec(w, n, y, &mut k.wy);
    for j in 0..p {
        for i in 0..n {
            k.x[j * n + i] = d.x[(b.start + i, j)];
        }
        mat_vec(
            w,
            n,
            &k.x[j * n..(j + 1) * n],
            &mut k.wx[j * n..(j + 1) * n],
        );
        mat_vec(
            w,
            n,
            &k.wx[j * n..(j + 1) * n],
            &mut k.wwx[j * n..(j + 1) * n],
        );
    }
    let s1: f64 = k.u.iter().sum();
    let sy: f64 = k.wy.iter().sum();
    s.tr_w[0] += s1;
    s.t1[0] += s1 * s1;
    s.t1[1] += dot(&k.u, &k.u);
    s.t1[2] += norm_w;
    s.y_w_y += dot(y, &k.wy);
    s.sy2 += sy * sy;
    s.y_w2_y += dot(&k.wy, &k.wy);
    let col = |_: &[f64], j: usize| -> std::ops::Range<usize> { j * n..(j + 1) * n };
    for j in 0..p {
        let wxj = &k.wx[col(&k.wx, j)];
        let xu_j: f64 = wxj.iter().sum();
        s.b[j] += dot(wxj, y);
        s.sy_xu[j] += sy * xu_j;
        s.x_w2_y[j] += dot(wxj, &k.wy);
        for l in 0..p {
            let at = l * p + j;
            let wxl = &k.wx[col(&k.wx, l)];
            let xu_l: f64 = wxl.iter().sum();
            s.a[at] += dot(&k.x[col(&k.x, l)], wxj);
            s.b_c[at] += xu_j * xu_l;
            s.b_w[at] += dot(wxj, wxl);
            s.k_cc[at] += s1 * xu_j * xu_l;
            s.k_ww[at] += dot(wxj, &k.wwx[col(&k.wwx, l)]);
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
