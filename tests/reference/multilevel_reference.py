"""Reference values for the multilevel model of dependent coefficients, in dense numpy.

Everything here works on the full k x k matrices, the plain way, so that it checks the
cluster-by-cluster algebra of relyard's fit independently:

  * the model y = X b + u(cluster) + w(row) + e, Var(e) = S with v_i on the diagonal and
    r * sqrt(v_i v_j) between rows of one sample (the correlated-and-hierarchical-effects
    working model; Pustejovsky & Tipton 2022, Prevention Science 23, 425-438);
  * REML and ML: the (restricted) log-likelihood maximized by scipy.optimize.minimize
    (L-BFGS-B, bounds at 0) from several starts, then polished by solving the score
    equations (written out with the dense P matrix; Harville 1977, JASA 72, 320-338) with
    scipy.optimize.root, or scipy.optimize.brentq for one free component;
  * profile-likelihood intervals: scipy.optimize.brentq on the profile (the other
    component maximized by scipy.optimize.minimize_scalar) against chi2(1) quantiles;
  * the likelihood-ratio test of tau2_cluster = 0 with the 50:50 chi2(0)/chi2(1) mixture
    (Self & Liang 1987, JASA 82, 605-610);
  * CR2 (Bell & McCaffrey 2002; Pustejovsky & Tipton 2018, JBES 36, 672-683): adjustment
    matrices A_j = D_j' B_j^(-1/2) D_j with D_j the upper Cholesky factor of Phi_j and
    B_j = D_j (I - H)_j Phi (I - H)_j' D_j', from the full hat matrix H; Satterthwaite
    degrees of freedom (Tipton 2015, Psychological Methods 20, 375-393) from the vectors
    p_j = (I - H)_j' A_j W_j X_j M c and the full Phi (the CR2 variance of c'b is
    sum_j (p_j' y)^2, with the meat sum_j X_j' W_j A_j e_j e_j' A_j W_j X_j).

The sheets are invented (seeded draws); they are test data, not a demo.
"""

import itertools
import math

import numpy as np
from scipy import optimize, stats


def sampling_cov(v, sample, r):
    k = len(v)
    s = np.diag(v.astype(float))
    for i in range(k):
        for j in range(k):
            if i != j and sample[i] == sample[j]:
                s[i, j] = r * math.sqrt(v[i] * v[j])
    return s


def marginal(case, theta):
    cl = np.asarray(case["cluster"])
    same = (cl[:, None] == cl[None, :]).astype(float)
    k = len(cl)
    return case["S"] + theta[0] * same + theta[1] * np.eye(k), same


def loglik(case, theta, restricted):
    y, X = case["y"], case["X"]
    V, _ = marginal(case, theta)
    W = np.linalg.inv(V)
    A = X.T @ W @ X
    b = np.linalg.solve(A, X.T @ W @ y)
    r = y - X @ b
    ll = -0.5 * (np.linalg.slogdet(V)[1] + r @ W @ r)
    if restricted:
        ll -= 0.5 * np.linalg.slogdet(A)[1]
    return ll


def score(case, theta, restricted):
    y, X = case["y"], case["X"]
    V, same = marginal(case, theta)
    W = np.linalg.inv(V)
    P = W - W @ X @ np.linalg.solve(X.T @ W @ X, X.T @ W)
    Q = P if restricted else W
    out = []
    for D in (same, np.eye(len(y))):
        out.append(-0.5 * np.trace(Q @ D) + 0.5 * y @ P @ D @ P @ y)
    return np.array(out)


def maximize(case, restricted, fixed=(None, None), starts=None):
    """The maximum over the free components (a fixed one is held at its value)."""
    free = [i for i in range(2) if fixed[i] is None]

    def full(t):
        theta = [0.0, 0.0]
        for i in range(2):
            theta[i] = fixed[i] if fixed[i] is not None else None
        for n, i in enumerate(free):
            theta[i] = t[n]
        return theta

    if not free:
        theta = [fixed[0], fixed[1]]
        return theta, loglik(case, theta, restricted)
    scale = float(np.median(case["v"]))
    starts = starts or [[0.05 * scale] * len(free), [scale] * len(free), [5 * scale] * len(free)]
    best = None
    for s0 in starts:
        res = optimize.minimize(lambda t: -loglik(case, full(t), restricted), s0,
                                method="L-BFGS-B", bounds=[(0, None)] * len(free),
                                options={"ftol": 1e-15, "gtol": 1e-13, "maxiter": 10000})
        if best is None or res.fun < best.fun:
            best = res
    t = np.array(best.x, dtype=float)
    t = polish(case, restricted, fixed, free, t, full)
    theta = full(t)
    return theta, loglik(case, theta, restricted)


def polish(case, restricted, fixed, free, t, full):
    """Solve the score equations of the components away from 0."""
    scale = float(np.median(case["v"]))
    t = np.where(t < 1e-7 * scale, 0.0, t)
    for _ in range(3):
        inner = [i for n, i in enumerate(free) if t[n] > 0]
        at_zero = [n for n, i in enumerate(free) if t[n] == 0]
        if len(inner) == 2:
            for method in ("hybr", "lm"):
                sol = optimize.root(lambda z: score(case, full(z), restricted) * scale, t,
                                    method=method, tol=1e-15)
                if np.all(sol.x >= 0) and np.max(np.abs(sol.fun)) < np.max(
                        np.abs(score(case, full(t), restricted) * scale)):
                    t = sol.x
        elif len(inner) == 1:
            n = free.index(inner[0])

            def f(z):
                tt = t.copy()
                tt[n] = z
                return score(case, full(tt), restricted)[inner[0]]

            hi = t[n] * 2
            while f(hi) > 0:
                hi *= 2
            t[n] = optimize.brentq(f, t[n] / 4 if f(t[n] / 4) > 0 else 0.0, hi, xtol=1e-16,
                                   rtol=1e-14)
        # A component at 0 must have a score pointing below 0.
        s = score(case, full(t), restricted)
        if all(s[free[n]] <= 1e-8 for n in at_zero):
            break
    return t


def profile_interval(case, restricted, i, theta_hat, ll_hat, level=0.95):
    crit = ll_hat - 0.5 * stats.chi2.ppf(level, 1)
    other = 1 - i
    scale = float(np.median(case["v"]))

    def prof(t):
        fixed = [None, None]
        fixed[i] = t
        if not case["within_identified"]:
            fixed[1] = 0.0
        if fixed[other] is not None:
            theta = [0.0, 0.0]
            theta[i], theta[other] = t, fixed[other]
            return loglik(case, theta, restricted) - crit
        res = optimize.minimize_scalar(
            lambda z: -loglik(case, [t, z] if i == 0 else [z, t], restricted),
            bounds=(0, 50 * scale + 10 * theta_hat[other]), method="bounded",
            options={"xatol": 1e-13 * scale})
        best = max(-res.fun, loglik(case, [t, 0.0] if i == 0 else [0.0, t], restricted))
        return best - crit

    th = theta_hat[i]
    lower = 0.0
    if th > 0 and prof(0.0) < 0:
        lower = optimize.brentq(prof, 0.0, th, xtol=1e-14 * scale)
    hi = max(th, 1e-2 * scale) * 2
    while prof(hi) > 0:
        hi *= 2
    upper = optimize.brentq(prof, max(th, hi / 2 if prof(hi / 2) > 0 else th), hi,
                            xtol=1e-14 * scale)
    return [lower, upper]


def cr2(case, theta):
    y, X = case["y"], case["X"]
    Phi, _ = marginal(case, theta)
    W = np.linalg.inv(Phi)
    M = np.linalg.inv(X.T @ W @ X)
    b = M @ X.T @ W @ y
    e = y - X @ b
    k, p = X.shape
    H = X @ M @ X.T @ W
    IH = np.eye(k) - H
    cl = np.asarray(case["cluster"])
    groups = [np.where(cl == c)[0] for c in dict.fromkeys(cl.tolist())]
    meat = np.zeros((p, p))
    E = []
    for g in groups:
        D = np.linalg.cholesky(Phi[np.ix_(g, g)]).T  # upper: D'D = Phi_j
        B = D @ IH[g, :] @ Phi @ IH[g, :].T @ D.T
        vals, vecs = np.linalg.eigh((B + B.T) / 2)
        root_inv = vecs @ np.diag([1 / math.sqrt(x) if x > 1e-12 * vals.max() else 0.0
                                   for x in vals]) @ vecs.T
        A = D.T @ root_inv @ D
        Wj = W[np.ix_(g, g)]
        u = X[g, :].T @ Wj @ A @ e[g]
        meat += np.outer(M @ u, M @ u)
        E.append((g, A, Wj))
    dfs = []
    for c in range(p):
        cvec = np.zeros(p)
        cvec[c] = 1.0
        ps = []
        for g, A, Wj in E:
            gj = np.zeros(k)
            gj[g] = A @ Wj @ X[g, :] @ M @ cvec
            ps.append(IH.T @ gj)
        Om = np.array([[pi @ Phi @ pj for pj in ps] for pi in ps])
        dfs.append(float(np.trace(Om) ** 2 / np.sum(Om**2)))
    return b, M, meat, dfs


def htz(case, theta, columns):
    """The approximate Hotelling T^2 test of Pustejovsky & Tipton (2018, section 3.2) from
    the explicit vectors p_si = (I - H)_i' A_i W_i X_i M C' g_s, g_s the columns of
    G^(-1/2), G = C M X' W Phi W X M C' (the working-model variance of C b)."""
    y, X = case["y"], case["X"]
    Phi, _ = marginal(case, theta)
    W = np.linalg.inv(Phi)
    M = np.linalg.inv(X.T @ W @ X)
    k, p = X.shape
    IH = np.eye(k) - X @ M @ X.T @ W
    q = len(columns)
    C = np.zeros((q, p))
    for s, j in enumerate(columns):
        C[s, j] = 1.0
    G = C @ M @ X.T @ W @ Phi @ W @ X @ M @ C.T
    vals, vecs = np.linalg.eigh(G)
    Gih = vecs @ np.diag(vals ** -0.5) @ vecs.T
    b, _, V, _ = cr2(case, theta)
    cl = np.asarray(case["cluster"])
    groups = [np.where(cl == c)[0] for c in dict.fromkeys(cl.tolist())]
    P = {}
    for i, g in enumerate(groups):
        D = np.linalg.cholesky(Phi[np.ix_(g, g)]).T
        B = D @ IH[g, :] @ Phi @ IH[g, :].T @ D.T
        ev, evec = np.linalg.eigh((B + B.T) / 2)
        root_inv = evec @ np.diag([1 / math.sqrt(x) if x > 1e-12 * ev.max() else 0.0
                                   for x in ev]) @ evec.T
        A = D.T @ root_inv @ D
        for s in range(q):
            u = np.zeros(k)
            u[g] = A @ W[np.ix_(g, g)] @ X[g, :] @ M @ C.T @ Gih[:, s]
            P[(s, i)] = IH.T @ u
    m = len(groups)
    total = 0.0
    for s in range(q):
        for t in range(q):
            for i in range(m):
                for j in range(m):
                    total += (P[(s, i)] @ Phi @ P[(t, j)]) * (P[(t, i)] @ Phi @ P[(s, j)]) \
                        + (P[(s, i)] @ Phi @ P[(s, j)]) * (P[(t, i)] @ Phi @ P[(t, j)])
    eta = q * (q + 1) / total
    cb = C @ b
    Q = float(cb @ np.linalg.solve(C @ V @ C.T, cb))
    F = (eta - q + 1) / (eta * q) * Q
    return {"columns": list(columns), "eta": eta, "statistic": F, "df_num": q,
            "df_den": eta - q + 1, "p": float(stats.f.sf(F, q, eta - q + 1))}


def leave_one_out(case, restricted, theta, beta, M):
    """Each row left out: the refit (dense, started at the full fit's variances), the
    externally studentized residual from the full conditional distribution of the row given
    every other row under the refit, and Cook's distance against the full fit."""
    y, X, v = case["y"], case["X"], case["v"]
    k, p = X.shape
    out = []
    for i in range(k):
        keep = [j for j in range(k) if j != i]
        sub = {"y": y[keep], "v": v[keep], "X": X[keep], "S": case["S"][np.ix_(keep, keep)],
               "cluster": [case["cluster"][j] for j in keep],
               "sample": [case["sample"][j] for j in keep]}
        th, _ = maximize(sub, restricted, (None, None), starts=[list(theta)])
        Vs, _ = marginal(sub, th)
        Ws = np.linalg.inv(Vs)
        Ms = np.linalg.inv(sub["X"].T @ Ws @ sub["X"])
        bs = Ms @ sub["X"].T @ Ws @ sub["y"]
        Vf, _ = marginal(case, th)
        vio = Vf[i, keep]
        w = np.linalg.solve(Vf[np.ix_(keep, keep)], vio)
        mean = X[i] @ bs + w @ (y[keep] - X[keep] @ bs)
        h = X[i] - X[keep].T @ w
        var = Vf[i, i] - w @ vio + h @ Ms @ h
        diff = beta - bs
        out.append({"beta": bs.tolist(), "tau2": float(th[0] + th[1]),
                    "rstudent": float((y[i] - mean) / math.sqrt(var)),
                    "cooks": float(diff @ np.linalg.solve(M, diff) / p)})
    return out


def known_cluster(case, theta, beta, M, cluster, x0):
    """The prediction of x0'b + u_j for a cluster of the sheet: the BLUP and its
    prediction-error variance from the dense mixed-model expression
    k'Mk - 2 k'M X'V^-1 Z G + G - G Z'PZ G (Henderson 1975), Z the cluster's indicator."""
    y, X = case["y"], case["X"]
    V, _ = marginal(case, theta)
    W = np.linalg.inv(V)
    P = W - W @ X @ M @ X.T @ W
    z = np.array([1.0 if c == cluster else 0.0 for c in case["cluster"]])
    g = theta[0]
    k = np.asarray(x0, float)
    centre = k @ beta + g * z @ W @ (y - X @ beta)
    pev = k @ M @ k - 2 * g * k @ M @ X.T @ W @ z + g - g * g * z @ P @ z
    return {"cluster": cluster, "x0": list(x0), "centre": float(centre), "pev": float(pev)}


def case_of(name, y, v, X, cluster, sample, r, restricted, source, loo=False):
    case = {"y": np.asarray(y, float), "v": np.asarray(v, float), "X": np.asarray(X, float),
            "cluster": list(cluster), "sample": list(sample)}
    case["S"] = sampling_cov(case["v"], sample, r)
    sizes = {}
    for c in cluster:
        sizes[c] = sizes.get(c, 0) + 1
    case["within_identified"] = max(sizes.values()) > 1
    fixed = (None, None if case["within_identified"] else 0.0)
    theta, ll = maximize(case, restricted, fixed)
    b, M, rob, dfs = cr2(case, theta)
    ci_c = profile_interval(case, restricted, 0, theta, ll)
    ci_w = profile_interval(case, restricted, 1, theta, ll) if case["within_identified"] else None
    _, ll0 = maximize(case, restricted, (0.0, fixed[1]))
    # Two maxima that agree to rounding (about 1e-12 of the log-likelihood; which side of 0
    # their difference falls on depends on the processor's arithmetic) are no evidence at
    # all: the statistic is then 0, as relyard takes it.
    lrt = 2 * (ll - ll0)
    if lrt <= 1e-9 * max(abs(ll), 1.0):
        lrt = 0.0
    q_theta = [0.0, 0.0]
    V0, _ = marginal(case, q_theta)
    b0 = np.linalg.solve(case["X"].T @ np.linalg.solve(V0, case["X"]),
                         case["X"].T @ np.linalg.solve(V0, case["y"]))
    r0 = case["y"] - case["X"] @ b0
    return {
        "name": name, "source": source, "restricted": restricted, "sampling_correlation": r,
        "y": case["y"].tolist(), "v": case["v"].tolist(), "x": case["X"].tolist(),
        "cluster": list(cluster), "sample": list(sample),
        "tau2_cluster": float(theta[0]), "tau2_within": float(theta[1]),
        "beta": b.tolist(), "cov_model": M.tolist(), "cov_cr2": rob.tolist(), "df_cr2": dfs,
        "tau2_cluster_ci": ci_c, "tau2_within_ci": ci_w,
        "lrt_statistic": lrt, "lrt_p": float(0.5 * stats.chi2.sf(lrt, 1)) if lrt > 0 else 1.0,
        "q": float(r0 @ np.linalg.solve(V0, r0)),
        "score_at_estimate": score(case, theta, restricted).tolist(),
        "htz": htz(case, theta, list(range(1, case["X"].shape[1]))) if case["X"].shape[1] > 1
        else None,
        "leave_one_out": leave_one_out(case, restricted, theta, b, M) if loo else None,
        "known_cluster": known_cluster(case, theta, b, M, cluster[0],
                                       [1.0] + [0.5] * (case["X"].shape[1] - 1)),
    }


def invented_sheet(rng, clusters, max_samples, max_rows, tau_c, tau_w, r, slope=None):
    """Bonett-scale effects of invented samples, nested in invented clusters."""
    y, v, cl, sa, x1 = [], [], [], [], []
    sample_id = 0
    for c in range(clusters):
        u = rng.normal(0, math.sqrt(tau_c))
        for _ in range(int(rng.integers(1, max_samples + 1))):
            rows = int(rng.integers(1, max_rows + 1))
            vs = rng.uniform(0.005, 0.05, rows)
            cov = np.array([[vs[i] if i == j else r * math.sqrt(vs[i] * vs[j])
                             for j in range(rows)] for i in range(rows)])
            err = rng.multivariate_normal(np.zeros(rows), cov)
            mod = float(rng.uniform(0, 4))
            for i in range(rows):
                mean = -1.5 + (slope * mod if slope is not None else 0.0)
                y.append(mean + u + rng.normal(0, math.sqrt(tau_w)) + err[i])
                v.append(float(vs[i]))
                cl.append(f"c{c + 1}")
                sa.append(f"s{sample_id + 1}")
                x1.append(mod)
            sample_id += 1
    return y, v, cl, sa, x1


def exact_cluster_permutation(rng):
    """The permutation test beside a multilevel fit, exactly: an invented sheet of 5
    clusters with a moderator that takes one value per cluster, refitted (REML, CR2) under
    every one of the 5! = 120 orderings of the clusters' moderator values; the exact p of
    |b1| / SE_CR2 (Higgins & Thompson 2004, Statistics in Medicine 23, 1663-1682, with
    clusters as the units permuted). Effects are centred near 0 so that a sheet can give
    them as already-transformed values."""
    xs = [0.3, 1.1, 1.8, 2.6, 3.4]
    y, v, cl, sa = [], [], [], []
    sample_id = 0
    for c in range(5):
        u = rng.normal(0, 0.15)
        for _ in range(2):
            rows = int(rng.integers(1, 3))
            for _ in range(rows):
                vi = float(rng.uniform(0.005, 0.03))
                y.append(-0.2 + 0.08 * xs[c] + u + rng.normal(0, 0.1) + rng.normal(0, math.sqrt(vi)))
                v.append(vi)
                cl.append(f"c{c + 1}")
                sa.append(f"s{sample_id + 1}")
            sample_id += 1
    r = 0.6
    case = {"y": np.asarray(y, float), "v": np.asarray(v, float), "cluster": cl, "sample": sa}
    case["S"] = sampling_cov(case["v"], sa, r)
    index = [int(c[1:]) - 1 for c in cl]

    def statistic(values):
        case["X"] = np.column_stack([np.ones(len(y)), [values[i] for i in index]])
        theta, _ = maximize(case, True, (None, None))
        b, _, rob, _ = cr2(case, theta)
        return abs(float(b[1])) / math.sqrt(float(rob[1, 1]))

    observed = statistic(xs)
    every = [statistic([xs[i] for i in order]) for order in itertools.permutations(range(5))]
    at_least = sum(1 for t in every if t >= observed - 1e-9 * observed)
    return {
        "source": "invented: 5 clusters of 2 samples of 1-2 rows, a moderator by cluster",
        "y": [float(t) for t in y], "v": v, "cluster": cl, "sample": sa,
        "moderator": [xs[i] for i in index], "sampling_correlation": r,
        "statistic": observed, "orderings": len(every), "p_exact": at_least / len(every),
    }


def multilevel_fixture(stamp):
    rng = np.random.default_rng(20261202)
    cases = []
    y, v, cl, sa, _ = invented_sheet(rng, 12, 3, 3, 0.04, 0.02, 0.6)
    X = np.ones((len(y), 1))
    for r in (0.0, 0.3, 0.6, 0.9):
        cases.append(case_of(f"three_level_r{r}", y, v, X, cl, sa, r, True,
                             "invented: 12 clusters, 1-3 samples of 1-3 rows"))
    cases.append(case_of("three_level_ml", y, v, X, cl, sa, 0.6, False,
                         "invented: the same sheet by ML"))
    y2, v2, cl2, sa2, x2 = invented_sheet(rng, 15, 2, 3, 0.03, 0.03, 0.6, slope=0.1)
    X2 = np.column_stack([np.ones(len(y2)), x2])
    cases.append(case_of("moderator", y2, v2, X2, cl2, sa2, 0.6, True,
                         "invented: 15 clusters, one numeric moderator", loo=True))
    # Two moderators: the second an invented category (0/1) by cluster.
    y6, v6, cl6, sa6, x6 = invented_sheet(rng, 16, 2, 3, 0.03, 0.02, 0.6, slope=0.05)
    grp = [float(int(c[1:]) % 2) for c in cl6]
    X6 = np.column_stack([np.ones(len(y6)), x6, grp])
    cases.append(case_of("two_moderators", y6, v6, X6, cl6, sa6, 0.6, True,
                         "invented: 16 clusters, a numeric and a two-level moderator"))
    y3, v3, cl3, sa3, _ = invented_sheet(rng, 10, 2, 2, 0.0, 0.05, 0.5)
    X3 = np.ones((len(y3), 1))
    cases.append(case_of("no_cluster_variance", y3, v3, X3, cl3, sa3, 0.5, True,
                         "invented: 10 clusters, no variance between clusters drawn"))
    y4, v4, _, _, _ = invented_sheet(rng, 14, 1, 1, 0.05, 0.0, 0.0)
    ids = [f"s{i + 1}" for i in range(len(y4))]
    cases.append(case_of("one_row_per_cluster", y4, v4, np.ones((len(y4), 1)), ids, ids, 0.6,
                         True, "invented: 14 clusters of one row (the two-level model)"))
    # Each cluster's two rows lie symmetrically about one mean: the clusters' means agree
    # exactly, so tau2_cluster sits on its boundary 0.
    y5, v5, cl5, sa5 = [], [], [], []
    for c in range(9):
        d = float(rng.uniform(0.05, 0.4))
        for sign in (-1, 1):
            y5.append(-1.5 + sign * d)
            v5.append(0.02)
            cl5.append(f"c{c + 1}")
            sa5.append(f"s{2 * c + (sign + 1) // 2 + 1}")
    cases.append(case_of("cluster_variance_at_zero", y5, v5, np.ones((len(y5), 1)), cl5, sa5,
                         0.6, True, "invented: 9 clusters whose two rows share one mean"))
    return {"made_by": stamp(), "level": 0.95, "cases": cases,
            "cluster_permutation": exact_cluster_permutation(rng)}
