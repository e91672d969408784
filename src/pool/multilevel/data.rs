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

    /// True when some sample has more than one row (its sampling errors are correlated).
    pub fn has_shared_samples(&self) -> bool {
        self.blocks.iter().any(|b| {
            let mut s = b.sample.clone();
            s.sort_unstable();
            s.windows(2).any(|w| w[0] == w[1])
        })
    }

    /// The same data with effects divided by √s and variances by s, s the median
    /// sampling variance (so that tolerances are relative to the typical variance).
    pub(crate) fn rescaled(&self) -> (NestedData, f64) {
        let s = crate::numeric::select_quantile(&mut self.v.clone(), 0.5);
        let root = s.sqrt();
        let mut out = self.clone();
        out.y.iter_mut().for_each(|y| *y /= root);
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

    /// The sampling covariance of a block: vᵢ on the diagonal, r·√(vᵢvⱼ) between rows of
    /// one sample, 0 between samples.
    pub(crate) fn sampling_cov(&self, b: &Block, r: f64) -> DMatrix<f64> {
        let v = &self.v[b.start..b.start + b.len];
        DMatrix::from_fn(b.len, b.len, |i, j| {
            if i == j {
                v[i]
            } else if b.sample[i] == b.sample[j] {
                r * (v[i] * v[j]).sqrt()
            } else {
                0.0
            }
        })
    }

    /// The marginal covariance of a block, S + τ²_within·I + τ²_cluster·J.
    pub(crate) fn marginal_cov(&self, b: &Block, r: f64, theta: [f64; 2]) -> DMatrix<f64> {
        let mut m = self.sampling_cov(b, r);
        m.add_scalar_mut(theta[0]);
        for i in 0..b.len {
            m[(i, i)] += theta[1];
        }
        m
    }
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

/// Sums over clusters that the score and information are made of.
#[derive(Default)]
struct Sums {
    tr_w: [f64; 2],
    qdq: [f64; 2],
    t1: [[f64; 2]; 2],
    b: [Option<DMatrix<f64>>; 2],
    k: [[Option<DMatrix<f64>>; 2]; 2],
}

fn add(slot: &mut Option<DMatrix<f64>>, m: DMatrix<f64>) {
    match slot {
        Some(s) => *s += m,
        None => *slot = Some(m),
    }
}

/// Evaluate the likelihood at θ = (τ²_cluster, τ²_within) with sampling correlation `r`.
///
/// With W = V⁻¹ (block-diagonal), A = XᵀWX, P = W − WXA⁻¹XᵀW and D_c = J (ones within a
/// cluster), D_w = I the derivatives of V: score_r = −½ tr(PD_r) + ½ rᵀW D_r W r and
/// information ½ tr(PD_rPD_s), with tr(PD_r) = tr(WD_r) − tr(A⁻¹XᵀWD_rWX) and
/// tr(PD_rPD_s) = tr(WD_rWD_s) − 2 tr(A⁻¹XᵀWD_rWD_sWX) + tr(A⁻¹XᵀWD_rWX·A⁻¹XᵀWD_sWX);
/// for ML the A terms are left out. Each trace is a sum over clusters.
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
    let p = d.p();
    let mut a = DMatrix::<f64>::zeros(p, p);
    let mut bvec = DVector::<f64>::zeros(p);
    let mut log_det = 0.0;
    let mut inverses = Vec::with_capacity(d.blocks.len());
    for b in &d.blocks {
        let (w, ld) = inverse_and_log_det(d.marginal_cov(b, r, theta))?;
        log_det += ld;
        let x = d.x_of(b);
        let wx = &w * &x;
        a += x.transpose() * &wx;
        bvec += wx.transpose() * d.y_of(b);
        inverses.push((w, wx));
    }
    let (cov, log_det_a) = inverse_and_log_det(a)
        .map_err(|_| Error::cannot("the design is singular: a coefficient cannot be estimated"))?;
    let beta = &cov * &bvec;
    let mut quad = 0.0;
    let mut sums = Sums::default();
    for (b, (w, wx)) in d.blocks.iter().zip(&inverses) {
        let resid = d.y_of(b) - d.x_of(b) * &beta;
        let q = w * &resid;
        quad += resid.dot(&q);
        if derivatives {
            accumulate(&mut sums, w, wx, &q);
        }
    }
    let mut log_lik = -0.5 * (log_det + quad);
    if restricted {
        log_lik -= 0.5 * log_det_a;
    }
    let (score, info) = if derivatives {
        score_and_info(&sums, &cov, restricted)
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

/// Add one cluster's parts: W, WX and q = W r.
fn accumulate(s: &mut Sums, w: &DMatrix<f64>, wx: &DMatrix<f64>, q: &DVector<f64>) {
    let u = w.column_sum(); // W1 (W is symmetric)
    let s1 = u.sum(); // 1ᵀW1
    let xu = wx.row_sum().transpose(); // XᵀW1
    s.tr_w[0] += s1;
    s.tr_w[1] += w.trace();
    s.qdq[0] += q.sum().powi(2);
    s.qdq[1] += q.norm_squared();
    s.t1[0][0] += s1 * s1;
    s.t1[1][1] += w.norm_squared();
    s.t1[0][1] += u.norm_squared();
    add(&mut s.b[0], &xu * xu.transpose());
    add(&mut s.b[1], wx.transpose() * wx);
    add(&mut s.k[0][0], &xu * xu.transpose() * s1);
    add(&mut s.k[1][1], wx.transpose() * w * wx);
    add(&mut s.k[0][1], &xu * (wx.transpose() * &u).transpose());
}

fn score_and_info(s: &Sums, cov: &DMatrix<f64>, restricted: bool) -> ([f64; 2], [[f64; 2]; 2]) {
    let mut score = [0.0; 2];
    let mut info = [[0.0; 2]; 2];
    let t1 = [[s.t1[0][0], s.t1[0][1]], [s.t1[0][1], s.t1[1][1]]];
    let ab: Vec<DMatrix<f64>> = (0..2)
        .map(|r| cov * s.b[r].as_ref().expect("accumulated"))
        .collect();
    for r in 0..2 {
        let tr_pd = if restricted {
            s.tr_w[r] - ab[r].trace()
        } else {
            s.tr_w[r]
        };
        score[r] = -0.5 * tr_pd + 0.5 * s.qdq[r];
        for c in 0..2 {
            let mut v = t1[r][c];
            if restricted {
                let k = match (r, c) {
                    (0, 1) => (cov * s.k[0][1].as_ref().expect("accumulated")).trace(),
                    (1, 0) => (cov * s.k[0][1].as_ref().expect("accumulated")).trace(),
                    _ => (cov * s.k[r][r].as_ref().expect("accumulated")).trace(),
                };
                v += -2.0 * k + (&ab[r] * &ab[c]).trace();
            }
            info[r][c] = 0.5 * v;
        }
    }
    (score, info)
}
