#!/usr/bin/env python3
"""Side-by-side timings: the relyard CLI against baselines written with general-purpose
Python libraries (numpy, scipy, pandas) on the same generated inputs.

    python3 benches/side_by_side.py make-inputs DIR     # generate the four inputs (seeded)
    python3 benches/side_by_side.py run DIR [--repeat N] [--only a,e]
                                                         # time relyard and the baselines

Both sides are timed as whole processes (interpreter start and imports included for
Python, process start for relyard), best of N runs, with peak resident memory from
/usr/bin/time. The inputs are invented, made by a fixed-seed generator below.

Workloads (issue 7):
  a. pool: k = 100,000 coefficients; REML, Knapp-Hartung, Q-profile CI, prediction interval
  b. explain: k = 300, 5 moderators, 10,000 permutations
  c. items: 1,000,000 respondents x 40 five-point items (CSV, about 80 MB)
  d. correct: one correlation, 1,000,000 Monte Carlo draws
  e. pool of dependent rows: 100,000 rows in 10,000 clusters of 10 (1 to 3 samples each);
     relyard's whole `pool` (REML fit, CR2, profile intervals, likelihood-ratio test,
     sensitivity refits) against a numpy baseline of the REML fit and CR2 alone, batched
     over the clusters (so the baseline does less of the work)

The baselines use the same algorithms as relyard (Fisher scoring for REML, a root finder
for the Q-profile limits, REML refits per permutation, one pass over the data for the
item moments), vectorised with numpy where the algorithm allows.
"""

import json
import os
import subprocess
import sys
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
SEED = 20261201


# ------------------------------------------------------------------ inputs
def make_pool_sheet(path, k, rng, moderators=0):
    n = rng.integers(80, 1500, size=k)
    items = rng.integers(4, 25, size=k)
    mods = rng.normal(size=(k, moderators))
    beta = np.array([0.15, -0.1, 0.05, 0.0, 0.08][:moderators])
    mu = np.log(1 - 0.82) + (mods @ beta if moderators else 0.0)
    v = 2 * items / ((items - 1) * (n - 2))
    t = mu + rng.normal(scale=0.25, size=k) + rng.normal(size=k) * np.sqrt(v)
    coef = 1 - np.exp(t)
    with open(path, "w") as f:
        head = ["study", "coef", "n", "items"] + [f"m{j + 1}" for j in range(moderators)]
        f.write(",".join(head) + "\n")
        for i in range(k):
            row = [f"s{i + 1}", f"{coef[i]:.4f}", str(n[i]), str(items[i])]
            row += [f"{x:.4f}" for x in mods[i]]
            f.write(",".join(row) + "\n")


def make_items(path, rows, k, rng, chunk=100_000):
    load = np.linspace(0.4, 0.8, k)
    cut = np.array([-1.5, -0.5, 0.5, 1.5])
    with open(path, "wb") as f:
        f.write((",".join(f"q{j + 1}" for j in range(k)) + "\n").encode())
        done = 0
        while done < rows:
            m = min(chunk, rows - done)
            eta = rng.normal(size=(m, 1))
            x = eta * load + rng.normal(size=(m, k)) * np.sqrt(1 - load**2)
            cat = (x[:, :, None] > cut).sum(axis=2) + 1  # 1..5
            buf = np.empty((m, 2 * k), dtype=np.uint8)
            buf[:, 0::2] = (cat + ord("0")).astype(np.uint8)
            buf[:, 1::2] = ord(",")
            buf[:, -1] = ord("\n")
            f.write(buf.tobytes())
            done += m


def make_nested_sheet(path, clusters, rng, rows=10):
    """Rows of invented samples nested in invented clusters, from the multilevel model."""
    with open(path, "w") as f:
        f.write("study,sample,cluster,coef,n,items\n")
        for c in range(clusters):
            u = rng.normal(scale=0.2)
            samples = int(rng.integers(1, 4))
            for i in range(rows):
                n = int(rng.integers(80, 600))
                v = 2 * 8 / (7 * (n - 2))
                t = np.log(1 - 0.8) + u + rng.normal(scale=0.1) + rng.normal() * np.sqrt(v)
                f.write(f"r{c * rows + i},s{c}_{i % samples},c{c},{1 - np.exp(t):.4f},{n},8\n")


def make_inputs(d):
    os.makedirs(d, exist_ok=True)
    rng = np.random.default_rng(SEED)
    make_pool_sheet(os.path.join(d, "pool-100k.csv"), 100_000, rng)
    make_pool_sheet(os.path.join(d, "explain-300.csv"), 300, rng, moderators=5)
    make_items(os.path.join(d, "items-1m-40.csv"), 1_000_000, 40, rng)
    make_nested_sheet(os.path.join(d, "nested-100k.csv"), 10_000, rng)
    print(f"inputs written to {d}")


# ------------------------------------------------------------------ baselines
BASELINE_POOL = r'''
import sys, numpy as np, pandas as pd
from scipy import optimize, stats
df = pd.read_csv(sys.argv[1])
a, n, k = df["coef"].to_numpy(), df["n"].to_numpy(float), df["items"].to_numpy(float)
y = np.log(1 - a); v = 2 * k / ((k - 1) * (n - 2))
K = len(y)
def fit(t):
    w = 1 / (v + t); mu = (w * y).sum() / w.sum(); return w, mu
# DerSimonian-Laird start, then REML Fisher scoring
w = 1 / v; mu = (w * y).sum() / w.sum(); Q = (w * (y - mu) ** 2).sum()
t = max(0.0, (Q - (K - 1)) / (w.sum() - (w ** 2).sum() / w.sum()))
for _ in range(100):
    w, mu = fit(t)
    r = y - mu
    p_diag = w - w ** 2 / w.sum()
    tr_p = p_diag.sum()
    trpp = (w ** 2).sum() - 2 * (w ** 3).sum() / w.sum() + ((w ** 2).sum() / w.sum()) ** 2
    score = 0.5 * ((w * r) ** 2).sum() - 0.5 * tr_p
    info = 0.5 * trpp
    new = max(0.0, t + score / info)
    if abs(new - t) < 1e-10 * max(t, 1e-4):
        t = new; break
    t = new
w, mu = fit(t)
qe = (w * (y - mu) ** 2).sum()
se_kh = np.sqrt(qe / (K - 1) / w.sum())
tq = stats.t.ppf(0.975, K - 1)
ci = (mu - tq * se_kh, mu + tq * se_kh)
def gq(t):
    w, mu = fit(t); return (w * (y - mu) ** 2).sum()
lo_t, hi_t = stats.chi2.ppf([0.975, 0.025], K - 1)
def root(target):
    f = lambda t: gq(t) - target
    if f(0) < 0: return 0.0
    hi = max(t, 1e-3) * 2
    while f(hi) > 0: hi *= 2
    return optimize.brentq(f, 0, hi, xtol=1e-12)
tau_ci = (root(lo_t), root(hi_t))
pi_half = stats.t.ppf(0.975, K - 2) * np.sqrt(t + se_kh ** 2)
pi = (mu - pi_half, mu + pi_half)
print(1 - np.exp(mu), t, tau_ci, 1 - np.exp(pi[1]), 1 - np.exp(pi[0]))
'''

BASELINE_NESTED = r'''
import sys, numpy as np, pandas as pd
df = pd.read_csv(sys.argv[1])
a, n = df["coef"].to_numpy(), df["n"].to_numpy(float)
y = np.log(1 - a); v = 2 * 8 / (7 * (n - 2))
cl = pd.factorize(df["cluster"])[0]; sa = pd.factorize(df["sample"])[0]
order = np.argsort(cl, kind="stable")
m = cl.max() + 1; size = 10  # every cluster of the input holds 10 rows
Y = y[order].reshape(m, size); Vs = v[order].reshape(m, size); S_ = sa[order].reshape(m, size)
r = 0.6
same = S_[:, :, None] == S_[:, None, :]
S = np.where(same, r * np.sqrt(Vs[:, :, None] * Vs[:, None, :]), 0.0)
S[:, np.arange(size), np.arange(size)] = Vs
ones = np.ones(size)
def parts(c, w):
    V = S + c + w * np.eye(size)
    W = np.linalg.inv(V)
    u = W.sum(axis=2)
    A = u.sum(); b = (u * Y).sum(); beta = b / A
    q = np.einsum("mij,mj->mi", W, Y - beta)
    return W, u, A, beta, q
th = np.array([0.02, 0.02])
for it in range(200):
    W, u, A, beta, q = parts(*th)
    s1 = u.sum(axis=1)
    # REML score and expected information in (c, w), intercept only.
    trWJ = s1.sum(); trW = np.trace(W, axis1=1, axis2=2).sum()
    Bc = (s1 ** 2).sum(); Bw = (u ** 2).sum()
    tr_pc = trWJ - Bc / A; tr_pw = trW - Bw / A
    score = 0.5 * np.array([(q.sum(axis=1) ** 2).sum() - tr_pc, (q ** 2).sum() - tr_pw])
    WW = np.einsum("mij,mjk->mik", W, W)
    t_cc = (s1 ** 2).sum(); t_cw = Bw; t_ww = (W ** 2).sum()
    Wu = np.einsum("mij,mj->mi", W, u)
    k_cc = (s1 ** 3).sum(); k_ww = np.einsum("mi,mi->", u, Wu); k_cw = (s1 * (u ** 2).sum(axis=1)).sum()
    I = 0.5 * np.array([[t_cc - 2 * k_cc / A + (Bc / A) ** 2, t_cw - 2 * k_cw / A + Bc * Bw / A ** 2],
                        [t_cw - 2 * k_cw / A + Bc * Bw / A ** 2, t_ww - 2 * k_ww / A + (Bw / A) ** 2]])
    step = np.linalg.solve(I, score)
    new = np.maximum(th + step, 0.0)
    if np.all(np.abs(new - th) <= 1e-10 * np.maximum(new, 1e-4)):
        th = new; break
    th = new
W, u, A, beta, q = parts(*th)
# CR2 for the intercept: A_j = D'(D(V - 1M1')D')^(-1/2)D with D' D = V (Cholesky).
V = S + th[0] + th[1] * np.eye(size)
L = np.linalg.cholesky(V)
M = 1 / A
B = np.einsum("mji,mjk,mkl->mil", L, V - M, L)
ev, evec = np.linalg.eigh(B)
Bih = np.einsum("mij,mj,mkj->mik", evec, ev ** -0.5, evec)
Aj = np.einsum("mij,mjk,mlk->mil", L, Bih, L)
g = np.einsum("mij,mjk,k->mi", Aj, W, ones) * M
e = Y - beta
cr2 = (np.einsum("mi,mi->m", g, e) ** 2).sum()
dj = np.einsum("mi,mij,mj->m", g, V, g); aj = g.sum(axis=1)
num = (dj - M * aj ** 2).sum(); den = (dj ** 2).sum() - 2 * (dj * M * aj ** 2).sum() + (M * (aj ** 2).sum()) ** 2
print(beta, th, np.sqrt(cr2), num ** 2 / den)
'''

BASELINE_EXPLAIN = r'''
import sys, numpy as np, pandas as pd
from scipy import stats
df = pd.read_csv(sys.argv[1])
a, n, k = df["coef"].to_numpy(), df["n"].to_numpy(float), df["items"].to_numpy(float)
y = np.log(1 - a); v = 2 * k / ((k - 1) * (n - 2))
X = np.column_stack([np.ones(len(y))] + [df[f"m{j}"].to_numpy() for j in range(1, 6)])
K, P = X.shape
def fit(X, t):
    w = 1 / (v + t)
    XtW = X.T * w
    A = XtW @ X
    b = np.linalg.solve(A, XtW @ y)
    return w, A, b
def reml(X):
    t = 0.05
    for _ in range(100):
        w, A, b = fit(X, t)
        r = y - X @ b
        Ainv = np.linalg.inv(A)
        H = (X * w[:, None]) @ Ainv @ (X.T * w)
        Pd = np.diag(w) - H
        tr_p = np.trace(Pd); tr_pp = np.sum(Pd * Pd)
        Pr = w * r
        score = 0.5 * Pr @ Pr - 0.5 * tr_p
        new = max(0.0, t + score / (0.5 * tr_pp))
        if abs(new - t) < 1e-10 * max(t, 1e-4):
            t = new; break
        t = new
    w, A, b = fit(X, t)
    r = y - X @ b
    s2 = (w * r * r).sum() / (K - P)
    cov = np.linalg.inv(A) * s2
    z = b[1:] / np.sqrt(np.diag(cov)[1:])
    F = b[1:] @ np.linalg.solve(cov[1:, 1:], b[1:]) / (P - 1)
    return t, b, z, F
t0, b0, z0, F0 = reml(X)
rng = np.random.default_rng(1)
count_F = 1; count_z = np.ones(P - 1)
N = int(sys.argv[2])
for _ in range(N):
    idx = rng.permutation(K)
    Xp = X.copy(); Xp[:, 1:] = X[idx, 1:]
    t, b, z, F = reml(Xp)
    count_F += F >= F0 - 1e-12
    count_z += np.abs(z) >= np.abs(z0) - 1e-12
print(t0, b0, count_F / (N + 1), count_z / (N + 1))
'''

BASELINE_ITEMS = r'''
import sys, numpy as np, pandas as pd
from scipy import optimize
X = pd.read_csv(sys.argv[1], dtype=np.float64, engine="c").to_numpy()
n, k = X.shape
S = np.cov(X, rowvar=False)
alpha = k / (k - 1) * (1 - np.trace(S) / S.sum())
sd = np.sqrt(np.diag(S)); R = S / np.outer(sd, sd)
def F(theta):
    lam = theta[:k]; psi = np.exp(theta[k:])
    Sig = np.outer(lam, lam) + np.diag(psi)
    sign, logdet = np.linalg.slogdet(Sig)
    return logdet + np.trace(np.linalg.solve(Sig, S)) - np.linalg.slogdet(S)[1] - k
theta0 = np.concatenate([np.sqrt(np.diag(S)) * 0.7, np.log(np.diag(S) * 0.5)])
res = optimize.minimize(F, theta0, method="L-BFGS-B")
lam = res.x[:k]; psi = np.exp(res.x[k:])
omega = lam.sum() ** 2 / (lam.sum() ** 2 + psi.sum())
print(n, alpha, omega)
'''

BASELINE_CORRECT = r'''
import sys, numpy as np
N = int(sys.argv[1])
rng = np.random.default_rng(1)
r, n = 0.3, 200
z = rng.normal(np.arctanh(r), 1 / np.sqrt(n - 3), N)
def rel(value, n, k):
    s = np.sqrt(2 * k / ((k - 1) * (n - 2)))
    return 1 - np.exp(rng.normal(np.log(1 - value) - np.log(n / (n - 1)), s, N))
rx, ry = rel(0.8, 200, 10), rel(0.7, 200, 8)
ok = (rx > 0) & (ry > 0)
c = np.where(ok, np.tanh(z) / np.sqrt(np.abs(rx * ry)), np.sign(z))
c = np.clip(c, -1, 1)
print(np.percentile(c, [2.5, 97.5]), (~ok).mean() + (np.abs(np.tanh(z) / np.sqrt(np.abs(rx * ry))) > 1).mean())
'''


def timed(cmd, repeat):
    """Best wall time and peak RSS (MB) over `repeat` runs of a whole process."""
    best, peak = float("inf"), 0.0
    for _ in range(repeat):
        t0 = time.perf_counter()
        p = subprocess.run(["/usr/bin/time", "-f", "%M"] + cmd, capture_output=True, text=True)
        dt = time.perf_counter() - t0
        if p.returncode != 0:
            raise SystemExit(f"failed: {' '.join(cmd)}\n{p.stderr}")
        peak = max(peak, int(p.stderr.strip().splitlines()[-1]) / 1024)
        best = min(best, dt)
    return best, peak


def run(d, repeat, only=None):
    exe = os.path.join(ROOT, "target", "release", "relyard")
    if not os.path.exists(exe):
        subprocess.run(["cargo", "build", "--release"], cwd=ROOT, check=True)
    py = sys.executable
    cases = [
        ("a. pool, k = 100,000",
         [exe, "pool", f"{d}/pool-100k.csv"],
         [py, "-c", BASELINE_POOL, f"{d}/pool-100k.csv"], 0.15, 5),
        ("b. explain, 5 moderators, 10,000 permutations",
         [exe, "explain", f"{d}/explain-300.csv"] + sum([["--moderator", f"m{j}"] for j in range(1, 6)], [])
         + ["--permutations", "10000"],
         [py, "-c", BASELINE_EXPLAIN, f"{d}/explain-300.csv", "10000"], 1.0, 5),
        ("c. items, 1,000,000 x 40",
         [exe, "items", f"{d}/items-1m-40.csv"],
         [py, "-c", BASELINE_ITEMS, f"{d}/items-1m-40.csv"], 1.0, 3),
        ("d. correct, 1,000,000 draws",
         [exe, "correct", "--r", "0.3", "--n", "200", "--rel-x", "0.8,n=200,items=10",
          "--rel-y", "0.7,n=200,items=8", "--draws", "1000000"],
         [py, "-c", BASELINE_CORRECT, "1000000"], 0.1, 5),
        ("e. pool, 100,000 rows in 10,000 clusters",
         [exe, "pool", f"{d}/nested-100k.csv", "--json"],
         [py, "-c", BASELINE_NESTED, f"{d}/nested-100k.csv"], 0.5, 1),
    ]
    rows = []
    for name, ours, theirs, target, factor in cases:
        if only and name[0] not in only:
            continue
        t_ours, m_ours = timed(ours, repeat)
        t_py, m_py = timed(theirs, max(1, repeat if "explain" not in name else 1))
        rows.append({"workload": name, "relyard_s": t_ours, "relyard_mb": m_ours,
                     "python_s": t_py, "python_mb": m_py, "speedup": t_py / t_ours,
                     "target_s": target, "target_speedup": factor})
        print(f"{name:48s} relyard {t_ours:7.3f} s {m_ours:7.1f} MB | python {t_py:7.3f} s "
              f"{m_py:7.1f} MB | {t_py / t_ours:6.1f}x (target <= {target} s, >= {factor}x)",
              flush=True)
    print(json.dumps(rows, indent=1))


if __name__ == "__main__":
    if len(sys.argv) >= 3 and sys.argv[1] == "make-inputs":
        make_inputs(sys.argv[2])
    elif len(sys.argv) >= 3 and sys.argv[1] == "run":
        rep = int(sys.argv[sys.argv.index("--repeat") + 1]) if "--repeat" in sys.argv else 3
        only = sys.argv[sys.argv.index("--only") + 1].split(",") if "--only" in sys.argv else None
        run(sys.argv[2], rep, only)
    else:
        print(__doc__)
        sys.exit(2)
