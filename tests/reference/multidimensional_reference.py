"""Reference values for scales with subscales, in numpy and scipy.

Bifactor and correlated-factors models fitted by maximum likelihood: the discrepancy
F = ln|Sigma| - ln|S| + tr(S Sigma^-1) - k written with numpy.linalg.slogdet and solve,
its gradient in matrix form (dF/dLambda = 2 G Lambda Phi on the free pattern, with
G = Sigma^-1 (Sigma - S) Sigma^-1), minimized by scipy.optimize.minimize (L-BFGS-B, the
uniquenesses bounded below, from several starts, the best kept). This parametrization
(uniquenesses directly, bounded) differs from relyard's (logarithms, unbounded BFGS).
The coefficients follow Rodriguez, Reise & Haviland (2016, Psychological Methods 21,
137-150): omega total, omega hierarchical, each subscale's omega and
omega-hierarchical-subscale, the explained common variance (standardized loadings).

Cases: an exact covariance matrix built from known bifactor loadings (the coefficients in
closed form from those loadings), and invented item data (seeded draws from a bifactor
model: 600 respondents, 12 items in three subscales of four).
"""

import numpy as np
from scipy import optimize, stats

GROUPS = [0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2]
NAMES = ["calm", "focus", "drive"]


def pattern(structure, groups):
    k, m = len(groups), max(groups) + 1
    cols = (m + 1) if structure == "bifactor" else m
    mask = np.zeros((k, cols), dtype=bool)
    for i, g in enumerate(groups):
        if structure == "bifactor":
            mask[i, 0] = True
            mask[i, g + 1] = True
        else:
            mask[i, g] = True
    return mask


def unpack(x, structure, mask):
    k, cols = mask.shape
    nl = int(mask.sum())
    lam = np.zeros((k, cols))
    lam[mask] = x[:nl]
    phi = np.eye(cols)
    rest = x[nl:]
    if structure == "correlated":
        idx = np.tril_indices(cols, -1)
        npair = len(idx[0])
        phi[idx] = rest[:npair]
        phi[(idx[1], idx[0])] = rest[:npair]
        rest = rest[npair:]
    return lam, phi, rest


def discrepancy(x, S, structure, mask):
    k = S.shape[0]
    lam, phi, psi = unpack(x, structure, mask)
    sigma = lam @ phi @ lam.T + np.diag(psi)
    sign, logdet = np.linalg.slogdet(sigma)
    if sign <= 0 or np.min(np.linalg.eigvalsh(sigma)) <= 0:
        return 1e10, np.zeros_like(x)
    _, logdet_s = np.linalg.slogdet(S)
    inv = np.linalg.inv(sigma)
    f = logdet - logdet_s + np.trace(S @ inv) - k
    G = inv - inv @ S @ inv
    g_lam = (2 * G @ lam @ phi)[mask]
    grads = [g_lam]
    if structure == "correlated":
        full = lam.T @ G @ lam
        idx = np.tril_indices(phi.shape[0], -1)
        grads.append(2 * full[idx])
    grads.append(np.diag(G))
    return f, np.concatenate(grads)


def fit(S, structure, groups, seed=7):
    mask = pattern(structure, groups)
    k, cols = mask.shape
    var = np.diag(S)
    nl = int(mask.sum())
    npair = cols * (cols - 1) // 2 if structure == "correlated" else 0
    rng = np.random.default_rng(seed)
    best = None
    for start in range(6):
        lam0 = np.sqrt(var)[:, None] * np.where(mask, 0.4 + 0.3 * rng.random(mask.shape), 0)
        x0 = np.concatenate([lam0[mask], np.full(npair, 0.3), 0.5 * var])
        bounds = ([(None, None)] * nl + [(-0.999, 0.999)] * npair
                  + [(1e-6 * v, None) for v in var])
        res = optimize.minimize(discrepancy, x0, args=(S, structure, mask), jac=True,
                                method="L-BFGS-B", bounds=bounds,
                                options={"maxiter": 20000, "ftol": 1e-16, "gtol": 1e-11,
                                         "maxcor": 50})
        if best is None or res.fun < best.fun:
            best = res
    lam, phi, psi = unpack(best.x, structure, mask)
    # Each factor's loadings summing to a positive number.
    for c in range(cols):
        if lam[:, c].sum() < 0:
            lam[:, c] = -lam[:, c]
            phi[c, :] = -phi[c, :]
            phi[:, c] = -phi[:, c]
            phi[c, c] = 1.0
    return lam, phi, psi, float(best.fun), nl + npair + k


def fit_indices(S, f, q, n):
    k = S.shape[0]
    df = k * (k + 1) / 2 - q
    chi2 = (n - 1) * max(f, 0.0)
    d = np.sqrt(np.diag(S))
    R = S / np.outer(d, d)
    chi2_null = -(n - 1) * np.linalg.slogdet(R)[1]
    df_null = k * (k - 1) / 2
    d_model = max(chi2 - df, 0.0)
    d_null = max(chi2_null - df_null, d_model)
    return {"chi2": chi2, "df": df, "p": float(stats.chi2.sf(chi2, df)),
            "rmsea": float(np.sqrt(d_model / (df * (n - 1)))),
            "cfi": float(1 - d_model / d_null) if d_null > 0 else 1.0}


def omegas(general, specific, psi, var, groups):
    """The bifactor coefficients from raw loadings (vectors), uniquenesses and variances."""
    groups = np.array(groups)
    a = general.sum()
    parts = sum(specific[groups == g].sum() ** 2 for g in range(groups.max() + 1))
    total = a * a + parts + psi.sum()
    subs = []
    for g in range(groups.max() + 1):
        sel = groups == g
        ag, bg = general[sel].sum(), specific[sel].sum()
        v = ag * ag + bg * bg + psi[sel].sum()
        subs.append({"name": NAMES[g], "omega": (ag * ag + bg * bg) / v,
                     "omega_hierarchical_subscale": bg * bg / v})
    gs, ss = (general ** 2 / var).sum(), (specific ** 2 / var).sum()
    return {"omega_total": (a * a + parts) / total, "omega_hierarchical": a * a / total,
            "ecv": gs / (gs + ss), "subscales": subs}


def model_record(S, n, structure):
    lam, phi, psi, f, q = fit(S, structure, GROUPS)
    rec = {"discrepancy": f, "free_parameters": q, "uniquenesses": psi.tolist(),
           "fit": fit_indices(S, f, q, n)}
    if structure == "bifactor":
        general = lam[:, 0]
        specific = lam[:, 1:].sum(axis=1)
        rec.update({"general": general.tolist(), "specific": specific.tolist(),
                    "coefficients": omegas(general, specific, psi, np.diag(S), GROUPS)})
    else:
        rec.update({"specific": lam.sum(axis=1).tolist(), "correlations": phi.tolist()})
    return rec


def multidimensional_fixture(stamp):
    # Exact: standardized loadings, item SDs unequal.
    g = np.array([0.7, 0.6, 0.65, 0.5, 0.55, 0.6, 0.7, 0.45, 0.5, 0.6, 0.4, 0.65])
    s = np.array([0.4, 0.5, 0.3, 0.45, 0.35, 0.3, 0.25, 0.5, 0.55, 0.4, 0.5, 0.3])
    sd = np.array([1.0, 1.5, 0.8, 2.0, 1.2, 1.0, 0.9, 1.1, 1.3, 1.0, 0.7, 1.6])
    u = 1 - g ** 2 - s ** 2
    groups = np.array(GROUPS)
    same = groups[:, None] == groups[None, :]
    R = np.outer(g, g) + np.outer(s, s) * same + np.diag(u)
    cov = R * np.outer(sd, sd)
    exact = {"groups": GROUPS, "names": NAMES, "covariance": cov.tolist(),
             "general": (g * sd).tolist(), "specific": (s * sd).tolist(),
             "coefficients": omegas(g * sd, s * sd, u * sd ** 2, sd ** 2, GROUPS)}
    # Invented item data from a bifactor model, rounded to two decimals.
    rng = np.random.default_rng(20261203)
    n = 600
    gen = rng.normal(size=n)
    grp = rng.normal(size=(n, 3))
    z = (gen[:, None] * g[None, :] + grp[:, groups] * s[None, :]
         + rng.normal(size=(n, 12)) * np.sqrt(u)[None, :])
    x = np.round(3 + z * sd[None, :], 2)
    S = np.cov(x, rowvar=False, ddof=1)
    data = {"source": "invented: 600 respondents, a general factor and three group factors",
            "groups": GROUPS, "names": NAMES, "responses": x.tolist(), "n": n,
            "bifactor": model_record(S, n, "bifactor"),
            "correlated": model_record(S, n, "correlated")}
    return {"made_by": stamp(), "exact": exact, "data": data}
