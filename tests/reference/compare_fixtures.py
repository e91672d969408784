#!/usr/bin/env python3
"""Compare freshly made fixtures with the committed ones.

usage: compare_fixtures.py COMMITTED_DIR FRESH_DIR

Numbers must agree to a relative tolerance of 1e-9 (absolute 1e-12 near zero); any
other difference (a missing key, a changed string other than the library versions in
`made_by`) fails. Exit status 1 on any difference.

Two allowances, because the pinned libraries' linear algebra picks its kernels by the
processor (results then differ in the last digits between machines):
- values found by a library's iterative optimizer (the factor analyses in items.json,
  the multilevel fits in multilevel.json, the bifactor and correlated fits in
  multidimensional.json, the minimum-trace solutions in glb.json) agree to 1e-6, the precision those optimizers are run to;
- a library's iteration that did not reach its root on one of the machines (a record with
  `reached_root` false on either side) is no reference there and is not compared; each
  such record is named. (The Rust tests use such records only where they converged.)
"""

import json
import math
import os
import sys

REL = 1e-9
ABS = 1e-12
OPTIMIZER_REL = 1e-6
OPTIMIZER_PATHS = ("items.json.scipy.", "items.json.sklearn.", "multilevel.json.",
                   "multidimensional.json.data.", "glb.json.",
                   "polychoric.json.items.categorical.")
SKIPPED = []


def diff(a, b, path, out):
    if path.endswith("made_by"):
        return
    if isinstance(a, dict) and isinstance(b, dict):
        if a.get("reached_root") is False or b.get("reached_root") is False:
            if a.get("reached_root") != b.get("reached_root"):
                SKIPPED.append(path)
            return
        for k in sorted(set(a) | set(b)):
            if k not in a or k not in b:
                out.append(f"{path}.{k}: present in only one version")
            else:
                diff(a[k], b[k], f"{path}.{k}", out)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            out.append(f"{path}: lengths {len(a)} and {len(b)}")
        for i, (x, y) in enumerate(zip(a, b)):
            diff(x, y, f"{path}[{i}]", out)
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)) \
            and not isinstance(a, bool) and not isinstance(b, bool):
        rel = OPTIMIZER_REL if path.startswith(OPTIMIZER_PATHS) else REL
        if not math.isclose(a, b, rel_tol=rel, abs_tol=ABS):
            out.append(f"{path}: committed {a!r}, fresh {b!r}")
    elif a != b:
        out.append(f"{path}: committed {a!r}, fresh {b!r}")


def main():
    committed, fresh = sys.argv[1], sys.argv[2]
    problems = []
    for name in sorted(os.listdir(committed)):
        if name.endswith(".csv"):
            fresh_path = os.path.join(fresh, name)
            with open(os.path.join(committed, name), "rb") as a, open(fresh_path, "rb") as b:
                if a.read() != b.read():
                    problems.append(f"{name}: the fresh data file differs")
            continue
        if not name.endswith(".json"):
            continue
        with open(os.path.join(committed, name), encoding="utf-8") as fh:
            a = json.load(fh)
        fresh_path = os.path.join(fresh, name)
        if not os.path.exists(fresh_path):
            problems.append(f"{name}: not made by the fresh run")
            continue
        with open(fresh_path, encoding="utf-8") as fh:
            b = json.load(fh)
        diff(a, b, name, problems)
    for p in SKIPPED:
        print(f"not compared: {p} (the library's iteration reached its root on one machine only)")
    for p in problems[:50]:
        print(f"fixture difference: {p}")
    if problems:
        print(f"{len(problems)} difference(s) between committed and fresh fixtures")
        sys.exit(1)
    print("fixtures: committed and fresh agree")


if __name__ == "__main__":
    main()
