"""Reference values for the intraclass correlations, in numpy and scipy.

The two-way analysis of variance of a persons x occasions table is taken from
statsmodels' OLS fit of the score on row and column indicators (anova_lm, type 1 sums of
squares: rows, columns, residual), the one-way one from its fit on row indicators alone;
the forms and their intervals are written out from McGraw & Wong (1996, Psychological
Methods 1, 30-46, Tables 4, 6 and 7) with scipy.stats.f quantiles, and the average-measure
forms from the single-measure ones by the Spearman-Brown step (their Table 4 forms are
that step). The tables are the Shrout & Fleiss (1979, Psychological Bulletin 86, 420-428)
example as recalled (6 targets, 4 judges) and invented ones (seeded draws).
"""

import numpy as np
import pandas as pd
from scipy import stats
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

SHROUT_FLEISS = [[9, 2, 5, 8], [6, 1, 3, 2], [8, 4, 6, 8], [7, 1, 2, 6], [10, 5, 6, 9],
                 [6, 2, 4, 7]]


def mean_squares(table):
    t = np.asarray(table, float)
    n, k = t.shape
    long = pd.DataFrame({"y": t.ravel(), "row": np.repeat(np.arange(n), k).astype(str),
                         "col": np.tile(np.arange(k), n).astype(str)})
    two = anova_lm(smf.ols("y ~ C(row) + C(col)", long).fit(), typ=1)
    one = anova_lm(smf.ols("y ~ C(row)", long).fit(), typ=1)
    return {"rows": float(two.loc["C(row)", "mean_sq"]),
            "columns": float(two.loc["C(col)", "mean_sq"]),
            "error": float(two.loc["Residual", "mean_sq"]),
            "within": float(one.loc["Residual", "mean_sq"])}, n, k


def step(r, k):
    return k * r / (1 + (k - 1) * r)


def forms(table, level):
    ms, n, k = mean_squares(table)
    a = 1 - level
    q = lambda d1, d2: stats.f.ppf(1 - a / 2, d1, d2)  # noqa: E731
    out = []
    single = lambda f: (f - 1) / (f + k - 1)  # noqa: E731
    # One-way.
    d1, d2 = n - 1, n * (k - 1)
    f1 = ms["rows"] / ms["within"]
    r1 = (ms["rows"] - ms["within"]) / (ms["rows"] + (k - 1) * ms["within"])
    lo, hi = single(f1 / q(d1, d2)), single(f1 * q(d2, d1))
    for unit, g in (("single", lambda r: r), ("average", lambda r: step(r, k))):
        out.append({"model": "one-way", "type": "agreement", "unit": unit, "value": g(r1),
                    "ci": [g(lo), g(hi)], "f": f1, "df1": d1, "df2": d2,
                    "p": float(stats.f.sf(f1, d1, d2))})
    # Two-way.
    d1, d2 = n - 1, (n - 1) * (k - 1)
    f2 = ms["rows"] / ms["error"]
    rc = (ms["rows"] - ms["error"]) / (ms["rows"] + (k - 1) * ms["error"])
    c_ci = (single(f2 / q(d1, d2)), single(f2 * q(d2, d1)))
    ra = (ms["rows"] - ms["error"]) / (ms["rows"] + (k - 1) * ms["error"]
                                      + k * (ms["columns"] - ms["error"]) / n)
    aa = k * ra / (n * (1 - ra))
    bb = 1 + k * ra * (n - 1) / (n * (1 - ra))
    v = (aa * ms["columns"] + bb * ms["error"]) ** 2 / (
        (aa * ms["columns"]) ** 2 / (k - 1) + (bb * ms["error"]) ** 2 / ((n - 1) * (k - 1)))
    fs, fss = stats.f.ppf(1 - a / 2, n - 1, v), stats.f.ppf(1 - a / 2, v, n - 1)
    mix = k * ms["columns"] + (k * n - k - n) * ms["error"]
    a_ci = (n * (ms["rows"] - fs * ms["error"]) / (fs * mix + n * ms["rows"]),
            n * (fss * ms["rows"] - ms["error"]) / (mix + n * fss * ms["rows"]))
    for model in ("two-way-random", "two-way-mixed"):
        for typ, r, ci in (("consistency", rc, c_ci), ("agreement", ra, a_ci)):
            for unit, g in (("single", lambda x: x), ("average", lambda x: step(x, k))):
                out.append({"model": model, "type": typ, "unit": unit, "value": g(r),
                            "ci": [g(ci[0]), g(ci[1])], "f": f2, "df1": d1, "df2": d2,
                            "p": float(stats.f.sf(f2, d1, d2))})
    t = np.asarray(table, float)
    sd = float(t.ravel().std(ddof=1))
    sem = sd * np.sqrt(1 - ra)
    return {"table": t.tolist(), "level": level, "n": n, "k": k, "mean_squares": ms,
            "forms": out, "sd": sd, "sem": float(sem), "sdc": float(1.96 * np.sqrt(2) * sem)}


def icc_fixture(stamp):
    rng = np.random.default_rng(20261203)
    cases = [dict(forms(SHROUT_FLEISS, 0.95),
                  name="shrout_fleiss", source="Shrout & Fleiss (1979), as recalled")]
    # Invented: 30 persons, 3 raters with different leniency.
    true = rng.normal(50, 10, 30)
    raters = np.array([0.0, 3.0, -2.0])
    t = true[:, None] + raters[None, :] + rng.normal(0, 5, (30, 3))
    cases.append(dict(forms(np.round(t, 1), 0.90), name="raters",
                      source="invented: 30 persons, 3 raters of different leniency"))
    # Invented: a test-retest table of 12 persons on 2 occasions.
    true = rng.normal(20, 4, 12)
    t = np.column_stack([true + rng.normal(0, 1.5, 12), true + 0.8 + rng.normal(0, 1.5, 12)])
    cases.append(dict(forms(np.round(t, 2), 0.95), name="retest",
                      source="invented: 12 persons on 2 occasions"))
    return {"made_by": stamp(), "cases": cases}
