#!/usr/bin/env python3
"""Timings of `relyard serve` from outside, as a browser sees them (not a timed test).

    python3 benches/serve_speed.py [PATH_TO_RELYARD] [--repeat N]

Starts the server on the demo, then measures (median of N, wall clock, on this machine):
  - the first page load: the page, its script and its style, each on a fresh connection;
  - an analysis round trip: uploading an invented 1,000-study coding sheet (made here with
    a fixed seed) and receiving the benchmark document with both figures.
Targets (issue 13): first load <= 100 ms, round trip <= 200 ms.
"""

import http.client
import os
import statistics
import subprocess
import sys
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
from side_by_side import make_pool_sheet  # noqa: E402


def request(port, method, path, cookie, body=None):
    c = http.client.HTTPConnection("127.0.0.1", port, timeout=60)
    headers = {"Cookie": cookie, "Origin": f"http://127.0.0.1:{port}"}
    c.request(method, path, body=body, headers=headers)
    r = c.getresponse()
    data = r.read()
    c.close()
    if r.status != 200:
        raise SystemExit(f"{method} {path}: {r.status} {data[:200]!r}")
    return data


def main():
    args = sys.argv[1:]
    repeat = 15
    if "--repeat" in args:
        i = args.index("--repeat")
        repeat = int(args[i + 1])
        del args[i : i + 2]
    exe = args[0] if args else os.path.join(os.path.dirname(HERE), "target/release/relyard")
    sheet_path = "/tmp/relyard-serve-speed-1000.csv"
    make_pool_sheet(sheet_path, 1000, np.random.default_rng(20261202))
    sheet = open(sheet_path, "rb").read()
    server = subprocess.Popen([exe, "serve", "--demo"], stdout=subprocess.PIPE, text=True)
    try:
        line = server.stdout.readline()
        url = next(w for w in line.split() if w.startswith("http://"))
        port = int(url.split(":")[2].split("/")[0])
        token = url.split("token=")[1]
        cookie = f"relyard_session={token}"
        loads, trips = [], []
        for _ in range(repeat):
            t = time.perf_counter()
            for path in ["/", "/app.js", "/app.css"]:
                request(port, "GET", path, cookie)
            loads.append(time.perf_counter() - t)
            t = time.perf_counter()
            doc = request(port, "POST", "/api/pool?name=studies.csv", cookie, sheet)
            trips.append(time.perf_counter() - t)
        assert b'"forest"' in doc and b'"k":1000' in doc.replace(b" ", b"")
        print(f"first page load (page, script, style): median {1000 * statistics.median(loads):.1f} ms "
              f"(min {1000 * min(loads):.1f}, max {1000 * max(loads):.1f}; target <= 100 ms)")
        print(f"round trip, 1,000-study upload -> benchmark and figures: median "
              f"{1000 * statistics.median(trips):.1f} ms (min {1000 * min(trips):.1f}, "
              f"max {1000 * max(trips):.1f}; target <= 200 ms; response {len(doc) / 1e6:.2f} MB)")
    finally:
        server.terminate()
        server.wait()


if __name__ == "__main__":
    main()
