#!/usr/bin/env python3
"""Writes the SPSS test files of relyard's item reader and the values they must give.

Invented responses (seeded): 240 respondents, six five-point items from one factor, a text
respondent code, value labels on every item, user-missing codes 8 and 9 declared on q1-q3
(discrete) and 8-9 on q4-q6 (a range), 99 on q6 too, and some system-missing cells. The
files are written by pyreadstat (a general-purpose library for these files): an
uncompressed .sav and a zlib-compressed .zsav with the same data. The expected values come
from numpy on the same responses with every declared code read as missing: the respondents
who answered every item, coefficient alpha of their covariance matrix (n - 1), and the
counts of user-missing and empty cells.

Run by hand (pyreadstat is not among CI's requirements; the files are committed data):
    python tests/reference/spss_reference.py tests/data/spss
"""

import json
import os
import sys

import numpy as np
import pandas as pd
import pyreadstat


def main():
    out = sys.argv[1]
    os.makedirs(out, exist_ok=True)
    rng = np.random.default_rng(20261203)
    n, k = 240, 6
    lam = np.array([0.8, 0.7, 0.75, 0.6, 0.65, 0.7])
    z = rng.normal(size=n)[:, None] * lam + rng.normal(size=(n, k)) * np.sqrt(1 - lam ** 2)
    x = np.clip(np.round(z * 1.1 + 3), 1, 5)
    coded = x.copy()
    for j in range(k):
        rows = rng.choice(n, size=6, replace=False)
        coded[rows[:3], j] = 8 if j % 2 == 0 else 9
        coded[rows[3:5], j] = np.nan
        if j == 5:
            coded[rows[5], j] = 99
    df = pd.DataFrame(coded, columns=[f"q{j + 1}" for j in range(k)])
    df.insert(0, "respondent", [f"P{i + 1:03d}" for i in range(n)])
    labels = {1.0: "strongly disagree", 2.0: "disagree", 3.0: "neither", 4.0: "agree",
              5.0: "strongly agree", 8.0: "refused", 9.0: "don't know"}
    value_labels = {f"q{j + 1}": dict(labels) for j in range(k)}
    value_labels["q6"][99.0] = "not asked"
    missing = {f"q{j + 1}": [8, 9] for j in range(3)}
    missing.update({f"q{j + 1}": [{"lo": 8, "hi": 9}] for j in range(3, 5)})
    missing["q6"] = [{"lo": 8, "hi": 9}, 99]
    for name, compress in [("likert.sav", False), ("likert.zsav", True)]:
        pyreadstat.write_sav(df, os.path.join(out, name), variable_value_labels=value_labels,
                             missing_ranges=missing, compress=compress)
    items = coded.copy()
    user_missing = int(np.isin(items, [8, 9, 99]).sum())
    items[np.isin(items, [8, 9, 99])] = np.nan
    complete = items[~np.isnan(items).any(axis=1)]
    S = np.cov(complete, rowvar=False, ddof=1)
    alpha = k / (k - 1) * (1 - np.trace(S) / S.sum())
    expected = {
        "made_by": {"script": "tests/reference/spss_reference.py",
                    "pyreadstat": pyreadstat.__version__, "numpy": np.__version__,
                    "pandas": pd.__version__},
        "rows": n, "n_used": int(complete.shape[0]), "user_missing_cells": user_missing,
        "missing_cells": int(np.isnan(items).sum()), "alpha": float(alpha),
        "means": complete.mean(axis=0).tolist(),
        "labels_q1": {str(int(v)): l for v, l in sorted(labels.items())},
    }
    with open(os.path.join(out, "expected.json"), "w", encoding="utf-8") as fh:
        json.dump(expected, fh, indent=1, sort_keys=True)
        fh.write("\n")


if __name__ == "__main__":
    main()
