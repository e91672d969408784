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

#[cfg(test)]
mod tests {
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
