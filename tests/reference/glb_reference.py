"""Reference values for the greatest lower bound, in numpy and scipy.

Minimum-trace factor analysis solved independently of relyard's barrier method: the
common part Sigma - Psi is written as L L^T (L square), and tr(L L^T) is minimized subject
to (L L^T)_ij = Sigma_ij off the diagonal and (L L^T)_ii <= Sigma_ii
(scipy.optimize.minimize, SLSQP, analytic Jacobians, several starts, the best kept);
glb = 1 - (tr Sigma - tr L L^T) / 1^T Sigma 1 (Ten Berge & Socan 2004, Psychometrika 69,
613-625). Alpha and Guttman's lambda2 from their definitions. Matrices: compound symmetry
(where glb = alpha), exact one- and two-factor structures, and the sample covariances of
invented item data (seeded draws).
"""

import numpy as np
from scipy import optimize


def alpha(S):
    k = S.shape[0]
    return k / (k - 1) * (1 - np.trace(S) / S.sum())


def lambda2(S):
    k = S.shape[0]
    off = S - np.diag(np.diag(S))
    total = S.sum()
    return (off.sum() + np.sqrt(k / (k - 1) * (off ** 2).sum())) / total


def glb(S, starts=4, seed=3):
    k = S.shape[0]
    iu = np.triu_indices(k, 1)
    rng = np.random.default_rng(seed)

    def f(x):
        L = x.reshape(k, k)
        return float((L ** 2).sum()), 2 * x

    def eq(x):
        C = x.reshape(k, k) @ x.reshape(k, k).T
        return (C - S)[iu]

    def eq_jac(x):
        L = x.reshape(k, k)
        J = np.zeros((len(iu[0]), k, k))
        for p, (i, j) in enumerate(zip(*iu)):
            J[p, i, :] += L[j, :]
            J[p, j, :] += L[i, :]
        return J.reshape(len(iu[0]), k * k)

    def ineq(x):
        C = x.reshape(k, k) @ x.reshape(k, k).T
        return np.diag(S) - np.diag(C)

    def ineq_jac(x):
        L = x.reshape(k, k)
        J = np.zeros((k, k, k))
        for i in range(k):
            J[i, i, :] = -2 * L[i, :]
        return J.reshape(k, k * k)

    best = None
    lo = np.linalg.eigvalsh(S).min()
    for s in range(starts):
        shift = (0.3 + 0.6 * rng.random()) * lo
        L0 = np.linalg.cholesky(S - shift * np.eye(k)) + 1e-3 * rng.normal(size=(k, k))
        res = optimize.minimize(lambda x: f(x)[0], L0.ravel(), jac=lambda x: f(x)[1],
                                method="SLSQP",
                                constraints=[{"type": "eq", "fun": eq, "jac": eq_jac},
                                             {"type": "ineq", "fun": ineq, "jac": ineq_jac}],
                                options={"ftol": 1e-15, "maxiter": 5000})
        if best is None or res.fun < best.fun:
            best = res
    L = best.x.reshape(k, k)
    C = L @ L.T
    psi = np.diag(S) - np.diag(C)
    return float(1 - psi.sum() / S.sum()), psi.tolist(), float(np.abs(eq(best.x)).max())


def invented(n, loadings, rng, cuts=None):
    lam = np.asarray(loadings)
    k, m = lam.shape
    f = rng.normal(size=(n, m))
    u = 1 - (lam ** 2).sum(axis=1)
    z = f @ lam.T + rng.normal(size=(n, k)) * np.sqrt(u)
    if cuts is not None:
        z = np.digitize(z, cuts) + 1.0
    return np.cov(z, rowvar=False, ddof=1)


def glb_fixture(stamp):
    rng = np.random.default_rng(20261203)
    cases = []
    cs = np.full((5, 5), 0.35) + np.eye(5) * 0.65
    cases.append(("compound symmetry, 5 items", cs))
    l1 = np.array([0.8, 0.7, 0.6, 0.5, 0.4, 0.65])
    one = np.outer(l1, l1) + np.diag(1 - l1 ** 2)
    cases.append(("one factor, 6 items, exact", one))
    two = np.array([[0.7, 0.0], [0.6, 0.0], [0.65, 0.0], [0.0, 0.7], [0.0, 0.5],
                    [0.0, 0.6], [0.3, 0.4]])
    phi = np.array([[1.0, 0.4], [0.4, 1.0]])
    cov2 = two @ phi @ two.T
    cov2 += np.diag(1 - np.diag(cov2))
    cases.append(("two correlated factors, 7 items, exact", cov2))
    cases.append(("invented: 250 respondents, 8 five-point items, one factor",
                  invented(250, [[0.7], [0.6], [0.5], [0.65], [0.4], [0.55], [0.6], [0.3]], rng,
                           cuts=[-1.5, -0.5, 0.5, 1.5])))
    cases.append(("invented: 120 respondents, 6 items, two factors",
                  invented(120, [[0.7, 0], [0.6, 0], [0.5, 0.1], [0, 0.7], [0, 0.6], [0.2, 0.5]],
                           rng)))
    out = []
    for name, S in cases:
        g, psi, feas = glb(S)
        out.append({"name": name, "covariance": S.tolist(), "alpha": float(alpha(S)),
                    "lambda2": float(lambda2(S)), "glb": g, "error_variances": psi,
                    "largest_constraint_violation": feas})
    return {"made_by": stamp(), "cases": out}
