"""Writes variogram.json: empirical variograms computed directly with numpy/scipy.

Matheron: gamma(h) = sum (z_i - z_j)^2 / (2 N(h)).  Cressie & Hawkins (1980, Math. Geol. 12:115):
2 gamma(h) = [N^-1 sum |z_i - z_j|^(1/2)]^4 / (0.457 + 0.494/N).
Lag class k: k*w <= h < (k+1)*w and h <= maxLag (the last class closed at maxLag); the reported
distance is the mean pair distance. Directional: pair azimuth clockwise from north, modulo 180,
within +-tolerance of the direction, offset across the direction h*sin(diff) <= bandwidth, zero-distance
pairs excluded. Defaults: maxLag = half the largest pair distance (scipy.spatial.distance.pdist), 15
classes. Run with Debian's /usr/bin/python3 (python3-scipy).
"""
import json
import math
import os

import numpy as np
from scipy.spatial.distance import pdist

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(7301)

# Invented data: 150 points in a 1000 m x 600 m rectangle, two repeated locations, a smooth field with
# an east-west elongation plus noise and a few outliers (to tell the estimators apart).
n = 150
x = 300000.0 + rng.uniform(0, 1000, n)
y = 5000000.0 + rng.uniform(0, 600, n)
x[10], y[10] = x[3], y[3]
x[20], y[20] = x[4], y[4]
value = np.sin((x - x.min()) / 250.0) + 0.4 * np.cos((y - y.min()) / 90.0) + 0.3 * rng.standard_normal(n)
value[[5, 50, 100]] += 4.0

ii, jj = np.tril_indices(n, -1)
dx = x[ii] - x[jj]
dy = y[ii] - y[jj]
h = np.sqrt(dx * dx + dy * dy)
dz = value[ii] - value[jj]
assert np.allclose(np.sort(h), np.sort(pdist(np.column_stack([x, y]))), rtol=1e-15, atol=0)
max_distance = float(pdist(np.column_stack([x, y])).max())


def variogram(opts):
    max_lag = opts.get("maxLag", max_distance / 2)
    if "lagWidth" in opts:
        w = opts["lagWidth"]
        count = max(1, math.ceil(max_lag / w - 1e-9))
    else:
        count = 15
        w = max_lag / count
    keep = h <= max_lag
    if "direction" in opts:
        az = np.degrees(np.arctan2(dx, dy)) % 180.0
        diff = np.abs(az - opts["direction"] % 180.0)
        diff = np.where(diff > 90, 180 - diff, diff)
        keep &= h > 0
        keep &= diff <= opts.get("tolerance", 22.5) + 1e-12
        if "bandwidth" in opts:
            keep &= h * np.sin(np.radians(diff)) <= opts["bandwidth"]
    k = np.minimum(count - 1, np.floor(h[keep] / w).astype(int))
    hh = h[keep]
    d = dz[keep]
    lags = []
    for c in range(count):
        sel = k == c
        N = int(sel.sum())
        if N == 0:
            continue
        if opts.get("estimator", "matheron") == "matheron":
            g = float(np.sum(d[sel] ** 2) / (2 * N))
        else:
            g = float(0.5 * np.mean(np.sqrt(np.abs(d[sel]))) ** 4 / (0.457 + 0.494 / N))
        lags.append({"distance": float(hh[sel].mean()), "semivariance": g, "pairs": N})
    return {"lagWidth": w, "maxLag": max_lag, "lagCount": count, "lags": lags}


cases = []
for opts in (
    {},
    {"estimator": "cressie-hawkins"},
    {"estimator": "matheron", "lagWidth": 40.0, "maxLag": 300.0},
    {"estimator": "cressie-hawkins", "lagWidth": 40.0, "maxLag": 300.0},
    {"estimator": "matheron", "direction": 45.0, "tolerance": 22.5, "bandwidth": 100.0, "lagWidth": 50.0, "maxLag": 400.0},
    {"estimator": "cressie-hawkins", "direction": 45.0, "tolerance": 22.5, "bandwidth": 100.0, "lagWidth": 50.0, "maxLag": 400.0},
    {"direction": 120.0, "tolerance": 30.0},
    {"direction": 90.0},
):
    cases.append({"options": opts, "expected": variogram(opts)})

out = {
    "source": f"numpy {np.__version__} direct computation over all pairs (scipy.spatial.distance.pdist for distances)",
    "script": "tests/reference/make_variogram.py",
    "tolerance": {"rel": 1e-12},
    "data": {"x": x.tolist(), "y": y.tolist(), "value": value.tolist()},
    "maxDistance": max_distance,
    "cases": cases,
}
with open(os.path.join(HERE, "variogram.json"), "w") as f:
    json.dump(out, f, indent=1)
print(f"wrote {len(cases)} cases; max distance {max_distance:.3f}")
