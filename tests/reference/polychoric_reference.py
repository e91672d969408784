"""Reference values for polychoric correlations, in numpy and scipy.

The bivariate normal distribution function by one-dimensional quadrature,
Phi2(h, k; r) = integral of phi(x) Phi((k - r x) / sqrt(1 - r^2)) over x < h
(scipy.integrate.quad), independent of the Drezner-Wesolowsky/Genz algorithm relyard
uses; the two-step polychoric correlation (Olsson 1979, Psychometrika 44, 443-460):
thresholds from each item's margins (scipy.stats.norm.ppf of the cumulative proportions),
then for each pair the correlation maximizing the multinomial likelihood of its table
(scipy.optimize.minimize_scalar, bounded); ordinal alpha from the matrix. The item data
are invented: a one-factor normal model cut into ordered categories (seeded draws).
"""

import math

import numpy as np
from scipy import integrate, optimize, stats


def phi2(h, k, r):
    if h == -math.inf or k == -math.inf:
        return 0.0
    if h == math.inf:
        return float(stats.norm.cdf(k))
    if k == math.inf:
        return float(stats.norm.cdf(h))
    s = math.sqrt(1 - r * r)
    f = lambda x: stats.norm.pdf(x) * stats.norm.cdf((k - r * x) / s)  # noqa: E731
    val, _ = integrate.quad(f, -math.inf, h, epsabs=1e-14, epsrel=1e-12, limit=200)
    return float(val)


def thresholds(codes, levels):
    n = len(codes)
    counts = np.array([np.sum(codes == c) for c in range(levels)])
    cum = np.cumsum(counts)[:-1] / n
    return [-math.inf] + [float(stats.norm.ppf(p)) for p in cum] + [math.inf]


def pair(a, b, ta, tb):
    table = np.zeros((len(ta) - 1, len(tb) - 1))
    for x, y in zip(a, b):
        table[x, y] += 1

    def negll(r):
        total = 0.0
        for i in range(table.shape[0]):
            for j in range(table.shape[1]):
                if table[i, j] == 0:
                    continue
                p = (phi2(ta[i + 1], tb[j + 1], r) - phi2(ta[i], tb[j + 1], r)
                     - phi2(ta[i + 1], tb[j], r) + phi2(ta[i], tb[j], r))
                total -= table[i, j] * math.log(max(p, 1e-300))
        return total

    res = optimize.minimize_scalar(negll, bounds=(-0.9999, 0.9999), method="bounded",
                                   options={"xatol": 1e-10})
    return float(res.x)


def one_factor(R):
    """Standardized loadings of the one-factor model of a correlation matrix by maximum
    likelihood (scipy.optimize.minimize, L-BFGS-B, uniquenesses bounded below)."""
    k = R.shape[0]
    _, logdet_r = np.linalg.slogdet(R)

    def f(x):
        lam, psi = x[:k], x[k:]
        sigma = np.outer(lam, lam) + np.diag(psi)
        inv = np.linalg.inv(sigma)
        val = np.linalg.slogdet(sigma)[1] - logdet_r + np.trace(R @ inv) - k
        G = inv - inv @ R @ inv
        return val, np.concatenate([2 * G @ lam, np.diag(G)])

    x0 = np.concatenate([np.full(k, 0.6), np.full(k, 0.6)])
    res = optimize.minimize(f, x0, jac=True, method="L-BFGS-B",
                            bounds=[(None, None)] * k + [(1e-6, None)] * k,
                            options={"ftol": 1e-16, "gtol": 1e-12, "maxiter": 10000})
    lam = res.x[:k]
    return lam if lam.sum() > 0 else -lam


def categorical_omega(th, values, lam, responses):
    """Green & Yang (2009): the common part of the observed sum's variance,
    sum_ij sum_cd w_ic w_jd [Phi2(t_ic, t_jd; l_i l_j) - Phi(t_ic) Phi(t_jd)], over the sample
    variance of the observed sum (n - 1). w are the gaps between consecutive values."""
    k = len(lam)
    total = 0.0
    for i in range(k):
        for j in range(k):
            r = lam[i] * lam[j]
            for c in range(1, len(th[i]) - 1):
                for d in range(1, len(th[j]) - 1):
                    w = (values[i][c] - values[i][c - 1]) * (values[j][d] - values[j][d - 1])
                    total += w * (phi2(th[i][c], th[j][d], r)
                                  - stats.norm.cdf(th[i][c]) * stats.norm.cdf(th[j][d]))
    return float(total / np.var(responses.sum(axis=1), ddof=1))


def polychoric_fixture(stamp):
    grid = []
    for h in (-2.5, -0.7, 0.0, 0.4, 1.9):
        for k in (-1.3, 0.0, 0.8, 2.2):
            for r in (-0.97, -0.6, -0.2, 0.1, 0.5, 0.8, 0.93, 0.99):
                grid.append({"h": h, "k": k, "r": r, "cdf": phi2(h, k, r)})
    rng = np.random.default_rng(20261203)
    n, loadings = 300, np.array([0.8, 0.7, 0.6, 0.5])
    f = rng.normal(size=n)
    z = f[:, None] * loadings[None, :] + rng.normal(size=(n, 4)) * np.sqrt(1 - loadings**2)
    cuts = [[-1.0, 0.0, 1.0], [-0.5, 0.5], [-1.5, -0.5, 0.3, 1.2], [0.0, 0.9]]
    codes = np.column_stack([np.searchsorted(c, z[:, j]) for j, c in enumerate(cuts)])
    levels = [len(c) + 1 for c in cuts]
    th = [thresholds(codes[:, j], levels[j]) for j in range(4)]
    R = np.eye(4)
    for a in range(4):
        for b in range(a + 1, 4):
            R[a, b] = R[b, a] = pair(codes[:, a], codes[:, b], th[a], th[b])
    k = 4
    alpha = k / (k - 1) * (1 - k / R.sum())
    lam = one_factor(R)
    responses = codes + 1.0
    spaced = responses.copy()
    spaced[:, 0] = np.array([0.0, 1.0, 3.0, 6.0])[codes[:, 0]]
    categorical = {
        "loadings": lam.tolist(),
        "omega": categorical_omega(th, [np.arange(1.0, lv + 1) for lv in levels], lam,
                                   responses),
        "spaced_first_item": [0.0, 1.0, 3.0, 6.0],
        "omega_spaced": categorical_omega(
            th, [np.array([0.0, 1.0, 3.0, 6.0])] + [np.arange(1.0, lv + 1) for lv in levels[1:]],
            lam, spaced),
    }
    return {"made_by": stamp(), "cdf": grid,
            "items": {"source": "invented: 300 respondents, one factor, 3-5 categories",
                      "responses": responses.tolist(), "thresholds": [t[1:-1] for t in th],
                      "polychoric": R.tolist(), "ordinal_alpha": float(alpha),
                      "categorical": categorical}}
