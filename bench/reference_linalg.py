#!/usr/bin/python3
"""Outside reference timing for bench/linalg.ts: numpy / scipy on the machine's BLAS (Debian's OpenBLAS).

Usage: /usr/bin/python3 bench/reference_linalg.py IN.json OUT.json
IN.json: {"cholesky": [n, ...], "solve": [n, m], "fill": [n, m], "repeats": r}
For each Cholesky size: numpy.linalg.cholesky of the same kind of matrix bench/linalg.ts factorises
(exponential covariance, scale 200 m, of n random points on a 1 km square, 1.1 on the diagonal);
scipy.linalg.solve_triangular(L, B, lower=True) with m right-hand sides; and a Matérn 3/2 covariance
fill of an n×m cross-covariance (scipy.spatial.distance.cdist, then s·(1 + a)·exp(−a), a = √3·d/ℓ).
Wall seconds of the median run (of `repeats`) and its process CPU seconds (all threads). The number of BLAS threads is whatever OPENBLAS_NUM_THREADS
says (the caller runs this once with 1 and once with the default).
"""
import json
import os
import sys
import time

import numpy as np
import scipy
import scipy.linalg
from scipy.spatial.distance import cdist


def covariance(n: int, rng: np.random.Generator) -> np.ndarray:
    p = rng.uniform(0, 1000, size=(n, 2))
    a = np.exp(-cdist(p, p) / 200)
    np.fill_diagonal(a, 1.1)
    return a


def timed(repeats: int, prepare, work) -> dict:
    runs = []
    for _ in range(repeats):
        x = prepare()
        c0 = time.process_time()
        t0 = time.perf_counter()
        work(x)
        runs.append((time.perf_counter() - t0, time.process_time() - c0))
    runs.sort()
    wall, cpu = runs[len(runs) // 2]
    return {"seconds": wall, "cpuSeconds": cpu}


def main() -> None:
    src, dst = sys.argv[1], sys.argv[2]
    with open(src) as f:
        d = json.load(f)
    reps = int(d.get("repeats", 3))
    rng = np.random.default_rng(1)
    out = {"numpy": np.__version__, "scipy": scipy.__version__,
           "threads": os.environ.get("OPENBLAS_NUM_THREADS", "default"), "cholesky": [], "solve": None, "fill": None}
    for n in d["cholesky"]:
        a = covariance(n, rng)
        out["cholesky"].append({"n": n, **timed(reps, lambda: a.copy(), np.linalg.cholesky)})
    n, m = d["solve"]
    L = np.linalg.cholesky(covariance(n, rng))
    B = rng.standard_normal((n, m))
    out["solve"] = {"n": n, "m": m, **timed(reps, lambda: B.copy(),
                    lambda b: scipy.linalg.solve_triangular(L, b, lower=True, overwrite_b=True, check_finite=False))}
    n, m = d["fill"]
    P = rng.uniform(0, 1000, size=(n, 2))
    T = rng.uniform(0, 1000, size=(m, 2))

    def fill(_):
        r = cdist(P, T) * (np.sqrt(3) / 100)
        return (1 + r) * np.exp(-r)

    out["fill"] = {"n": n, "m": m, **timed(reps, lambda: None, fill)}
    with open(dst, "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
