#!/usr/bin/python3
"""Outside reference timing for bench/large.ts: scikit-learn's GaussianProcessRegressor with a fixed
kernel (no hyper-parameter optimisation) on the same samples and targets.

Usage: /usr/bin/python3 bench/reference_sklearn.py IN.json OUT.json
IN.json: {"x": [...], "y": [...], "value": [...], "tx": [...], "ty": [...],
          "sill": s, "scale": l, "nugget": t, "mean": m, "repeats": r}
The kernel is ConstantKernel(s) * Matern(length_scale=l, nu=1.5) + WhiteKernel(t): the same Matern 3/2
parameterisation as Gapwise (Rasmussen & Williams 2006, eq. 4.17). sklearn assumes a zero prior mean,
so the known mean m is subtracted before fitting and added back (simple kriging with mean m).
predict(return_std=True) includes the WhiteKernel noise in the sd, i.e. it is Gapwise's sdObserved.
Writes timings (fit, predict, total; median of `repeats` runs) and the predictions to OUT.json.
"""
import json
import sys
import time

import numpy as np
import sklearn
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import ConstantKernel, Matern, WhiteKernel


def main() -> None:
    src, dst = sys.argv[1], sys.argv[2]
    with open(src) as f:
        d = json.load(f)
    X = np.column_stack([d["x"], d["y"]])
    T = np.column_stack([d["tx"], d["ty"]])
    m = float(d["mean"])
    z = np.asarray(d["value"]) - m
    repeats = int(d.get("repeats", 1))
    kernel = (ConstantKernel(d["sill"], constant_value_bounds="fixed")
              * Matern(length_scale=d["scale"], length_scale_bounds="fixed", nu=1.5)
              + WhiteKernel(d["nugget"], noise_level_bounds="fixed"))
    fits, preds, totals = [], [], []
    mean = std = None
    for _ in range(repeats):
        t0 = time.perf_counter()
        gp = GaussianProcessRegressor(kernel=kernel, optimizer=None, alpha=1e-10, normalize_y=False)
        gp.fit(X, z)
        t1 = time.perf_counter()
        mean, std = gp.predict(T, return_std=True)
        t2 = time.perf_counter()
        fits.append(t1 - t0)
        preds.append(t2 - t1)
        totals.append(t2 - t0)
    out = {
        "source": f"scikit-learn {sklearn.__version__} GaussianProcessRegressor, numpy {np.__version__}",
        "fitSeconds": float(np.median(fits)),
        "predictSeconds": float(np.median(preds)),
        "seconds": float(np.median(totals)),
        "runs": totals,
        "mean": (mean + m).tolist(),
        "sdObserved": std.tolist(),
    }
    with open(dst, "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
