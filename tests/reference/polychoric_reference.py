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
    return {"made_by": stamp(), "cdf": grid,
            "items": {"source": "invented: 300 respondents, one factor, 3-5 categories",
                      "responses": (codes + 1).tolist(), "thresholds": [t[1:-1] for t in th],
                      "polychoric": R.tolist(), "ordinal_alpha": float(alpha)}}
