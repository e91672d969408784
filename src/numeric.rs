//! Small numerical tools shared by the fits: a bracketing root finder.

/// Why a root search stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RootStop {
    /// The bracket shrank below the tolerance.
    Converged,
    /// The iteration limit was reached first.
    IterationLimit,
}

/// A root found by [`brent_root`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Root {
    /// The root.
    pub x: f64,
    /// Function evaluations used.
    pub iterations: usize,
    /// Why the search stopped.
    pub stop: RootStop,
}

/// Find a root of `f` in `[a, b]`, where `f(a)` and `f(b)` have opposite signs (or one
/// is zero), by Brent's method (inverse quadratic interpolation safeguarded by
/// bisection), to absolute tolerance `xtol`.
///
/// Returns `None` when the bracket does not hold a sign change.
///
/// # References
/// Brent, R. P. (1973). *Algorithms for Minimization without Derivatives*, chapter 4.
/// Englewood Cliffs, NJ: Prentice-Hall.
pub fn brent_root<F: FnMut(f64) -> f64>(
    mut f: F,
    a: f64,
    b: f64,
    xtol: f64,
    max_iter: usize,
) -> Option<Root> {
    let (mut a, mut b) = (a, b);
    let mut fa = f(a);
    let mut fb = f(b);
    if fa == 0.0 {
        return Some(Root {
            x: a,
            iterations: 2,
            stop: RootStop::Converged,
        });
    }
    if fb == 0.0 {
        return Some(Root {
            x: b,
            iterations: 2,
            stop: RootStop::Converged,
        });
    }
    if fa.is_nan() || fb.is_nan() || fa.signum() == fb.signum() {
        return None;
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for it in 0..max_iter {
        if fb.signum() == fc.signum() {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * xtol;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return Some(Root {
                x: b,
                iterations: it + 2,
                stop: RootStop::Converged,
            });
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            // Try interpolation.
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * m * s;
                q = 1.0 - s;
            } else {
                let qa = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * m * qa * (qa - r) - (b - a) * (r - 1.0));
                q = (qa - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b);
    }
    Some(Root {
        x: b,
        iterations: max_iter + 2,
        stop: RootStop::IterationLimit,
    })
}

/// The type-7 quantile of unsorted values, by selection (O(n); reorders `values`).
pub fn select_quantile(values: &mut [f64], p: f64) -> f64 {
    let h = (values.len() - 1) as f64 * p;
    let lo = h.floor() as usize;
    let (_, &mut x_lo, above) = values.select_nth_unstable_by(lo, |a, b| a.total_cmp(b));
    let frac = h - lo as f64;
    if frac == 0.0 || above.is_empty() {
        return x_lo;
    }
    // The next order statistic is the smallest value above position lo.
    let x_hi = above.iter().copied().fold(f64::INFINITY, f64::min);
    x_lo + frac * (x_hi - x_lo)
}

/// A percentile interval of values at `level` (type-7 quantiles; reorders `values`).
pub fn percentile_interval(values: &mut [f64], level: f64) -> Option<(f64, f64)> {
    if values.len() < 2 {
        return None;
    }
    let a = 1.0 - level;
    if values.len() >= PARALLEL_SELECTION_MIN {
        let lo = bracketed_quantile(values, a / 2.0);
        let hi = bracketed_quantile(values, 1.0 - a / 2.0);
        if let (Some(lo), Some(hi)) = (lo, hi) {
            return Some((lo, hi));
        }
    }
    let lo = select_quantile(values, a / 2.0);
    let hi = select_quantile(values, 1.0 - a / 2.0);
    Some((lo, hi))
}

/// From this many values on, quantiles are found by [`bracketed_quantile`].
const PARALLEL_SELECTION_MIN: usize = 200_000;

/// The type-7 quantile of many values without reordering them: a systematic sample
/// brackets the quantile, one parallel pass counts the values below the bracket and
/// gathers those inside it, and selection among those few gives the exact order
/// statistics. `None` when the bracket misses (then the caller selects in full).
fn bracketed_quantile(values: &[f64], p: f64) -> Option<f64> {
    use rayon::prelude::*;
    let n = values.len();
    let h = (n - 1) as f64 * p;
    let lo = h.floor() as usize;
    let frac = h - lo as f64;
    // Every 32nd value; the bracket spans the sample quantile ± 6 binomial SDs.
    let mut sample: Vec<f64> = values.iter().step_by(32).copied().collect();
    sample.sort_by(|a, b| a.total_cmp(b));
    let m = sample.len() as f64;
    let half = 6.0 * (m * p * (1.0 - p)).sqrt() + 2.0;
    let at = |r: f64| sample[(r.max(0.0) as usize).min(sample.len() - 1)];
    let (low, high) = (at(m * p - half), at(m * p + half));
    let (below, mut inside) = values
        .par_chunks(1 << 16)
        .map(|c| {
            let mut inside = Vec::new();
            let mut below = 0usize;
            for &x in c {
                if x.total_cmp(&low).is_lt() {
                    below += 1;
                } else if x.total_cmp(&high).is_le() {
                    inside.push(x);
                }
            }
            (below, inside)
        })
        .reduce(
            || (0, Vec::new()),
            |mut a, b| {
                a.0 += b.0;
                a.1.extend(b.1);
                a
            },
        );
    // Both order statistics (lo and lo + 1) must fall inside the bracket.
    if below > lo || below + inside.len() < lo + 2 {
        return None;
    }
    let (_, &mut x_lo, above) = inside.select_nth_unstable_by(lo - below, |a, b| a.total_cmp(b));
    if frac == 0.0 {
        return Some(x_lo);
    }
    let x_hi = above.iter().copied().fold(f64::INFINITY, f64::min);
    Some(x_lo + frac * (x_hi - x_lo))
}

#[cfg(test)]
mod tests {

    /// Selection gives the type-7 (linear) quantile of the sorted values: numpy's
    /// documented example `np.percentile([[10, 7, 4], [3, 2, 1]], 50)` is 3.5 (numpy
    /// reference for `percentile`, from memory), and random arrays agree with sorting.
    /// The bracketed quantile of many values is exactly the type-7 quantile, ties and
    /// values at a bound included.
    #[test]
    fn bracketed_quantiles_are_exact() {
        let mut state = 99u64;
        let mut v: Vec<f64> = (0..300_001)
            .map(|_| {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                let u = (state >> 11) as f64 / (1u64 << 53) as f64;
                // A tenth of the values sit at the bound 1, as capped draws do.
                if u > 0.9 {
                    1.0
                } else {
                    (u * 1000.0).round() / 1000.0
                }
            })
            .collect();
        for p in [0.025, 0.5, 0.975, 0.999] {
            let want = select_quantile(&mut v.clone(), p);
            assert_eq!(bracketed_quantile(&v, p), Some(want), "p {p}");
        }
        let mut w = v.clone();
        let both = percentile_interval(&mut w, 0.95).unwrap();
        v.sort_by(|a, b| a.total_cmp(b));
        let h = (v.len() - 1) as f64 * 0.025;
        assert_eq!(
            both.0,
            v[h.floor() as usize]
                + (h - h.floor()) * (v[h.ceil() as usize] - v[h.floor() as usize])
        );
    }

    #[test]
    fn selection_quantiles_match_sorting() {
        let mut a = [10.0, 7.0, 4.0, 3.0, 2.0, 1.0];
        assert_eq!(select_quantile(&mut a, 0.5), 3.5);
        let mut state = 12345u64;
        for len in [2usize, 3, 10, 101, 1000] {
            let v: Vec<f64> = (0..len)
                .map(|_| {
                    state = state
                        .wrapping_mul(6364136223846793005)
                        .wrapping_add(1442695040888963407);
                    (state >> 11) as f64 / (1u64 << 53) as f64
                })
                .collect();
            let mut sorted = v.clone();
            sorted.sort_by(|a, b| a.total_cmp(b));
            for p in [0.0, 0.025, 0.3, 0.5, 0.975, 1.0] {
                let h = (len - 1) as f64 * p;
                let (lo, hi) = (h.floor() as usize, h.ceil() as usize);
                let want = sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]);
                let got = select_quantile(&mut v.clone(), p);
                assert!(
                    (got - want).abs() <= 1e-15,
                    "len {len}, p {p}: {got} vs {want}"
                );
            }
        }
    }
    use super::*;

    #[test]
    fn finds_known_roots() {
        let r = brent_root(|x| x * x - 2.0, 0.0, 2.0, 1e-14, 100).unwrap();
        assert!((r.x - 2f64.sqrt()).abs() < 1e-13);
        assert_eq!(r.stop, RootStop::Converged);
        let r = brent_root(|x| x.cos() - x, 0.0, 1.0, 1e-14, 100).unwrap();
        assert!((r.x - 0.739_085_133_215_160_6).abs() < 1e-13);
        assert!(brent_root(|x| x * x + 1.0, -1.0, 1.0, 1e-12, 100).is_none());
    }
}

/// Why a minimization stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MinimizeStop {
    /// The largest gradient component fell below the tolerance.
    GradientSmall,
    /// The objective stopped changing (relative change below machine precision).
    NoProgress,
    /// No step along the search direction lowered the objective.
    LineSearchFailed,
    /// The iteration limit was reached first.
    IterationLimit,
}

impl MinimizeStop {
    /// True when the search stopped at a point it accepts as a minimum (a `NoProgress`
    /// stop is returned only when the gradient there is small; see [`bfgs`]).
    pub fn converged(self) -> bool {
        matches!(self, MinimizeStop::GradientSmall | MinimizeStop::NoProgress)
    }
}

/// A minimum found by [`bfgs`].
#[derive(Debug, Clone, PartialEq)]
pub struct Minimum {
    /// The minimizer.
    pub x: Vec<f64>,
    /// The objective there.
    pub value: f64,
    /// The largest absolute gradient component there.
    pub gradient_max: f64,
    /// Iterations used.
    pub iterations: usize,
    /// Why the search stopped.
    pub stop: MinimizeStop,
}

/// Minimize a smooth function by BFGS (a dense inverse-Hessian update) with a
/// backtracking (Armijo) line search. `f` returns the value and the gradient; a value
/// that is not finite counts as too large. Stops when every gradient component is below
/// `gtol`.
///
/// # References
/// Nocedal, J., & Wright, S. J. (2006). *Numerical Optimization* (2nd ed.), algorithm 6.1
/// and section 3.1. New York: Springer.
pub fn bfgs<F: FnMut(&[f64]) -> (f64, Vec<f64>)>(
    mut f: F,
    x0: &[f64],
    gtol: f64,
    max_iter: usize,
) -> Minimum {
    let n = x0.len();
    let mut x = x0.to_vec();
    let (mut fx, mut g) = f(&x);
    let mut h = nalgebra::DMatrix::<f64>::identity(n, n);
    let max_abs = |v: &[f64]| v.iter().fold(0.0f64, |m, e| m.max(e.abs()));
    let mut stalls = 0;
    for it in 0..max_iter {
        let gmax = max_abs(&g);
        if gmax < gtol {
            return Minimum {
                x,
                value: fx,
                gradient_max: gmax,
                iterations: it,
                stop: MinimizeStop::GradientSmall,
            };
        }
        let gv = nalgebra::DVector::from_column_slice(&g);
        let mut d = -(&h * &gv);
        let mut slope = d.dot(&gv);
        if slope.is_nan() || slope >= 0.0 {
            // Not a descent direction: restart from steepest descent.
            h = nalgebra::DMatrix::identity(n, n);
            d = -gv.clone();
            slope = d.dot(&gv);
        }
        let mut step = 1.0;
        let mut accepted = None;
        for _ in 0..60 {
            let trial: Vec<f64> = x.iter().zip(d.iter()).map(|(a, b)| a + step * b).collect();
            let (ft, gt) = f(&trial);
            if ft.is_finite() && ft <= fx + 1e-4 * step * slope {
                accepted = Some((trial, ft, gt));
                break;
            }
            step *= 0.5;
        }
        let Some((xn, fnew, gnew)) = accepted else {
            return Minimum {
                x,
                value: fx,
                gradient_max: gmax,
                iterations: it,
                stop: MinimizeStop::LineSearchFailed,
            };
        };
        let s = nalgebra::DVector::from_iterator(n, xn.iter().zip(&x).map(|(a, b)| a - b));
        let y = nalgebra::DVector::from_iterator(n, gnew.iter().zip(&g).map(|(a, b)| a - b));
        let sy = s.dot(&y);
        if sy > 1e-12 * s.norm() * y.norm() {
            let rho = 1.0 / sy;
            let hy = &h * &y;
            let yhy = y.dot(&hy);
            // H ← (I − ρsyᵀ)H(I − ρysᵀ) + ρssᵀ, expanded.
            h = &h - (&hy * s.transpose() + &s * hy.transpose()) * rho
                + (&s * s.transpose()) * (rho * rho * yhy + rho);
        }
        let change = (fx - fnew).abs();
        x = xn;
        g = gnew;
        let previous = fx;
        fx = fnew;
        if change <= 4.0 * f64::EPSILON * previous.abs().max(1e-300) {
            stalls += 1;
            if stalls >= 3 {
                let gmax = max_abs(&g);
                // Stalling far from a stationary point is not convergence.
                let stop = if gmax < gtol.sqrt() {
                    MinimizeStop::NoProgress
                } else {
                    MinimizeStop::LineSearchFailed
                };
                return Minimum {
                    x,
                    value: fx,
                    gradient_max: gmax,
                    iterations: it + 1,
                    stop,
                };
            }
        } else {
            stalls = 0;
        }
    }
    let gmax = max_abs(&g);
    Minimum {
        x,
        value: fx,
        gradient_max: gmax,
        iterations: max_iter,
        stop: MinimizeStop::IterationLimit,
    }
}

#[cfg(test)]
mod bfgs_tests {
    use super::*;

    /// The Rosenbrock function's minimum at (1, 1) (Nocedal & Wright 2006, p. 27).
    #[test]
    fn finds_the_rosenbrock_minimum() {
        let m = bfgs(
            |x| {
                let (a, b) = (x[0], x[1]);
                let f = 100.0 * (b - a * a).powi(2) + (1.0 - a).powi(2);
                let g = vec![
                    -400.0 * a * (b - a * a) - 2.0 * (1.0 - a),
                    200.0 * (b - a * a),
                ];
                (f, g)
            },
            &[-1.2, 1.0],
            1e-10,
            1000,
        );
        assert!(m.stop.converged(), "{:?}", m.stop);
        assert!(
            (m.x[0] - 1.0).abs() < 1e-7 && (m.x[1] - 1.0).abs() < 1e-7,
            "{:?}",
            m.x
        );
    }
}

/// ln det A from A's Cholesky factor L: 2 Σ ln Lᵢᵢ.
pub fn cholesky_log_det(c: &nalgebra::Cholesky<f64, nalgebra::Dyn>) -> f64 {
    2.0 * c.l_dirty().diagonal().iter().map(|d| d.ln()).sum::<f64>()
}
