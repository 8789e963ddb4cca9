#!/usr/bin/python3
"""Writes tests/reference/block_covariates.json: block kriging with covariates in the mean (kriging
with external drift over a block) computed by an independent numpy implementation.

The mean is f(s)^T beta with f = (1, [x, y], c_1 .. c_q): a numeric covariate as given and a
categorical one as indicators of its levels after the first (sorted; the first is the reference),
the coordinates (when asked for) as (x - xmin)/1000, (y - ymin)/1000 (a different basis from the
engine's, same column space). A block of width w and height h is discretised into k x k points at the
centres of its sub-rectangles; the covariates are known at every such point (the fixture lists them).
The rule under test: the block's trend row is the mean of the k x k point rows,
  xbar = mean_p f(p),
so an indicator becomes the share of the block in that level. With the noise-free covariance C
(the nugget on K's diagonal only),
  kbar_i = mean_p C(p, s_i),   Cbar = mean_{p,q} C(p, q),
the bordered system [[K, X], [X^T, 0]] (lambda; mu) = (kbar; xbar) is solved with numpy.linalg.solve
(LAPACK LU); block mean = lambda . z, block variance = Cbar - lambda . kbar - mu . xbar (Journel &
Huijbregts 1978 ch. V; Cressie 1993 sec. 3.4 and 5.x, from memory). A second check: the same blocks
predicted as the plain average of the k x k point predictions of universal kriging (each point with its
own covariates) give the same mean (linearity), written as "pointAverageMean".

Run with Debian's python: /usr/bin/python3 tests/reference/make_block_covariates.py
"""
import json
import math
import os

import numpy as np
import scipy
from scipy.special import kv, gamma

HERE = os.path.dirname(os.path.abspath(__file__))


def correlation(s, h):
    h = np.asarray(h, dtype=float)
    l = s["scale"]
    t = s["type"]
    if t == "exponential":
        return np.exp(-h / l)
    if t == "gaussian":
        return np.exp(-0.5 * (h / l) ** 2)
    if t == "matern":
        nu = s["nu"]
        z = math.sqrt(2 * nu) * h / l
        out = np.ones_like(z)
        pos = z > 0
        out[pos] = 2 ** (1 - nu) / gamma(nu) * z[pos] ** nu * kv(nu, z[pos])
        return out
    raise ValueError(t)


def distance(ax, ay, bx, by):
    dx = np.subtract.outer(np.asarray(ax, float), np.asarray(bx, float))
    dy = np.subtract.outer(np.asarray(ay, float), np.asarray(by, float))
    return np.sqrt(dx * dx + dy * dy)


def surface_cov(model, h):
    c = np.zeros_like(h)
    for s in model["structures"]:
        if s["type"] != "nugget":
            c = c + s["sill"] * correlation(s, h)
    return c


def nugget(model):
    return sum(s["sill"] for s in model["structures"] if s["type"] == "nugget")


# Invented covariates, functions of position: the square root of the distance to an old building at
# (120, 300), and a soil zone by x (text levels "clay" < "loam" < "sand").
def sqrt_dist(x, y):
    return np.sqrt(np.hypot(np.asarray(x) - 120.0, np.asarray(y) - 300.0))


def soil(x, y):
    x = np.asarray(x)
    return np.where(x < 150, "loam", np.where(x < 280, "clay", "sand"))


LEVELS = ["clay", "loam", "sand"]


def trend_cols(trend, x, y, x_ref, y_ref):
    n = len(x)
    cols = [np.ones(n)]
    if trend.get("coordinates"):
        cols += [(np.asarray(x) - x_ref) / 1000.0, (np.asarray(y) - y_ref) / 1000.0]
    for name in trend["covariates"]:
        if name == "sqrt_dist":
            cols.append(sqrt_dist(x, y))
        else:
            s = soil(x, y)
            for level in LEVELS[1:]:
                cols.append((s == level).astype(float))
    return np.column_stack(cols)


def discretise(cx, cy, w, h, k):
    """The k*k points of one block, row by row from the north-west (x east, y north)."""
    off = (np.arange(k) + 0.5) / k - 0.5
    px = np.tile(cx + off * w, k)
    py = np.repeat(cy - off * h, k)
    return px, py


def solve(model, x, y, z, X, kbar, xbar):
    n = len(x)
    K = surface_cov(model, distance(x, y, x, y)) + nugget(model) * np.eye(n)
    p = X.shape[1]
    A = np.zeros((n + p, n + p))
    A[:n, :n] = K
    A[:n, n:] = X
    A[n:, :n] = X.T
    sol = np.linalg.solve(A, np.concatenate([kbar, xbar]))
    return sol[:n], sol[n:]


CASES = [
    ("exponential-sqrtdist", {"covariates": ["sqrt_dist"]}, [{"type": "nugget", "sill": 0.2}, {"type": "exponential", "sill": 1.5, "scale": 120}], 20.0, 20.0, 4),
    ("matern-soil-xy", {"covariates": ["sqrt_dist", "soil"], "coordinates": True}, [{"type": "nugget", "sill": 0.1}, {"type": "matern", "sill": 1.0, "scale": 90, "nu": 1.5}], 40.0, 30.0, 3),
    ("gaussian-soil", {"covariates": ["soil"]}, [{"type": "nugget", "sill": 0.05}, {"type": "gaussian", "sill": 0.8, "scale": 70}], 60.0, 60.0, 5),
]


def main():
    rng = np.random.default_rng(47)
    out = []
    n = 40
    x = rng.uniform(0, 400, n)
    y = rng.uniform(0, 400, n)
    s_soil = soil(x, y)
    z = (5 + 0.4 * sqrt_dist(x, y) + np.where(s_soil == "clay", 1.0, np.where(s_soil == "sand", -0.7, 0.0))
         + np.sin(x / 90) * np.cos(y / 120) + 0.3 * rng.standard_normal(n))
    # Blocks: two straddling a soil boundary (x = 150, x = 280), one inside a zone, one outside the samples.
    blocks = [(150.0, 100.0), (280.0, 250.0), (60.0, 330.0), (450.0, 420.0)]
    for name, trend, structures, w, h, k in CASES:
        model = {"structures": structures, "trend": dict(trend), "transform": "none"}
        x_ref, y_ref = x.min(), y.min()
        X = trend_cols(trend, x, y, x_ref, y_ref)
        means, variances, point_avg, cbars = [], [], [], []
        pts = []
        for (cx, cy) in blocks:
            px, py = discretise(cx, cy, w, h, k)
            pts.append({"x": px.tolist(), "y": py.tolist(), "sqrt_dist": sqrt_dist(px, py).tolist(), "soil": soil(px, py).tolist()})
            kbar = surface_cov(model, distance(x, y, px, py)).mean(axis=1)
            xbar = trend_cols(trend, px, py, x_ref, y_ref).mean(axis=0)
            cbar = surface_cov(model, distance(px, py, px, py)).mean()
            lam, mu = solve(model, x, y, z, X, kbar, xbar)
            means.append(float(lam @ z))
            variances.append(float(cbar - lam @ kbar - mu @ xbar))
            cbars.append(float(cbar))
            # Average of the point predictions, each point with its own covariates.
            Fp = trend_cols(trend, px, py, x_ref, y_ref)
            kp = surface_cov(model, distance(x, y, px, py))
            pm = [solve(model, x, y, z, X, kp[:, j], Fp[j])[0] @ z for j in range(len(px))]
            point_avg.append(float(np.mean(pm)))
        out.append({
            "name": name,
            "model": model,
            "width": w, "height": h, "points": k,
            "blockPoints": pts,
            "expected": {"mean": means, "sd": np.sqrt(np.maximum(variances, 0)).tolist(), "blockVariance": cbars[0], "pointAverageMean": point_avg},
        })
        print(f"{name:24s} mean = {np.round(means, 4)}  sd = {np.round(np.sqrt(variances), 4)}")
    doc = {
        "source": f"numpy {np.__version__} linalg.solve of the bordered block-kriging system with covariate columns averaged over the block; scipy {scipy.__version__} special.kv",
        "script": "tests/reference/make_block_covariates.py",
        "tolerance": {"rel": 1e-8, "abs": 1e-10},
        "samples": {"x": x.tolist(), "y": y.tolist(), "value": z.tolist(), "sqrt_dist": sqrt_dist(x, y).tolist(), "soil": s_soil.tolist()},
        "blocks": {"x": [b[0] for b in blocks], "y": [b[1] for b in blocks]},
        "cases": out,
    }
    with open(os.path.join(HERE, "block_covariates.json"), "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
